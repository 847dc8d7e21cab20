"""The board's numbers as CSV tables (one header row, then data; floats written in Python's
shortest round-trip form so a reader gets back the exact value; text cells that a spreadsheet
would run as a formula get a leading ``'``, numbers stay numbers). No Qt."""

from __future__ import annotations

import csv
import io
import operator
from typing import Any

from ..export import csvsafe
from . import reliability

Table = tuple[list[str], list[list[Any]]]


def _ci(d: dict | None, key: str):
    return None if not d else d.get(key)


def summary(data: dict) -> Table:
    a = data["agreement"]
    rows: list[list[Any]] = []
    lab = a["labels"]
    if lab:
        al = lab["alpha"]
        rows.append(["labels", "all", "krippendorff alpha", al["value"], _ci(al["ci"], "low"),
                     _ci(al["ci"], "high"), al["band"], al["recipe"]["text"]])
        if lab["fleiss"]:
            f = lab["fleiss"]
            rows.append(["labels", "all", "fleiss kappa", f["value"], None, None, f["band"],
                         f["recipe"]["text"]])
        for name, s in lab["per_label"].items():
            rows.append(["labels", name, "krippendorff alpha one-vs-rest", s["value"],
                         _ci(s["ci"], "low"), _ci(s["ci"], "high"), s["band"],
                         s["recipe"]["text"]])
    seg = a["segments"]
    if seg and seg["frame_alpha"]:
        fa = seg["frame_alpha"]
        rows.append(["segments", "all", "frame-level alpha", fa["value"], None, None, fa["band"],
                     fa["recipe"]["text"]])
    cap = a["captions"]
    if cap:
        b = cap["bleu"]["overall"]
        rows.append(["captions", "all", "leave-one-out corpus BLEU", b["score"], None, None,
                     None, b["recipe"]["text"]])
        rows.append(["captions", "all", "CIDEr-D mean", cap["cider"]["overall"], None, None, None,
                     cap["cider"]["recipe"]["text"]])
        r = cap["retrieval"]
        for key in ("r_at_1", "r_at_5", "r_at_10", "median_rank"):
            rows.append(["captions", "all", f"retrieval {key}", r[key], None, None, None,
                         r["recipe"]["text"]])
    rows += reliability.summary_rows(data)
    rows = [r + [None] for r in rows]
    for part, why in a.get("not_measured", {}).items():  # each part stands alone
        rows.append([part, "all", "not measured", None, None, None, None, None, why])
    return (["part", "scope", "metric", "value", "ci_low", "ci_high", "band", "recipe", "note"],
            rows)


def pairwise(data: dict) -> Table:
    lab = data["agreement"]["labels"]
    rows = [[p["annotator_a"], p["annotator_b"], p["kappa"], p["observed"],
             p["recipe"]["n_items"], p["recipe"]["text"]] for p in (lab["pairs"] if lab else [])]
    return (["annotator_a", "annotator_b", "cohen_kappa", "observed_agreement", "clips",
             "recipe"], rows)


def confusion(data: dict) -> Table:
    lab = data["agreement"]["labels"]
    rows = []
    for p in (lab["pairs"] if lab else []):
        for i, la in enumerate(lab["labels"]):
            for j, lb in enumerate(lab["labels"]):
                rows.append([p["annotator_a"], p["annotator_b"], la, lb, p["confusion"][i][j]])
    return (["annotator_a", "annotator_b", "label_a", "label_b", "clips"], rows)


def segment_pairs(data: dict) -> Table:
    seg = data["agreement"]["segments"]
    keys = ["annotator_a", "annotator_b", "iou_threshold", "matched", "n_a", "n_b", "precision",
            "recall", "f1", "boundary_offset_frames", "boundary_offset_seconds"]
    rows = [[p.get(k) for k in keys] + [p["recipe"]["text"]] for p in (seg["pairs"] if seg else [])]
    return (keys + ["recipe"], rows)


def caption_annotators(data: dict) -> Table:
    cap = data["agreement"]["captions"]
    rows = []
    if cap:
        cider = cap["cider"]["per_annotator"]
        for name, b in cap["bleu"]["per_annotator"].items():
            rows.append([name, b["score"], cider.get(name), b["recipe"]["text"],
                         cap["cider"]["recipe"]["text"]])
    return (["annotator", "loo_bleu", "cider_d", "bleu_recipe", "cider_recipe"], rows)


def flagged(data: dict) -> Table:
    cap = data["agreement"]["captions"]
    keys = ["clip", "annotator", "text", "bleu", "clip_median", "reason"]
    # one C-level call per caption (a 100k-clip project can flag over 200k captions)
    return (keys, list(map(operator.itemgetter(*keys), cap["flagged"] if cap else [])))


def clips(data: dict) -> Table:
    keys = ["clip", "label_disagreement", "segment_f1", "caption_bleu", "caption_cider"]
    return (keys, [[c[k] for k in keys] for c in data["agreement"]["clips"]])


def disputed(data: dict) -> Table:
    keys = ["rank", "clip", "path", "group", "label_disagreement", "segment_f1", "caption_bleu",
            "caption_cider", "gold_label"]
    return (keys + ["labels"], [[q[k] for k in keys] + [
        "; ".join(f"{a}={l}" for a, l in q["labels"].items())] for q in data["queue"]])


def skipped_unsure(data: dict) -> Table:
    """Every clip an annotator skipped (with the reason) or flagged unsure (with the note)."""
    keys = ["clip", "path", "annotator", "state", "reason"]
    return (keys, [[f[k] for k in keys] for f in data.get("flags", [])])


def throughput(data: dict) -> Table:
    keys = ["annotator", "clips", "edits", "active_seconds", "clips_per_hour"]
    return (keys + ["recipe"], [[t[k] for k in keys] + [t["recipe"]["text"]]
                                for t in data["throughput"]])


def trend(data: dict) -> Table:
    return (["window", "period", "first", "last", "clips", "alpha", "recipe"],
            [[t["window"], t.get("period", ""), t["first"], t["last"], " ".join(map(str, t["clips"])),
              t["alpha"], t["recipe"]["text"]] for t in data["trend"]])


ALL = {"summary": summary, "pairwise_kappa": pairwise, "confusion": confusion,
       "segment_pairs": segment_pairs, "caption_annotators": caption_annotators,
       "flagged_captions": flagged, "clips": clips, "disputed_clips": disputed,
       "skipped_unsure": skipped_unsure,
       "throughput": throughput, "trend": trend, **reliability.TABLES}


def _cell(v: Any) -> Any:
    """Numbers stay numbers (a negative value is not text to escape); the rest is text, made
    safe for a spreadsheet by :func:`~clipscribe.export.csvsafe.safe_cell`."""
    if v is None:
        return ""
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        return v
    return csvsafe.safe_cell(str(v))


def _column(values: tuple) -> Any:
    """One column's cells as :func:`_cell` makes them, a whole column at a time: a column of
    numbers (most cells of the big tables) passes as it is, with no call per cell."""
    kinds = set(map(type, values))
    if kinds <= {int, float}:
        return values
    if kinds <= {int, float, type(None)}:
        return ["" if v is None else v for v in values]
    if kinds == {str}:
        return csvsafe.safe_texts(values)
    return [_cell(v) for v in values]


def _quoted_by_csv() -> tuple[str, ...]:
    """The characters that make the csv module (minimal quoting, "\n" line ends) quote a
    text cell, asked of the module itself: "\r" is among them only in some Python versions."""
    def written(c: str) -> str:
        buf = io.StringIO()
        csv.writer(buf, lineterminator="\n").writerow(["a" + c, "b"])
        return buf.getvalue()
    return tuple(c for c in (",", '"', "\n", "\r") if written(c).startswith('"'))


_QUOTED = _quoted_by_csv()


def _csv_cells(values: tuple) -> list[str] | Any:
    """A column as the csv module writes its :func:`_column` cells (minimal quoting): numbers
    as their repr, text as it is unless it holds a comma, a quote or a line break, then in
    quotes with its quotes doubled. Whether a column needs any quoting at all is one look at
    the joined column (a rare character is found at memory speed)."""
    if set(map(type, values)) <= {int, float}:
        return list(map(repr, values))  # a number's repr never needs quoting
    out = [c if type(c) is str else repr(c) for c in _column(values)]
    joined = "\0".join(out)
    if not any(q in joined for q in _QUOTED):
        return out
    return ['"' + c.replace('"', '""') + '"' if any(q in c for q in _QUOTED) else c
            for c in out]


def to_csv(table: Table) -> str:
    """The table as CSV text, every cell as :func:`_cell` makes it, exactly as the csv module
    writes it. Rows of one width (two or more cells) are made column by column and joined
    here: the csv module looks at every character of every cell from Python's side of its C
    loop: 0.76 s for the 233k flagged captions of a 100k-clip report, against 0.53 s a column
    at a time (most of what is left is the numbers' repr). Tests compare both ways on
    generated tables."""
    header, rows = table
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([_cell(h) for h in header])
    widths = set(map(len, rows))
    if len(widths) == 1 and (width := widths.pop()) > 1:
        # columns taken one at a time (zip(*rows) would unpack 200k rows as arguments); a
        # row of one empty cell is written '""' by the csv module, hence width > 1 only
        columns = [_csv_cells(tuple(map(operator.itemgetter(k), rows)))
                   for k in range(width)]
        buf.write("\n".join(map(",".join, zip(*columns))))
        buf.write("\n")
    else:  # rows of different widths, of one cell, or none: row by row
        w.writerows([_cell(v) for v in r] for r in rows)
    return buf.getvalue()
