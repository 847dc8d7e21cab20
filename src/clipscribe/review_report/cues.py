""""Which cues carry the labels": the grouped cross-validation of the single-frame, appearance,
motion and fused streams (``Project.compare_streams``) as board figures, report HTML and CSV
tables. The numbers are exactly ``StreamComparison.to_dict()`` (NaN written as None), the
same as ``clipscribe suggest --compare --json``. No Qt."""

from __future__ import annotations

import math
from html import escape
from typing import Any

from .figures import Figure, bar_chart, interval_chart, note_figure

STREAM_WORDS = {"single-frame": "single frame", "appearance": "appearance",
                "motion": "motion", "fused": "fused"}
#: per-label difference (motion minus appearance share right) from which "motion matters" shows
MOTION_MATTERS = 0.2
TITLE = "Which cues carry the labels"


def clean(v: Any) -> Any:
    """NaN -> None, through dicts and lists (JSON cannot hold NaN)."""
    if isinstance(v, float) and math.isnan(v):
        return None
    if isinstance(v, dict):
        return {k: clean(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [clean(x) for x in v]
    return v


def cues_data(project, *, folds: int = 5, seed: int = 0, n_boot: int = 1000,
              progress=None, cancel=None) -> dict:
    """``compare_streams(folds, seed)`` as plain data, or ``{"not_measured": reason}`` when the
    project has too few labels."""
    from ..errors import NotEnoughLabels
    accepted = clean(project.agreement_with_and_without_suggestions())
    try:
        result = project.compare_streams(folds, seed, progress=progress, cancel=cancel,
                                         n_boot=n_boot)
    except NotEnoughLabels as exc:
        return {"not_measured": str(exc), "accepted_suggestions": accepted}
    return {**clean(result.to_dict()), "accepted_suggestions": accepted}


def _iv(cues: dict, metric: str, stream: str) -> tuple[float | None, float | None]:
    iv = cues["intervals"][metric][stream]
    return iv.get("low"), iv.get("high")


def accepted_figure(cues: dict) -> Figure:
    """Krippendorff's alpha of the annotators' labels with and without accepted suggestions."""
    acc = cues.get("accepted_suggestions")
    title = "Agreement with and without accepted suggestions"
    if not acc or not acc["accepted_labels"]:
        return note_figure(title, "No label was set by accepting a suggestion.")
    rows = [(f"all labels ({acc['with']['labels']})", acc["with"]["alpha"], acc["recipe"]),
            (f"without accepted ({acc['without']['labels']})", acc["without"]["alpha"],
             acc["recipe"])]
    return bar_chart(f"{title} (alpha; {acc['accepted_labels']} accepted)", rows, fmt="{:.3f}")


def cues_figures(cues: dict) -> dict[str, Figure]:
    """Accuracy and macro-F1 per stream with 95 % intervals, the per-label share right of
    appearance vs motion, and agreement with and without accepted suggestions."""
    if "not_measured" in cues:
        note = note_figure(TITLE, cues["not_measured"])
        return {"cue_accuracy": note, "cue_f1": note_figure("Macro-F1 per cue", ""),
                "cue_labels": note_figure("Per label: appearance vs motion", ""),
                "cue_accepted": accepted_figure(cues)}
    w = cues["fusion_weight"]
    tip = cues["recipe"]
    out = {}
    for key, metric, title in (("cue_accuracy", "accuracy", f"{TITLE}: accuracy"),
                               ("cue_f1", "macro_f1", "Macro-F1 per cue")):
        rows = []
        for s in cues["streams"]:
            low, high = _iv(cues, metric, s)
            name = STREAM_WORDS[s] + (f" ({w['appearance']:.2f}/{w['motion']:.2f})"
                                      if s == "fused" else "")
            rows.append((name, cues[metric][s], low, high,
                         f"{STREAM_WORDS[s]}: {metric.replace('_', '-')} {_num(cues[metric][s])}, "
                         f"95% interval {_num(low)}–{_num(high)}. {tip}"))
        out[key] = interval_chart(title, rows, lo=0.0, hi=1.0)
    rows = []
    for lab in cues["labels"]:
        a = cues["per_class_accuracy"]["appearance"][lab]
        m = cues["per_class_accuracy"]["motion"][lab]
        matters = a is not None and m is not None and m - a >= MOTION_MATTERS
        for s, v in (("appearance", a), ("motion", m)):
            rows.append((f"{lab} · {s}", v, f"{lab}: share of its clips the {s} stream got "
                                            f"right, {_num(v)}" + (" (motion matters)"
                                                                   if matters else "")))
    out["cue_labels"] = bar_chart("Per label: appearance vs motion (share right)", rows,
                                  fmt="{:.2f}")
    out["cue_accepted"] = accepted_figure(cues)
    return out


def _num(v: float | None) -> str:
    return "–" if v is None else f"{v:.3f}"


def streams_table(cues: dict) -> tuple[list[str], list[list[Any]]]:
    header = ["stream", "accuracy", "accuracy_low", "accuracy_high", "macro_f1", "macro_f1_low",
              "macro_f1_high", "fusion_weight_appearance", "folds", "clips", "groups", "seed",
              "recipe"]
    if "not_measured" in cues:
        return header, []
    rows = []
    for s in cues["streams"]:
        rows.append([s, cues["accuracy"][s], *_iv(cues, "accuracy", s), cues["macro_f1"][s],
                     *_iv(cues, "macro_f1", s),
                     cues["fusion_weight"]["appearance"] if s == "fused" else None,
                     cues["folds"], cues["clips"], cues["groups"], cues["seed"], cues["recipe"]])
    return header, rows


def labels_table(cues: dict) -> tuple[list[str], list[list[Any]]]:
    header = ["label", "single_frame", "appearance", "motion", "fused", "motion_minus_appearance"]
    if "not_measured" in cues:
        return header, []
    pc = cues["per_class_accuracy"]
    rows = []
    for lab in cues["labels"]:
        a, m = pc["appearance"][lab], pc["motion"][lab]
        rows.append([lab, pc["single-frame"][lab], a, m, pc["fused"][lab],
                     None if a is None or m is None else m - a])
    return header, rows


#: CSV file stem -> table of the cues section
TABLES = {"cues_streams": streams_table, "cues_per_label": labels_table}


def cues_html(cues: dict, block, table) -> str:
    """The report section; ``block(figures)`` and ``table(Table)`` render as the report does."""
    head = f"<h2>{escape(TITLE)}</h2>"
    if "not_measured" in cues:
        return (head + f'<p class="why">{escape(cues["not_measured"])}</p>'
                + block([accepted_figure(cues)]))
    figs = cues_figures(cues)
    w = cues["fusion_weight"]
    return "".join([
        head,
        f"<p>Grouped cross-validation ({cues['folds']} folds, {cues['clips']} clips in "
        f"{cues['groups']} groups, no group on both sides) of a classifier that sees one still "
        f"frame, the sampled frames' appearance, their motion (optical flow), and the fusion of "
        f"appearance and motion (weights {w['appearance']:.2f} / {w['motion']:.2f}). Where "
        f"motion gets a label right far more often than appearance, motion carries it.</p>",
        block(list(figs.values())),
        table(streams_table(cues)), table(labels_table(cues)),
        f'<p class="meta">{escape(cues["recipe"])}</p>',
    ])
