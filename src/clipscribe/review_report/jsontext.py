"""JSON text of a report: readable at the top, fast for a report with a row per clip."""

from __future__ import annotations

import json


def json_text(value: object, *, depth: int = 2, allow_nan: bool = True) -> str:
    """``value`` as JSON: objects indented two spaces down to ``depth`` levels, each list item
    and everything deeper on one line. The same content as ``json.dumps(indent=2)``, but
    written by json's C encoder (``indent`` alone turns it off), so a report with a row per
    clip of a 100k-clip project prints in a fraction of the time."""
    dumps = _one_line(allow_nan)

    def text(v: object, level: int, pad: str) -> str:
        inner = pad + "  "
        if isinstance(v, dict) and v and level < depth:
            body = ",\n".join(f"{inner}{dumps(str(k))}: {text(x, level + 1, inner)}"
                              for k, x in v.items())
            return "{\n" + body + "\n" + pad + "}"
        if isinstance(v, list) and v and level <= depth:
            return "[\n" + ",\n".join(inner + dumps(x) for x in v) + "\n" + pad + "]"
        return dumps(v)
    return text(value, 0, "")


def _one_line(allow_nan: bool):
    """A function from a value to its JSON on one line. json's C encoder is made once here
    and called per value: ``json.dumps`` makes a new one on every call, which costs more than
    the encoding of a small row."""
    enc = json.JSONEncoder(ensure_ascii=False, allow_nan=allow_nan)
    make = getattr(json.encoder, "c_make_encoder", None)
    if make is None:  # a Python without json's C speedups
        return enc.encode
    one = make(None, enc.default, json.encoder.encode_basestring, None, enc.key_separator,
               enc.item_separator, False, False, allow_nan)
    return lambda v: "".join(one(v, 0))
