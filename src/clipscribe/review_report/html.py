"""The agreement report: one self-contained HTML file (inline CSS and SVG, no scripts, fonts or
links) plus CSV tables, for people who do not run the workbench. No Qt."""

from __future__ import annotations

import heapq
import json
import os
import time
from dataclasses import dataclass
from html import escape
from pathlib import Path
from typing import Callable

from . import reliability, tables
from .board import board_data, board_figures, not_measured
from .jsontext import json_text
from .svg import to_svg

CAUTIONS = (
    "Agreement is not correctness: annotators can agree on the same mistake, and a clip with "
    "low agreement may be genuinely ambiguous rather than badly labelled.",
    "Labels carry the bias of the people, the guideline and the label set that produced them; "
    "read these numbers together with the guideline and a look at the clips.",
    "Verbal bands are a convention, not a test; every value is shown with its interval or its "
    "count of clips, and small samples give wide intervals.",
    "Throughput counts edits, not care: a fast annotator is not a better one.",
)

CSS = """
body { font-family: sans-serif; color: #1d2126; margin: 24px auto; max-width: 1100px;
       line-height: 1.4; padding: 0 16px; }
h1 { font-size: 22px; margin-bottom: 4px; } h2 { font-size: 17px; margin-top: 28px;
     border-bottom: 1px solid #c9d1da; padding-bottom: 4px; }
.meta { color: #5f6b78; font-size: 13px; }
.figs { display: flex; flex-wrap: wrap; gap: 24px; align-items: flex-start; }
.fig { background: #ffffff; border: 1px solid #e1e6eb; padding: 10px; }
.wide { overflow-x: auto; max-width: 100%; } .fig { max-width: 100%; overflow-x: auto; }
table { border-collapse: collapse; font-size: 13px; margin: 8px 0; }
td code { word-break: break-all; }
th, td { border: 1px solid #d5dce3; padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #eef2f6; } td.n { text-align: right; font-variant-numeric: tabular-nums; }
code { font-size: 12px; color: #3a424d; } .why { color: #5f6b78; font-style: italic; }
.note { background: #f7f3ee; padding: 8px 12px; }
"""


#: rows of a per-clip or per-caption table shown on the page (the CSV file holds them all)
PAGE_ROWS = 200
#: parts of the numbers with a row per clip or caption -> the CSV table that holds them
ROWS_IN_CSV = {"agreement.clips": "clips.csv", "agreement.captions.flagged": "flagged_captions.csv",
               "agreement.reliability.inferred.items": "inferred_labels.csv"}


@dataclass(frozen=True)
class ReportFiles:
    folder: Path
    html: Path
    csv: dict[str, Path]
    seconds: float


def _fmt(v) -> str:
    if v is None:
        return "–"
    if isinstance(v, float):
        return f"{v:,.3f}" if abs(v) < 1000 else f"{v:,.0f}"
    return escape(str(v))


def _td(head: str, v) -> str:
    if v is not None and (head == "recipe" or head.endswith("_recipe")):
        return f"<td><code>{escape(str(v))}</code></td>"
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        return f'<td class="n">{_fmt(v)}</td>'
    return f"<td>{_fmt(v)}</td>"


def _table(table: tables.Table, limit: int | None = None, *, empty: str = "nothing to show",
           csv_name: str | None = None, total: int | None = None) -> str:
    """An HTML table of the first ``limit`` rows (all when None); when rows are left out, a
    last row says how many and names the CSV file that holds them all. ``total``: how many
    rows the whole table has, when ``table`` holds only its first ones."""
    header, rows = table
    head = "".join(f"<th>{escape(h)}</th>" for h in header)
    body = ["<tr>" + "".join(_td(h, v) for h, v in zip(header, r)) + "</tr>"
            for r in rows[:limit]]
    if not rows:
        body.append(f'<tr><td colspan="{len(header)}">{escape(empty)}</td></tr>')
    elif limit is not None and (total := max(total or 0, len(rows))) > limit:
        where = f"; all {total:,} are in {csv_name}" if csv_name else ""
        body.append(f'<tr><td colspan="{len(header)}" class="why">the first {limit:,} rows of '
                    f"{total:,} are shown here{escape(where)}</td></tr>")
    # a table wider than the page scrolls inside its own box instead of running off the page
    return f'<div class="wide"><table><tr>{head}</tr>{"".join(body)}</table></div>'


def render_html(data: dict) -> str:
    """The report page for :func:`~clipscribe.review_report.board.board_data` output."""
    m = data["meta"]
    figs = board_figures(data)
    conf = [k for k in figs if k.startswith("confusion_")]

    def block(keys):
        return '<div class="figs">' + "".join(
            f'<div class="fig">{to_svg(figs[k])}</div>' for k in keys) + "</div>"

    def why(part: str) -> str:
        """In place of a part that was not measured: the reason, on its own line."""
        text = not_measured(data, part)
        return f'<p class="why">{escape(text)}</p>' if text else ""

    def table(fn, part: str, limit: int | None = None, csv_name: str | None = None,
              total: int | None = None) -> str:
        return _table(fn(data), limit, empty=not_measured(data, part) or "nothing to show",
                      csv_name=csv_name, total=total)

    bands = ", ".join(f"≤ {b:g} {n}" for b, n in m["bands"])
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        f"<title>Agreement report — {escape(m['project'])}</title>",
        f"<style>{CSS}</style></head><body>",
        f"<h1>Agreement report — {escape(m['project'])}</h1>",
        f'<p class="meta">Made {escape(m["made"])} by {escape(m["lead"])} with '
        f'{escape(m["tool"])} {escape(m["version"])}; label set version '
        f'{escape(m["label_set_version"])}; {m["clips"]} clips, {m["settled"]} settled; '
        f'bootstrap {m["n_boot"]} resamples, seed {m["seed"]}. Hover a mark to see its value '
        "and recipe.</p>",
        "<h2>Summary</h2>", _table(tables.summary(data)),
        "<h2>Labels</h2>", why("labels"), block(["label_alpha", "pairwise"]),
        "<h3>Confusion between annotators</h3>", block(conf),
        table(tables.pairwise, "labels"),
        "<h2>Segments</h2>", why("segments"), table(tables.segment_pairs, "segments"),
        "<h2>Captions</h2>", why("captions"), block(["caption_bleu", "caption_cider",
                                                      "caption_rouge_l", "caption_chrf"]),
        table(tables.caption_annotators, "captions"),
        "<h3>Flagged captions</h3>", table(_first_flagged, "captions", PAGE_ROWS,
                                           "flagged_captions.csv", _n_flagged(data)),
        "<h2>Annotator reliability</h2>",
        "<p>Inferred labels and each annotator's estimated confusion come from the EM method of "
        "Dawid &amp; Skene (1979), Applied Statistics 28(1):20–28; check-clip intervals are "
        "Wilson (1927) score intervals. Estimates from few clips are rough.</p>",
        block(["reliability", "check_accuracy"]),
        _table(reliability.checks_table(data)),
        "<h3>Least certain inferred labels</h3>", _table(_least_certain(data)),
        "<h2>Throughput and trend</h2>", block(["throughput", "trend"]),
        _table(tables.throughput(data)), _table(tables.trend(data)),
        "<h2>Most disputed clips</h2>", _table(tables.disputed(data)),
        "<h2>Skipped and unsure clips</h2>",
        "<p>A skip is not a label (the skipper is left out of agreement and exports); an unsure "
        "flag keeps the label and asks the lead to look.</p>" if data.get("flags") else
        "<p>No annotator skipped a clip or flagged one unsure.</p>",
        _table(tables.skipped_unsure(data)) if data.get("flags") else "",
        _cues_section(data),
        "<h2>How to read this</h2>",
        f"<p>Bands for kappa and alpha: {escape(bands)}; below 0 poor. Source: "
        f"{escape(m['bands_source'])}. The bands were offered as a convention.</p>",
        "<p>Each number's recipe (metric, variant, options, raters, clips, label-set version, "
        "tool version) is in its row and in the JSON block at the end of this file; the same "
        "tables are in the CSV files beside it, and the tables with a row per clip or per "
        "caption are there in full (this page shows their first rows and the block names "
        "them under <code>rows_in_csv</code>).</p>",
        '<div class="note"><b>Cautions</b><ul>' + "".join(f"<li>{escape(c)}</li>"
                                                          for c in CAUTIONS) + "</ul></div>",
        "<h2>All numbers (JSON)</h2>",
        '<pre id="clipscribe-numbers" style="white-space: pre-wrap; font-size: 11px; '
        'max-height: 240px; overflow: auto;">'
        + escape(json_text(page_numbers(data), allow_nan=False)) + "</pre>",
        "</body></html>",
    ]
    return "\n".join(parts)


def _first_flagged(data: dict) -> tables.Table:
    """The flagged-caption table's first :data:`PAGE_ROWS` rows (the page shows no more)."""
    cap = data["agreement"]["captions"]
    if not cap:
        return tables.flagged(data)
    head = {**cap, "flagged": cap["flagged"][:PAGE_ROWS]}
    return tables.flagged({**data, "agreement": {**data["agreement"], "captions": head}})


def _n_flagged(data: dict) -> int:
    cap = data["agreement"]["captions"]
    return len(cap["flagged"]) if cap else 0


def page_numbers(data: dict) -> dict:
    """The numbers for the page's JSON block: ``data`` without the parts that have a row per
    clip or per caption (:data:`ROWS_IN_CSV`), which the CSV tables beside the page hold in
    full; ``rows_in_csv`` names, per part left out, its CSV file and its number of rows. On a
    100k-clip project those parts are ~100 MB of JSON: a page no browser opens comfortably."""
    out = dict(data)
    moved = {}
    for path, csv_name in ROWS_IN_CSV.items():
        *parents, leaf = path.split(".")
        node = out
        for key in parents:  # copied along the path: ``data`` itself is left as it was
            if not isinstance(node.get(key), dict):
                break
            node[key] = node = dict(node[key])
        else:
            if leaf in node:
                moved[path] = {"csv": csv_name, "rows": len(node.pop(leaf) or [])}
    out["rows_in_csv"] = moved
    return out


def _cues_section(data: dict) -> str:
    """"Which cues carry the labels", when the report was asked for it (``data["cues"]``)."""
    if "cues" not in data:
        return ""
    from . import cues

    def block(figs) -> str:
        return '<div class="figs">' + "".join(f'<div class="fig">{to_svg(f)}</div>'
                                              for f in figs) + "</div>"
    return cues.cues_html(data["cues"], block, _table)


def _least_certain(data: dict, n: int = 20) -> tables.Table:
    """The ``n`` clips whose inferred label has the lowest posterior (ties in clip order), picked
    without building and sorting the whole table (100k rows on a big project)."""
    rel = reliability._rel(data)
    inf = rel and rel["inferred"]
    rows = ([it["item"], it["label"], it["posterior"][it["label"]]] for it in (inf or {}).get("items", []))
    return ["clip", "inferred_label", "posterior"], heapq.nsmallest(n, rows, key=lambda r: r[2])


def write_report(project, folder: str | os.PathLike, *, seed: int = 0, n_boot: int = 1000,
                 progress: Callable[[str], None] | None = None,
                 cues: dict | None = None) -> ReportFiles:
    """Write ``report.html`` and one CSV per table into ``folder`` (created if missing).
    Files are written to temporary names and renamed, so a reader never sees half a report.
    Leads only (the project's check). ``cues`` (:func:`~clipscribe.review_report.cues.cues_data`
    output) adds the section "Which cues carry the labels" and its two CSV tables."""
    t0 = time.perf_counter()
    say = progress or (lambda _msg: None)
    say("computing agreement")
    data = board_data(project, seed=seed, n_boot=n_boot)
    if cues is not None:
        data["cues"] = cues
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    say("writing tables")
    written: dict[str, Path] = {}
    for name, fn in tables.ALL.items():
        written[name] = _atomic(out / f"{name}.csv", tables.to_csv(fn(data)))
    if cues is not None:
        from . import cues as cue_tables
        for name, fn in cue_tables.TABLES.items():
            written[name] = _atomic(out / f"{name}.csv", tables.to_csv(fn(cues)))
    say("writing report.html")
    html = _atomic(out / "report.html", render_html(data))
    return ReportFiles(out, html, written, time.perf_counter() - t0)


def _atomic(path: Path, text: str) -> Path:
    tmp = path.with_name(path.name + ".tmp")
    try:
        tmp.write_text(text, encoding="utf-8")
        os.replace(tmp, path)
    except OSError as exc:
        tmp.unlink(missing_ok=True)  # a full disk leaves no half-written file behind
        raise OSError(exc.errno, exc.strerror, str(path)) from None
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


def read_numbers(html: str) -> dict:
    """The JSON block of a report page (for tests and scripts)."""
    from html import unescape
    start = html.index('<pre id="clipscribe-numbers"')
    start = html.index(">", start) + 1
    return json.loads(unescape(html[start:html.index("</pre>", start)]))
