"""Text options of the commands (labels, names, units) checked before any work."""

from __future__ import annotations


def require_utf8(option: str, value: str | None, what: str = "label") -> None:
    """Refuse a text option that is not UTF-8 text (undecodable bytes from the command line, e.g.
    a shell variable made from a file name): such text is written into outputs and stores as
    given, so it is not silently changed to a printable form. ``what`` names it in the fix."""
    from ..errors import UsageError

    if value is None:
        return
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        from .._paths import display_path

        raise UsageError(f"{option} {display_path(value)!r} is not UTF-8 text", field=option,
                         fix=f"give the {what} as UTF-8 text") from None
