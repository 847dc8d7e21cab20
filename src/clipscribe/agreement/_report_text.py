"""Plain-text rendering of an AgreementReport for a terminal."""

from __future__ import annotations

import math

from .interpret import CITATION


def _n(x, digits: int = 3) -> str:
    return "-" if x is None or (isinstance(x, float) and math.isnan(x)) else f"{x:.{digits}f}"


def _not_measured(report, part: str, title: str) -> list[str]:
    """The heading of a part that was not measured, and why (in its place)."""
    why = report.not_measured.get(part)
    return ["", title, f"  not measured: {why}"] if why else []


def render(report, *, top: int = 10) -> str:
    out = [f"Agreement report  ({report.recipe.text()})", ""]
    lab = report.labels
    out += _not_measured(report, "labels", "Labels")[1:]
    if lab is not None:
        a = lab.alpha
        out.append(f"Labels: {len(lab.clips)} clips, {len(lab.annotators)} annotators, "
                   f"{len(lab.labels)} labels")
        out.append(f"  Krippendorff alpha ({a.recipe.option('level')}): {_n(a)}  "
                   f"95% CI [{_n(lab.alpha_ci.low)}, {_n(lab.alpha_ci.high)}]  "
                   f"{a.interpretation}")
        if lab.fleiss is not None:
            out.append(f"  Fleiss kappa: {_n(lab.fleiss)}  {lab.fleiss.interpretation}")
        else:
            out.append(f"  Fleiss kappa: not applicable ({lab.fleiss_reason})")
        out += ["", f"  {'annotator A':<16}{'annotator B':<16}{'kappa':>8}{'agree':>8}"
                    f"{'clips':>8}  band"]
        for p in lab.pairs:
            out.append(f"  {p.annotator_a:<16.16}{p.annotator_b:<16.16}{_n(p.kappa):>8}"
                       f"{_n(p.observed):>8}{int(p.confusion.sum()):>8}  "
                       f"{p.kappa.interpretation}")
        out += ["", f"  {'label (one vs rest)':<24}{'alpha':>8}{'95% CI':>20}"]
        for k, (s, ci) in lab.per_label.items():
            out.append(f"  {str(k):<24.24}{_n(s):>8}{'[' + _n(ci.low) + ', ' + _n(ci.high) + ']':>20}")
    seg = report.segments
    out += _not_measured(report, "segments", "Segments")
    if seg is not None:
        out += ["", "Segments"]
        if seg.frame_alpha is not None:
            out.append(f"  frame-level alpha: {_n(seg.frame_alpha)}  "
                       f"{seg.frame_alpha.interpretation}")
        out.append(f"  {'A':<14}{'B':<14}{'IoU':>5}{'P':>7}{'R':>7}{'F1':>7}{'offset f':>10}"
                   f"{'offset s':>10}")
        for p in seg.pairs:
            out.append(f"  {p.annotator_a:<14.14}{p.annotator_b:<14.14}{p.iou_threshold:>5.1f}"
                       f"{_n(p.precision, 2):>7}{_n(p.recall, 2):>7}{_n(p.f1, 2):>7}"
                       f"{_n(p.boundary_offset_frames, 1):>10}"
                       f"{_n(p.boundary_offset_seconds, 2):>10}")
    cap = report.captions
    out += _not_measured(report, "captions", "Captions")
    if cap is not None:
        b = cap.bleu.overall
        out += ["", "Captions",
                f"  leave-one-out BLEU-1..4: {' '.join(_n(x, 2) for x in b.cumulative)}  "
                f"(BLEU-1..4 precisions {', '.join(_n(p, 1) for p in b.precisions)}; "
                f"BP {_n(b.brevity_penalty)})",
                f"  CIDEr-D: {_n(cap.cider.overall)}   retrieval R@1 {_n(cap.retrieval.r_at_1)} "
                f"R@5 {_n(cap.retrieval.r_at_5)} R@10 {_n(cap.retrieval.r_at_10)} "
                f"median rank {_n(cap.retrieval.median_rank, 1)}"]
        for name, s in cap.bleu.per_annotator.items():
            out.append(f"  {name:<20.20} BLEU-1..4 "
                       f"{' '.join(f'{_n(x, 2):>6}' for x in s.cumulative)}  CIDEr-D "
                       f"{_n(cap.cider.per_annotator.get(name, float('nan'))):>6}")
        for m, name in ((cap.rouge_l, "ROUGE-L F (0-1)"), (cap.chrf, "chrF (0-100)")):
            if m is not None:
                per = "  ".join(f"{a} {_n(v, 3 if m.metric == 'rouge-l' else 1)}"
                                for a, v in m.per_annotator.items())
                out.append(f"  leave-one-out {name}: "
                           f"{_n(m.overall, 3 if m.metric == 'rouge-l' else 1)}  ({per})")
                out.append(f"    recipe: {m.recipe.text()}")
        flagged = cap.bleu.flagged
        out.append(f"  flagged for review: {len(flagged)}")
        for c in flagged[:top]:
            out.append(f"    {str(c.clip):<12.12} {c.annotator:<14.14} {c.reason}")
    out += _reliability(report.reliability)
    queue = report.review_queue(top)
    if queue:
        out += ["", f"Review queue (worst {len(queue)})",
                f"  {'clip':<16}{'label dis.':>11}{'seg F1':>8}{'cap BLEU':>10}"]
        for c in queue:
            out.append(f"  {str(c.clip):<16.16}{_n(c.label_disagreement, 2):>11}"
                       f"{_n(c.segment_f1, 2):>8}{_n(c.caption_bleu, 1):>10}")
    out += ["", f"Bands: {CITATION}"]
    return "\n".join(out)


def _reliability(rel) -> list[str]:
    if rel is None:
        return []
    out = ["", "Annotator reliability"]
    inf = rel.inferred
    if inf is None:
        out.append(f"  inferred labels: not computed ({rel.inferred_reason})")
    else:
        cats = [str(c) for c in inf.label_order]
        out.append(f"  inferred labels (Dawid-Skene, {inf.recipe.option('model')}): "
                   f"{len(inf.items)} clips, {inf.iterations} rounds"
                   f"{'' if inf.converged else ', not converged'}; recipe {inf.recipe.text()}")
        for a, acc in inf.accuracy.items():
            worst = max(((t, g, p) for t, row in inf.confusion[a].items()
                         for g, p in row.items() if g != t), key=lambda x: x[2], default=None)
            note = (f"; most often calls “{worst[0]}” “{worst[1]}” ({worst[2]:.0%})"
                    if worst and worst[2] >= 0.2 else "")
            out.append(f"    {a:<20.20} estimated accuracy {_n(acc)}{note}")
        out.append(f"    confusion rows: true label; columns: {', '.join(cats)}")
    if rel.checks:
        out.append(f"  check clips ({rel.n_check_clips} with a known answer):")
        for c in rel.checks:
            acc = c.accuracy
            out.append(f"    {c.annotator:<20.20} accuracy {_n(acc.value)} "
                       f"[{_n(acc.low)}, {_n(acc.high)}] on {acc.trials}  kappa {_n(c.kappa)}")
    else:
        out.append(f"  check clips: {rel.checks_reason}")
    return out
