"""WebVTT text for one clip's segments and captions.

Follows W3C "WebVTT: The Web Video Text Tracks Format" (Candidate Recommendation, 2019): a
``WEBVTT`` line, a blank line, then cues ``[id]`` / ``HH:MM:SS.mmm --> HH:MM:SS.mmm`` / text,
each followed by a blank line; cue start times never decrease through the file and ``&``, ``<``
and ``>`` in cue text are written as character references. Hand-written: it is a few lines, and
the reader used in the tests (webvtt-py) is kept independent of the writer.
"""

from __future__ import annotations


def timestamp(seconds: float) -> str:
    """Seconds to ``HH:MM:SS.mmm`` (rounded to the millisecond)."""
    ms = int(round(max(seconds, 0.0) * 1000))
    h, rest = divmod(ms, 3_600_000)
    m, rest = divmod(rest, 60_000)
    s, ms = divmod(rest, 1000)
    return f"{h:02d}:{m:02d}:{s:02d}.{ms:03d}"


def _escape(text: str) -> str:
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    # A cue's text ends at a blank line and may not hold "-->"; keep it to one paragraph.
    lines = [ln.strip() for ln in text.replace("\r", "\n").split("\n") if ln.strip()]
    return "\n".join(lines).replace("-->", "->")


def render(cues: list[tuple[str, float, float, str]], *, note: str | None = None) -> str:
    """WebVTT document from ``(identifier, start_s, end_s, text)`` cues.

    Cues are sorted by (start, end, identifier); a cue whose rounded end is not after its
    rounded start is dropped (the format requires end > start).
    """
    out = ["WEBVTT", ""]
    if note:
        out += ["NOTE " + _escape(note).replace("\n", " "), ""]
    for ident, start, end, text in sorted(cues, key=lambda c: (c[1], c[2], c[0])):
        body = _escape(text)
        if round(end * 1000) <= round(start * 1000) or not body:
            continue
        out += [ident, f"{timestamp(start)} --> {timestamp(end)}", body, ""]
    return "\n".join(out)
