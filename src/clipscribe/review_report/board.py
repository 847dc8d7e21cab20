"""The numbers of the agreement board as one JSON-safe dict, and the board's figures built from
that dict alone, so the screen and the report cannot disagree. No Qt."""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Iterator
from typing import Any

from .._version import __version__
from ..agreement.interpret import BANDS, CITATION
from . import colours as C
from .figures import Figure, bar_chart, heat_map, interval_chart, line_chart, note_figure

QUEUE_TOP = 20


def _clean(v: Any) -> Any:
    if isinstance(v, float) and math.isnan(v):
        return None
    return v


def board_data(project, *, seed: int = 0, n_boot: int = 1000, report: Any = None,
               items: bool = True) -> dict:
    """Everything the board and the report show, computed once through the project façade.

    ``agreement`` is exactly ``AgreementReport.to_dict(items=items)`` of
    ``project.agreement_report(seed=, n_boot=)`` (or of ``report``); throughput, trend and the
    queue come from :class:`~clipscribe.project.review.Review`. ``items=False`` (the board)
    leaves out the per clip rows the figures never show (the report's CSV tables need them).
    Leads only.
    """
    data: dict = {}
    for _part, data in board_parts(project, seed=seed, n_boot=n_boot, report=report,
                                   items=items, labels_first=False):
        pass
    return data


#: the parts of :func:`board_parts`, cheapest first ("labels" only when the caption part of
#: the report is not kept and must be computed)
BOARD_PARTS = ("meta", "throughput", "trend", "labels", "agreement")


def board_parts(project, *, seed: int = 0, n_boot: int = 1000, report: Any = None,
                items: bool = True, labels_first: bool = True) -> Iterator[tuple[str, dict]]:
    """:func:`board_data` part by part, cheapest first (:data:`BOARD_PARTS`): yields
    ``(part, the dict so far)`` after each, so a screen can draw what is there while the
    agreement report is still being computed. The last dict is :func:`board_data`'s. The
    "labels" part (its ``agreement`` leaves captions out) comes only with ``labels_first``
    and when the caption part is to be computed (it costs a second label report)."""
    lead = project.check_reviewer()
    workers = {a.name for a in project.annotators() if a.role != "lead"}
    flags = sorted([(c, a, "skipped", why) for c, a, why in project.skips()]
                   + [(c, a, "unsure", note) for c, a, note in project.unsure_flags()])
    flags = [f for f in flags if f[1] in workers]
    paths = {c.id: c.path for c in project.clips()} if flags else {}
    data: dict[str, Any] = {
        "meta": {"project": project.settings.name, "tool": "clipscribe", "version": __version__,
                 "made": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"),
                 "lead": lead, "seed": seed, "n_boot": n_boot,
                 "label_set_version": str(project.label_set_version()),
                 "clips": project.clip_count(), "settled": project.clip_count(state="settled"),
                 "bands_source": CITATION, "bands": [list(b) for b in BANDS]},
        "flags": [{"clip": c, "path": paths.get(c), "annotator": a, "state": st, "reason": why}
                  for c, a, st, why in flags],
    }
    yield "meta", data
    data["throughput"] = [
        {"annotator": t.annotator, "clips": t.clips, "edits": t.edits,
         "active_seconds": t.active_seconds, "clips_per_hour": _clean(t.clips_per_hour),
         "recipe": t.recipe.to_dict()} for t in project.throughput().values()]
    yield "throughput", data
    data["trend"] = [{"window": t.window, "period": t.period, "first": t.first.isoformat(),
                      "last": t.last.isoformat(), "clips": t.clips, "alpha": _clean(t.alpha),
                      "recipe": t.recipe.to_dict()}
                     for t in project.agreement_trend()]
    yield "trend", data
    if labels_first and report is None and not project.caption_part_kept(seed=seed):
        # the captions changed since their part was kept: it takes a while (about a minute
        # at 100k clips), so the label and segment numbers come first, from a report that
        # leaves captions out, and then the whole report
        early = project.agreement_report(seed=seed, n_boot=n_boot, captions=False)
        data["agreement"] = early.to_dict(items=items)
        yield "labels", data
    rep = report if report is not None else project.agreement_report(seed=seed, n_boot=n_boot)
    queue = project.review_queue(report=rep, limit=QUEUE_TOP)
    data["agreement"] = rep.to_dict(items=items)
    data["queue"] = [{"rank": r.rank, "clip": r.clip, "path": r.path, "group": r.group,
                      "label_disagreement": _clean(r.label_disagreement),
                      "segment_f1": _clean(r.segment_f1), "caption_bleu": _clean(r.caption_bleu),
                      "caption_cider": _clean(r.caption_cider), "labels": r.labels,
                      "gold_label": r.gold_label, "skipped": r.skipped, "unsure": r.unsure}
                     for r in queue]
    yield "agreement", {k: data[k] for k in ("meta", "agreement", "throughput", "trend",
                                             "queue", "flags")}


def not_measured(data: dict, part: str) -> str | None:
    """Why ``part`` ("labels", "segments", "captions") of the report was not measured, or None."""
    why = data["agreement"].get("not_measured", {}).get(part)
    return f"Not measured: {why}." if why else None


def _tip(head: str, recipe: dict | None) -> str:
    return head + (f"\nrecipe: {recipe['text']}" if recipe else "")


def _ci(ci: dict | None) -> str:
    if not ci or ci.get("low") is None:
        return ""
    return (f", 95% CI [{ci['low']:.3f}, {ci['high']:.3f}] ({ci['method']}, "
            f"{ci['n_boot']} resamples, seed {ci['seed']})")


def label_alpha_figure(data: dict) -> Figure:
    title = "Label agreement: Krippendorff alpha with 95% interval"
    if why := not_measured(data, "labels"):
        return note_figure(title, why)
    lab = data["agreement"]["labels"]
    rows = []
    if lab:
        a = lab["alpha"]
        rows.append(("all labels", a["value"], (a["ci"] or {}).get("low"),
                     (a["ci"] or {}).get("high"),
                     _tip(f"Krippendorff alpha = {_v(a['value'])} ({a['band']}){_ci(a['ci'])}",
                          a["recipe"])))
        for name, s in lab["per_label"].items():
            rows.append((name, s["value"], s["ci"].get("low"), s["ci"].get("high"),
                         _tip(f"alpha for “{name}” vs the rest = {_v(s['value'])} "
                              f"({s['band']}){_ci(s['ci'])}", s["recipe"])))
    return interval_chart(title, rows,
                          bands=[(b, n) for b, n in data["meta"]["bands"]])


def _v(x) -> str:
    return "not measurable" if x is None else f"{x:.3f}"


def pairwise_figure(data: dict) -> Figure:
    if why := not_measured(data, "labels"):
        return note_figure("Pairwise Cohen kappa", why, width=300)
    lab = data["agreement"]["labels"] or {"annotators": [], "pairs": []}
    names = lab["annotators"]
    ix = {n: i for i, n in enumerate(names)}
    vals = [[None] * len(names) for _ in names]
    tips = [[f"{a} with themselves" for _ in names] for a in names]
    for p in lab["pairs"]:
        i, j = ix[p["annotator_a"]], ix[p["annotator_b"]]
        tip = _tip(f"Cohen kappa {p['annotator_a']} vs {p['annotator_b']} = {_v(p['kappa'])}, "
                   f"observed agreement {_v(p['observed'])}", p["recipe"])
        vals[i][j] = vals[j][i] = p["kappa"]
        tips[i][j] = tips[j][i] = tip
    return heat_map("Pairwise Cohen kappa", names, names, vals, colour=C.diverging,
                    cell_text=lambda v: "" if v is None else f"{v:.2f}", tips=tips,
                    legend=("kappa", -1.0, 1.0, "diverging"))


def confusion_figure(data: dict, pair: int = 0) -> Figure:
    lab = data["agreement"]["labels"]
    if why := not_measured(data, "labels"):
        return note_figure("Confusion matrix", why, width=300)
    if not lab or not lab["pairs"]:
        return Figure("Confusion matrix: no pair of annotators", 300, 40)
    p = lab["pairs"][pair]
    labels, m = lab["labels"], p["confusion"]
    peak = max([max(r) for r in m] + [1])
    tips = [[_tip(f"{p['annotator_a']} said “{labels[i]}”, {p['annotator_b']} said "
                  f"“{labels[j]}”: {m[i][j]} clip(s)", p["recipe"]) for j in range(len(labels))]
            for i in range(len(labels))]
    return heat_map(f"Confusion: {p['annotator_a']} ↓ × {p['annotator_b']} →",
                    labels, labels, [[c / peak for c in r] for r in m], colour=C.sequential,
                    cell_text=str, tips=tips,
                    legend=("clips, share of the largest cell", 0.0, 1.0, "sequential"),
                    labels=[[str(c) if c else "" for c in r] for r in m])


def consensus_figures(data: dict) -> tuple[Figure, Figure]:
    bleu_title, cider_title = ("Caption consensus: leave-one-out BLEU",
                               "Caption consensus: CIDEr-D")
    if why := not_measured(data, "captions"):
        return note_figure(bleu_title, why), note_figure(cider_title, why)
    caps = data["agreement"]["captions"]
    rows_b, rows_c = [], []
    if caps:
        for name, b in caps["bleu"]["per_annotator"].items():
            rows_b.append((name, b["score"], _tip(
                f"{name}: leave-one-out corpus BLEU {b['score']:.2f} (their captions against the "
                "other annotators' captions of the same clips)", b["recipe"])))
        for name, v in caps["cider"]["per_annotator"].items():
            rows_c.append((name, v, _tip(f"{name}: mean CIDEr-D {_v(v)}",
                                         caps["cider"]["recipe"])))
    return (bar_chart(bleu_title, rows_b, fmt="{:.1f}"), bar_chart(cider_title, rows_c, fmt="{:.2f}"))


def throughput_figure(data: dict) -> Figure:
    rows = [(t["annotator"], t["clips_per_hour"], _tip(
        f"{t['annotator']}: {t['clips']} clip(s), {t['edits']} edit(s) in "
        f"{t['active_seconds']:.0f} s of working time", t["recipe"])) for t in data["throughput"]]
    return bar_chart("Throughput: clips per hour of working time", rows, fmt="{:,.0f}")


def trend_figure(data: dict) -> Figure:
    if not data["trend"] and (why := not_measured(data, "labels")):
        return note_figure("Label agreement over time", why)
    weekly = any(t.get("period") for t in data["trend"])
    pts = [(f"{t['period'] or '#' + str(t['window'])} ({len(t['clips'])} clips)", t["alpha"], _tip(
        f"{'week ' + t['period'] if t.get('period') else 'window ' + str(t['window'])}: clips "
        f"{', '.join(map(str, t['clips']))}, alpha {_v(t['alpha'])}"
        f"\nlabels set {t['first'][:16]} – {t['last'][:16]}", t["recipe"]))
           for t in data["trend"]]
    return line_chart("Label agreement over time (alpha per "
                      f"{'ISO week' if weekly else 'window of clips'})", pts)


def board_figures(data: dict) -> dict[str, Figure]:
    """Every figure of the board, keyed by a short name, in display order."""
    bleu, cider = consensus_figures(data)
    figs = {"label_alpha": label_alpha_figure(data), "pairwise": pairwise_figure(data)}
    lab = data["agreement"]["labels"]
    for k in range(len(lab["pairs"]) if lab else 0):
        figs[f"confusion_{k}"] = confusion_figure(data, k)
    figs.update({"caption_bleu": bleu, "caption_cider": cider,
                 "throughput": throughput_figure(data), "trend": trend_figure(data)})
    figs.update(reliability_figures(data))
    return figs


def reliability_figures(data: dict) -> dict[str, Figure]:
    """The annotator reliability panel and the leave-one-out ROUGE-L and chrF bars."""
    from .reliability import check_accuracy_figure, confusion_grid_figure, overlap_figure

    return {"reliability": confusion_grid_figure(data),
            "check_accuracy": check_accuracy_figure(data),
            "caption_rouge_l": overlap_figure(data, "rouge_l"),
            "caption_chrf": overlap_figure(data, "chrf")}
