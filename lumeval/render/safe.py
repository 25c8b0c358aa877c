"""Untrusted text on its way to a terminal or a spreadsheet.

Spectrum names, file names, metadata, criteria labels, ids and notes come from files other
people made. Every renderer passes them through this module:

- :func:`clean` escapes control characters (C0 including ESC, CR, LF, TAB and BEL; DEL; the
  C1 range; the Unicode bidirectional and zero-width controls) as visible ``\\x1b``-style
  escapes, so that a name can neither move the cursor, clear the screen, set a link (OSC 8),
  rewrite a line nor reorder what is shown;
- :func:`text` wraps the cleaned string in a rich ``Text``, which rich never parses as markup:
  ``[bold green]PASS[/]`` or ``[link=…]`` in a name prints literally. Renderers give rich
  ``Text`` objects, never markup strings, for anything that holds data;
- :func:`html_value` does the same for HTML pages (every ``{{ }}`` of the templates), keeping
  tab and line breaks, which HTML shows as white space;
- :func:`csv_text` neutralises a text cell that a spreadsheet would run as a formula (a leading
  ``=``, ``+``, ``-``, ``@``, tab or CR gets a leading single quote, as the OWASP "CSV
  injection" guidance recommends); it is applied to text columns only, so numbers such as
  ``-0.5`` are never altered;
- :func:`markdown_text` escapes Markdown markup characters (``criteria explain``'s document);
- :func:`console` makes the rich consoles of the reports: a closed pipe raises
  ``BrokenPipeError`` to the CLI (exit code 2, one line) instead of rich's silent exit 1, and a
  table wider than the console is split, never cut (:mod:`lumeval.render.fit`).

Pure string functions; rich is imported only by :func:`text` and :func:`console`.
"""

from __future__ import annotations

#: Characters escaped for display: C0 controls, DEL, C1 controls, bidirectional and zero-width
#: format characters (the "Trojan Source" set, CVE-2021-42574).
_FORMAT_CONTROLS = (
    [0x061C, 0x200B, 0x200C, 0x200D, 0x200E, 0x200F, 0x2028, 0x2029]
    + list(range(0x202A, 0x202F))
    + list(range(0x2066, 0x206A))
    + [0xFEFF]
)
_NAMED = {0x09: "\\t", 0x0A: "\\n", 0x0D: "\\r"}


def _escape(cp: int) -> str:
    if cp in _NAMED:
        return _NAMED[cp]
    return f"\\x{cp:02x}" if cp < 0x100 else f"\\u{cp:04x}"


_TABLE: dict[int, str] = {cp: _escape(cp) for cp in [*range(0x20), *range(0x7F, 0xA0), *_FORMAT_CONTROLS]}
#: Lone surrogates (undecodable bytes of a file name kept by Python, PEP 383; "\ud800" escapes
#: in JSON) as U+FFFD, the form every path lumeval shows has (lumeval._paths.display_path): an
#: error line printed "s_\udcff.csv" (found by a review), and no writer can encode them.
_TABLE.update(dict.fromkeys(range(0xD800, 0xE000), "\ufffd"))

#: The same escapes for HTML, where tab and line breaks are plain white space.
_HTML_TABLE = {cp: v for cp, v in _TABLE.items() if cp not in (0x09, 0x0A, 0x0D)}

#: Leading characters a spreadsheet reads as the start of a formula (OWASP, "CSV Injection").
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def clean(value) -> str:
    """``value`` as one line of inert text: control characters become visible escapes.

    A printable string (``str.isprintable``: no character of the categories Cc, Cf, Zl, Zp, Zs
    other than the space, which hold every character escaped here) is returned as it is,
    without the translation's lookup per character."""
    s = str(value)
    return s if s.isprintable() else s.translate(_TABLE)


def text(value, style: str | None = None):
    """A rich ``Text`` holding :func:`clean` of ``value``: never parsed as markup."""
    from rich.text import Text

    return Text(clean(value), style=style or "")


def html_value(value):
    """What an HTML page's ``{{ }}`` prints (the Jinja2 environment's ``finalize``): a string
    keeps tab and line breaks but has every other character :func:`clean` escapes shown as a
    visible escape (a NUL, which HTML cannot hold; a bidirectional override, which would
    reorder a table cell); markup lumeval made (``Markup``) and other values pass unchanged.
    HTML escaping of ``<``, ``>``, ``&`` and quotes follows (autoescape)."""
    from markupsafe import Markup

    if isinstance(value, str) and not isinstance(value, Markup):
        return value.translate(_HTML_TABLE)
    return value


def csv_text(value) -> str:
    """A text cell for a CSV file: control characters escaped, and a leading single quote when
    the cell would start a spreadsheet formula (OWASP CSV-injection guidance). Only for text
    columns: a number column keeps ``-0.5`` as it is."""
    if value is None:
        return ""
    s = str(value)
    if s.startswith(FORMULA_START):  # tab and CR checked before they are escaped
        return "'" + clean(s)
    return clean(s)


#: Characters that start Markdown markup inside a line (CommonMark: emphasis, code spans,
#: links and images, raw HTML and entities, tables, escapes): backslash-escaped in text from
#: files, which CommonMark then shows literally.
_MARKDOWN_SPECIAL = frozenset("\\`*_[]<>|&!{}#~")


def markdown_text(value) -> str:
    """Text from a file for a Markdown document (``criteria explain``): :func:`clean`, then every
    markup character backslash-escaped, so that ``<script>``, ``[a](http://x)``, ``**`` or a
    ``|`` in a project name or a clause note is shown as written, never as HTML, a link or
    formatting (found by a review)."""
    return "".join("\\" + ch if ch in _MARKDOWN_SPECIAL else ch for ch in clean(value))


def csv_first_cell(value) -> str:
    """The first cell of a CSV data row: :func:`csv_text`, and a leading single quote also when it
    starts with ``#``, so that only lumeval's own note rows (the cautions at the end of every
    CSV report, :func:`lumeval.render.tables.csv_notes`) start with ``#``."""
    s = csv_text(value)
    return "'" + s if s.startswith("#") else s


def console(**kwargs):
    """A rich Console for lumeval's reports (see the module docstring)."""
    from rich.console import Console

    class _Console(Console):
        def on_broken_pipe(self) -> None:  # rich's default exits 1, which reads "a criterion failed"
            self.quiet = True
            raise BrokenPipeError(32, "Broken pipe")

        def print(self, *objects, **kwargs) -> None:
            """A table too wide for the console is printed as several narrower ones, never with
            numbers cut (:mod:`lumeval.render.fit`)."""
            from rich.table import Table

            from .fit import split_to_width

            parts = [p for o in objects for p in (split_to_width(o, kwargs.get("width") or self.width)
                                                  if isinstance(o, Table) else [o])]
            if len(parts) == len(objects) and all(p is o for p, o in zip(parts, objects)):
                super().print(*objects, **kwargs)
                return
            for part in parts:
                super().print(part, **kwargs)

    return _Console(**kwargs)
