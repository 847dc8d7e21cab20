"""MP4/MOV edit lists that make a decoder drop frames, read from the file's boxes.

A demuxer marks the packets an edit list cuts away, and the decoder drops their frames, so the
packets of such a file do not number the frames a sequential decode yields. Only the ``elst``,
``mdhd``, ``ctts`` and ``stts`` boxes of the video track are read; written by hand because
OpenCV does not expose the edit list and a full ISO BMFF parser would be a dependency for a few
dozen bytes.
"""

from __future__ import annotations

import os
import struct
from pathlib import Path

_ISO_SUFFIXES = frozenset({".mp4", ".mov", ".m4v", ".3gp", ".3g2"})

def _boxes(f, start: int, end: int):
    """(type, payload start, box end) of the ISO BMFF boxes between ``start`` and ``end``."""
    pos = start
    while pos + 8 <= end:
        f.seek(pos)
        head = f.read(8)
        if len(head) < 8:
            return
        size, kind = struct.unpack(">I4s", head)
        body = pos + 8
        if size == 1:
            size = struct.unpack(">Q", f.read(8))[0]
            body += 8
        elif size == 0:
            size = end - pos
        if size < body - pos:
            return
        yield kind, body, pos + size
        pos += size


def _child(f, start: int, end: int, path: list[bytes]) -> tuple[int, int] | None:
    for kind, body, stop in _boxes(f, start, end):
        if kind == path[0]:
            return (body, stop) if len(path) == 1 else _child(f, body, stop, path[1:])
    return None


def _read(f, at: int, n: int) -> bytes:
    f.seek(at)
    return f.read(n)


def edit_list_problem(path: Path) -> str | None:
    """Why the MP4/MOV edit list of the video track drops frames, or None.

    The one harmless edit list is the usual single entry that only moves the first frame to time
    zero (its media time equals the first frame's composition offset) and runs to the end.
    """
    if path.suffix.lower() not in _ISO_SUFFIXES:
        return None
    try:
        with open(path, "rb") as f:
            size = os.fstat(f.fileno()).st_size
            moov = _child(f, 0, size, [b"moov"])
            if moov is None:
                return None
            mvhd = _child(f, *moov, [b"mvhd"])
            movie_scale = _timescale(f, mvhd) if mvhd else 0
            for kind, body, stop in _boxes(f, *moov):
                if kind != b"trak":
                    continue
                hdlr = _child(f, body, stop, [b"mdia", b"hdlr"])
                if hdlr is None or _read(f, hdlr[0] + 8, 4) != b"vide":
                    continue
                elst = _child(f, body, stop, [b"edts", b"elst"])
                if elst is None:
                    return None
                return _judge_edits(f, elst, body, stop, movie_scale)
    except (OSError, struct.error):
        return "its edit list could not be read"
    return None


def _timescale(f, box: tuple[int, int]) -> int:
    version = _read(f, box[0], 1)[0]
    at = box[0] + (20 if version == 1 else 12)
    return struct.unpack(">I", _read(f, at, 4))[0]


def _judge_edits(f, elst: tuple[int, int], trak: int, trak_end: int,
                 movie_scale: int) -> str | None:
    version = _read(f, elst[0], 1)[0]
    count = struct.unpack(">I", _read(f, elst[0] + 4, 4))[0]
    fmt, width = (">QqI", 20) if version == 1 else (">IiI", 12)
    entries = [struct.unpack(fmt, _read(f, elst[0] + 8 + k * width, width))
               for k in range(min(count, 4))]
    entries = [e for e in entries if e[1] != -1 or e[0] > 0]
    if count != 1 or len(entries) != 1:
        return "an edit list with several entries"
    seg, media_time, rate = entries[0]
    if rate != 0x10000:
        return "an edit list that changes the playback rate"
    mdhd = _child(f, trak, trak_end, [b"mdia", b"mdhd"])
    ctts = _child(f, trak, trak_end, [b"mdia", b"minf", b"stbl", b"ctts"])
    first_offset = 0
    if ctts is not None and struct.unpack(">I", _read(f, ctts[0] + 4, 4))[0] > 0:
        first_offset = struct.unpack(">i", _read(f, ctts[0] + 12, 4))[0]
    if media_time != first_offset:
        return "an edit list that starts inside the video"
    if mdhd is not None and movie_scale > 0 and seg > 0:
        media_scale = _timescale(f, mdhd)
        v = _read(f, mdhd[0], 1)[0]
        dur_at = mdhd[0] + (24 if v == 1 else 16)
        media_dur = (struct.unpack(">Q", _read(f, dur_at, 8))[0] if v == 1
                     else struct.unpack(">I", _read(f, dur_at, 4))[0])
        stts = _child(f, trak, trak_end, [b"mdia", b"minf", b"stbl", b"stts"])
        delta = (struct.unpack(">I", _read(f, stts[0] + 12, 4))[0]
                 if stts is not None and struct.unpack(">I", _read(f, stts[0] + 4, 4))[0] else 0)
        shown_dur = seg * media_scale / movie_scale
        if shown_dur + delta < media_dur - first_offset:
            return "an edit list that ends before the video does"
    return None
