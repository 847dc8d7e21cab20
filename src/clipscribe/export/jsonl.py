"""JSON Lines that every reader splits the same way.

A JSON string may hold U+0085 (next line), U+2028 and U+2029 (line and paragraph separators)
as they are. Readers that split on every Unicode line break (Python's ``str.splitlines``, some
editors) would then cut a record in two. :func:`line` writes them as ``\\u`` escapes, which is
the same JSON value, so nothing is lost; :func:`split` splits only on ``\\n`` (a trailing ``\\r``
is dropped for files edited on Windows). No Qt, no database.
"""

from __future__ import annotations

_BREAKS = {"\u0085": "\\u0085", "\u2028": "\\u2028", "\u2029": "\\u2029"}


def escape_breaks(json_text: str) -> str:
    """``json_text`` (one encoded JSON value) with the Unicode line breaks escaped."""
    for raw, esc in _BREAKS.items():
        if raw in json_text:
            json_text = json_text.replace(raw, esc)
    return json_text


def line(json_text: str) -> str:
    """One JSON Lines line (with its ``\\n``) from one encoded JSON value."""
    return escape_breaks(json_text) + "\n"


def split(text: str) -> list[str]:
    """The lines of a JSON Lines text: split on ``\\n`` only."""
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return [l[:-1] if l.endswith("\r") else l for l in lines]
