"""lumeval.render.safe.clean: a printable string is returned as it is, anything else escaped.

Reference: Python's ``str.isprintable`` (the Unicode character database: categories Cc, Cf, Zl,
Zp and Zs other than the space are not printable); the escapes are the module's documented
table, applied by ``str.translate``.
"""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from lumeval.render import safe


def test_every_escaped_character_is_not_printable():
    """The premise of clean's shortcut: a printable string holds no character it escapes."""
    assert len(safe._TABLE) > 60
    assert not any(chr(cp).isprintable() for cp in safe._TABLE)


@settings(max_examples=500, deadline=None, database=None)
@given(st.text(alphabet=st.characters(codec="utf-8", exclude_categories=()) | st.sampled_from(
    [chr(cp) for cp in safe._TABLE]), max_size=40))
def test_clean_equals_the_translation_of_every_escape(s):
    assert safe.clean(s) == s.translate(safe._TABLE)
    assert safe.clean(s) == s or (not s.isprintable() and any(ord(c) in safe._TABLE for c in s))


def test_clean_examples():
    assert safe.clean("Lamp 3000 K µW/cm²") == "Lamp 3000 K µW/cm²"
    assert safe.clean("a\x1b[2Jb\tc\u202ed") == "a\\x1b[2Jb\\tc\\u202ed"
    assert safe.clean(42) == "42"
