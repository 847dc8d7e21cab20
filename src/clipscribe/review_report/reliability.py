"""The annotator reliability part of the board and the report: each person's estimated confusion
as a small matrix, check-clip accuracy with Wilson intervals, and its CSV tables. Built from
``AgreementReport.to_dict()["reliability"]`` alone. No Qt."""

from __future__ import annotations

import operator
from typing import Any

from . import colours as C
from .figures import Figure, Rect, Text, interval_chart, text_width

CELL = 24.0
TITLE = "Annotator reliability: estimated confusion (rows true label, columns answer)"


def _rel(data: dict) -> dict | None:
    return data["agreement"].get("reliability")


def _tip(head: str, recipe: dict | None) -> str:
    return head + (f"\nrecipe: {recipe['text']}" if recipe else "")


def reason_figure(title: str, reason: str) -> Figure:
    fig = Figure(title, max(360, text_width(title, 13) + 12, text_width(reason, 11) + 12), 44)
    fig.add(Text(0, 16, title, 13, bold=True), Text(0, 36, reason, 11, "start", C.MUTED))
    return fig


def confusion_grid_figure(data: dict) -> Figure:
    """One small matrix per annotator, side by side (three to a row); a cell's shade is
    P(answer | true label); the label numbers are keyed under the matrices."""
    rel = _rel(data)
    inf = rel and rel["inferred"]
    if not inf:
        why = (rel or {}).get("inferred_reason") or "not computed"
        return reason_figure("Annotator reliability", f"Inferred labels: {why}.")
    cats = inf["labels_order"]
    k = len(cats)
    names = inf["annotators"]
    left, gap, top = 34.0, 26.0, 44.0
    heads = {n: f"{n}  (est. accuracy {inf['accuracy'][n]:.2f})" for n in names}
    tile_w = max([left + CELL * k] + [text_width(h, 11) + 4 for h in heads.values()])
    tile_h = 18 + CELL * k + 12
    per_row = min(3, len(names))
    rows = (len(names) + per_row - 1) // per_row
    key = "  ".join(f"{i + 1} {c}" for i, c in enumerate(cats))
    width = max(per_row * (tile_w + gap), text_width(TITLE, 13) + 12, text_width(key, 10) + 12)
    fig = Figure(TITLE, width, top + rows * tile_h + 30)
    fig.add(Text(0, 16, TITLE, 13, bold=True))
    recipe = inf["recipe"]
    for n, name in enumerate(names):
        x0 = (n % per_row) * (tile_w + gap)
        y0 = top + (n // per_row) * tile_h
        fig.add(Text(x0, y0 - 6, heads[name], 11, "start", C.INK, True))
        for j in range(k):
            fig.add(Text(x0 + left + CELL * (j + 0.5), y0 + 10, str(j + 1), 9, "middle", C.MUTED))
        for i, true in enumerate(cats):
            y = y0 + 14 + CELL * i
            fig.add(Text(x0 + left - 6, y + CELL / 2 + 3, str(i + 1), 9, "end", C.MUTED))
            row = inf["confusion"][name][true]
            for j, given in enumerate(cats):
                p = row[given]
                fill = C.sequential(p)
                tip = _tip(f"{name}: when the clip is “{true}”, answers “{given}” with estimated "
                           f"probability {p:.2f}", recipe)
                fig.add(Rect(x0 + left + CELL * j, y, CELL - 2, CELL - 2, fill, tip=tip))
                if p >= 0.05:
                    fig.add(Text(x0 + left + CELL * j + (CELL - 2) / 2, y + CELL / 2 + 3,
                                 f"{round(100 * p)}", 8, "middle", C.text_on(fill)))
    fig.add(Text(0, top + rows * tile_h + 14, key, 10, "start", C.MUTED))
    return fig


def check_accuracy_figure(data: dict) -> Figure:
    rel = _rel(data)
    title = "Check clips: accuracy with 95% Wilson interval"
    if not rel or not rel["checks"]:
        return reason_figure(title, f"Check clips: {(rel or {}).get('checks_reason') or 'none'}.")
    rows = []
    for c in rel["checks"]:
        a = c["accuracy"]
        rows.append((c["annotator"], a["value"], a["low"], a["high"], _tip(
            f"{c['annotator']}: {a['successes']} of {a['trials']} check clips right, 95% "
            f"Wilson interval [{a['low']:.2f}, {a['high']:.2f}]; kappa vs the known answers "
            f"{'–' if c['kappa'] is None else format(c['kappa'], '.2f')}", a["recipe"])))
    return interval_chart(title, rows, lo=0.0, hi=1.0)


def overlap_figure(data: dict, metric: str) -> Figure:
    """Leave-one-out ROUGE-L or chrF per annotator as bars (``metric`` "rouge_l" or "chrf")."""
    from .figures import bar_chart

    caps = data["agreement"]["captions"]
    m = caps.get(metric) if caps else None
    name = {"rouge_l": "ROUGE-L F", "chrf": "chrF"}[metric]
    rows = []
    if m:
        for who, v in m["per_annotator"].items():
            rows.append((who, v, _tip(f"{who}: leave-one-out {name} {v:.3f}",
                                      m["annotator_recipes"].get(who))))
    return bar_chart(f"Caption consensus: leave-one-out {name}", rows,
                     fmt="{:.3f}" if metric == "rouge_l" else "{:.1f}")


# ---- CSV tables ------------------------------------------------------------------------

def confusion_table(data: dict) -> tuple[list[str], list[list[Any]]]:
    rel = _rel(data)
    inf = rel and rel["inferred"]
    rows: list[list[Any]] = []
    if inf:
        for name in inf["annotators"]:
            for true, row in inf["confusion"][name].items():
                for given, p in row.items():
                    rows.append([name, true, given, p, inf["recipe"]["text"]])
    return (["annotator", "true_label", "given_label", "probability", "recipe"], rows)


def inferred_table(data: dict) -> tuple[list[str], list[list[Any]]]:
    rel = _rel(data)
    inf = rel and rel["inferred"]
    rows: list[list[Any]] = []
    if inf:
        cats = inf["labels_order"]
        # itemgetter of one key gives the value itself, of several a tuple
        each = operator.itemgetter(*cats) if len(cats) > 1 else (lambda post: (post[cats[0]],))
        rows = [[it["item"], it["label"], post[it["label"]], *each(post)]
                for it in inf["items"] for post in (it["posterior"],)]
        return (["clip", "inferred_label", "posterior", *[f"p_{c}" for c in cats]], rows)
    return (["clip", "inferred_label", "posterior"], rows)


def checks_table(data: dict) -> tuple[list[str], list[list[Any]]]:
    rel = _rel(data)
    rows = [[c["annotator"], c["accuracy"]["successes"], c["accuracy"]["trials"],
             c["accuracy"]["value"], c["accuracy"]["low"], c["accuracy"]["high"], c["kappa"],
             c["accuracy"]["recipe"]["text"], c["kappa_recipe"]["text"]]
            for c in ((rel or {}).get("checks") or [])]
    return (["annotator", "right", "check_clips", "accuracy", "wilson_low", "wilson_high",
             "kappa_vs_known", "accuracy_recipe", "kappa_recipe"], rows)


def summary_rows(data: dict) -> list[list[Any]]:
    """Rows for the summary table: ROUGE-L, chrF and the inference itself."""
    out: list[list[Any]] = []
    caps = data["agreement"]["captions"]
    for key, name in (("rouge_l", "leave-one-out ROUGE-L F"), ("chrf", "leave-one-out chrF")):
        m = caps.get(key) if caps else None
        if m:
            out.append(["captions", "all", name, m["overall"], None, None, None,
                        m["recipe"]["text"]])
    rel = _rel(data)
    inf = rel and rel["inferred"]
    if inf:
        for name, acc in inf["accuracy"].items():
            out.append(["reliability", name, "estimated accuracy (Dawid-Skene)", acc, None, None,
                        None, inf["recipe"]["text"]])
    return out


TABLES = {"annotator_confusion": confusion_table, "inferred_labels": inferred_table,
          "check_clips": checks_table}
