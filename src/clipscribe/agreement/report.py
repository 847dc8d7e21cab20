"""The agreement report of a whole project, from plain rows the project layer hands over."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe
from .captions import corpus_index
from .cider import CiderResult, cider_d
from .interpret import CITATION
from .label_summary import LabelSummary, collect, summarize
from .loo import FLAG_RULE, LooBleu, leave_one_out_bleu
from .loo_overlap import LooOverlap, leave_one_out_chrf, leave_one_out_rouge_l
from .reliability import ReliabilitySummary, reliability_summary
from .retrieval import RetrievalResult, caption_retrieval
from .segments import PairMatch, check_segments, frame_agreement, segment_matching


@dataclass(frozen=True)
class SegmentSummary:
    frame_alpha: Any | None           # Score, or None without frame counts
    pairs: list[PairMatch]

    def to_dict(self) -> dict:
        fa = self.frame_alpha
        return {"frame_alpha": None if fa is None else {
                    "value": None if math.isnan(fa) else float(fa), "band": fa.interpretation,
                    "recipe": fa.recipe.to_dict()},
                "pairs": [p.to_dict() for p in self.pairs]}


@dataclass(frozen=True)
class CaptionSummary:
    bleu: LooBleu
    cider: CiderResult
    retrieval: RetrievalResult
    rouge_l: LooOverlap | None = None
    chrf: LooOverlap | None = None

    def to_dict(self, *, items: bool = True) -> dict:
        """JSON-safe dict; ``items=False`` leaves out the list of flagged captions."""
        b = self.bleu
        out = {"rouge_l": None if self.rouge_l is None else self.rouge_l.to_dict(),
                "chrf": None if self.chrf is None else self.chrf.to_dict(),
                "bleu": {"overall": b.overall.to_dict(),
                         "per_annotator": {k: v.to_dict() for k, v in b.per_annotator.items()},
                         "recipe": b.recipe.to_dict()},
                "flag_rule": FLAG_RULE,
                "flagged": b.flagged_dicts() if items else None,
                "cider": self.cider.to_dict(), "retrieval": self.retrieval.to_dict()}
        if not items:
            del out["flagged"]
            out["n_flagged"] = b.n_flagged
        return out


@dataclass(frozen=True)
class ClipScore:
    """Per clip numbers for ranking the review queue (NaN where there is nothing to measure)."""

    clip: Any
    label_disagreement: float   # 1 - share of the majority label
    segment_f1: float           # mean pairwise F1 at IoU 0.5
    caption_bleu: float         # mean leave-one-out sentence BLEU of the clip's captions
    caption_cider: float        # mean CIDEr-D of the clip's captions

    def to_dict(self) -> dict:
        return {k: (str(v) if k == "clip" else (None if math.isnan(v) else float(v)))
                for k, v in self.__dict__.items()}


@dataclass(frozen=True)
class ClipTable:
    """Per clip scores as parallel arrays (cheap for 100k clips); rows come out as ClipScore."""

    clips: list
    label_disagreement: np.ndarray
    segment_f1: np.ndarray
    caption_bleu: np.ndarray
    caption_cider: np.ndarray

    def __len__(self) -> int:
        return len(self.clips)

    def row(self, i: int) -> ClipScore:
        return ClipScore(self.clips[i], float(self.label_disagreement[i]),
                         float(self.segment_f1[i]), float(self.caption_bleu[i]),
                         float(self.caption_cider[i]))

    def __iter__(self):
        return (self.row(i) for i in range(len(self.clips)))

    def to_dicts(self) -> list[dict]:
        """Every row as :meth:`ClipScore.to_dict` gives it, built column by column."""
        def plain(v: np.ndarray) -> list:
            out = v.astype(object)
            out[np.isnan(v)] = None
            return out.tolist()
        cols = [plain(v) for v in (self.label_disagreement, self.segment_f1, self.caption_bleu,
                                   self.caption_cider)]
        return [{"clip": str(c), "label_disagreement": a, "segment_f1": b, "caption_bleu": d,
                 "caption_cider": e} for c, a, b, d, e in zip(self.clips, *cols)]

    def worst_first(self) -> np.ndarray:
        """Row order for review: most label disagreement, then lowest segment F1, then lowest
        caption BLEU; NaN sorts last within each key (our ordering)."""
        def key(v, sign):
            return np.where(np.isnan(v), np.inf, sign * v)
        return np.lexsort((key(self.caption_bleu, 1), key(self.segment_f1, 1),
                           key(self.label_disagreement, -1)))


#: what ``to_dict(items=False)`` leaves out (paths into the dict)
ITEMS = ("clips", "captions.flagged", "reliability.inferred.items")

#: why a part of the report is not measured (the part is None then), in plain words
NO_LABELS = "no annotator has labelled a clip yet"
NO_SEGMENTS = "no annotator has marked a segment yet"
NO_CAPTIONS = "no annotator has written a caption yet"
ONE_CAPTIONER = ("no clip has captions from two annotators yet; caption consensus "
                 "(leave-one-out BLEU, CIDEr-D) compares each person with the others")
LEFT_OUT = "left out of this report"


@dataclass(frozen=True)
class AgreementReport:
    labels: LabelSummary | None
    segments: SegmentSummary | None
    captions: CaptionSummary | None
    clips: ClipTable
    recipe: Recipe
    reliability: ReliabilitySummary | None = None
    #: part ("labels", "segments", "captions") -> why it is not measured; each part stands
    #: alone, so a project with labels only still gets its label agreement
    not_measured: dict[str, str] = field(default_factory=dict)

    def review_queue(self, top: int | None = None) -> list[ClipScore]:
        """Clips worst first (see :meth:`ClipTable.worst_first`), the first ``top`` or all."""
        order = self.clips.worst_first()
        return [self.clips.row(int(i)) for i in (order if top is None else order[:top])]

    def to_dict(self, *, items: bool = True) -> dict:
        """JSON-safe dict (NaN becomes None). ``items=False`` leaves out what grows with the
        project: the per clip scores (``clips``), the flagged captions and the inferred label
        of every clip; ``items_left_out`` then names them."""
        rel = self.reliability
        out = {"recipe": self.recipe.to_dict(), "interpretation_source": CITATION,
               "labels": None if self.labels is None else self.labels.to_dict(),
               "segments": None if self.segments is None else self.segments.to_dict(),
               "captions": None if self.captions is None else self.captions.to_dict(items=items),
               "not_measured": dict(self.not_measured),
               "clips": self.clips.to_dicts() if items else None,
               "reliability": None if rel is None else rel.to_dict(items=items)}
        if not items:
            del out["clips"]
            out["items_left_out"] = list(ITEMS)
        return out

    def to_text(self, *, top: int = 10) -> str:
        from ._report_text import render

        return render(self, top=top)


#: clips that leave-one-out ROUGE-L and chrF are estimated on, at most (see _clip_sample)
OVERLAP_CLIPS = 2000


@dataclass(frozen=True)
class CaptionPart:
    """The caption half of a report, which depends on the captions (and the seed) alone:
    ``summary`` (None when no clip has captions from two people), per clip mean leave-one-out
    BLEU and CIDEr-D, everyone who wrote a caption, how many caption rows there were, and
    whether captions were left out of the report altogether."""

    summary: CaptionSummary | None
    clip_bleu: dict
    clip_cider: dict
    annotators: tuple[str, ...]
    rows: int
    left_out: bool = False


def caption_part(captions: Iterable[Sequence[Any]] | None, *, seed: int = 0,
                 overlap_clips: int | None = OVERLAP_CLIPS) -> CaptionPart:
    """The caption part of :func:`agreement_report` for rows (clip, annotator, text), or the
    empty part of a report that leaves captions out (``captions`` None)."""
    seed = _checks.positive_int("seed", seed, minimum=0)
    if captions is None:
        return CaptionPart(None, {}, {}, (), 0, left_out=True)
    by_clip: dict[Any, list] = {}
    for n, row in enumerate(captions):
        try:
            clip, ann, text = row
        except (TypeError, ValueError):
            raise ValueError(f"captions[{n}] must be a (clip, annotator, text) tuple") from None
        by_clip.setdefault(clip, []).append((str(ann), text))
    rows = sum(len(v) for v in by_clip.values())
    writers = tuple(sorted({a for v in by_clip.values() for a, _ in v}))
    if not any(len({a for a, _ in v}) > 1 for v in by_clip.values()):
        # caption consensus needs a clip captioned by two people; with none it is not measured
        return CaptionPart(None, {}, {}, writers, rows)
    try:
        loo = leave_one_out_bleu(by_clip)
        cider = cider_d(by_clip)
    finally:  # the n-gram index the two share (~0.6 GB at 100k clips) is not kept past them
        corpus_index.cache_clear()
    sample, note = _clip_sample(by_clip, overlap_clips, seed)
    rouge, chrf = leave_one_out_rouge_l(sample), leave_one_out_chrf(sample)
    if note:
        rouge, chrf = (dataclasses.replace(m, recipe=m.recipe.replace(note=note))
                       for m in (rouge, chrf))
    summary = CaptionSummary(loo, cider, caption_retrieval(by_clip, seed=seed), rouge, chrf)
    acc: dict[Any, list] = {}
    for clip, bleu in zip(loo.captions.clips, loo.captions.bleu.tolist()):  # type: ignore[attr-defined]
        if not math.isnan(bleu):
            acc.setdefault(clip, []).append(bleu)
    return CaptionPart(summary, {k: float(np.mean(v)) for k, v in acc.items()},
                       cider.per_clip, writers, rows)


def agreement_report(labels: Iterable[Sequence[Any]],
                     segments: Iterable[Sequence[Any]] | None = None,
                     captions: Iterable[Sequence[Any]] | None = None, *,
                     label_order: Sequence[Any] | None = None, ordinal: bool = False,
                     fps: Mapping[Any, float] | float | None = None,
                     frame_count: Mapping[Any, int] | None = None, seed: int = 0,
                     n_boot: int = 1000, label_set_version: str | None = None,
                     reliability: bool = True, truth_model: str = "full",
                     known_answers: Mapping[Any, Any] | None = None,
                     overlap_clips: int | None = OVERLAP_CLIPS,
                     captions_done: CaptionPart | None = None) -> AgreementReport:
    """Agreement of a whole project: labels, and optionally segments and captions.

    Parameters
    ----------
    labels : iterable of (clip, annotator, label)
        One label per clip and annotator; a repeated pair keeps the last row.
    segments : iterable of (clip, annotator, label, start, end), optional
        Frames, ``end`` exclusive.
    captions : iterable of (clip, annotator, text), optional
    label_order : the label set in order (required order for ``ordinal``); default sorted.
    ordinal : treat labels as ordered: ordinal alpha and linearly weighted Cohen kappa.
    fps : mapping clip -> frames per second (or one number), for segment offsets in seconds.
    frame_count : mapping clip -> number of frames, for frame-level alpha.
    seed, n_boot : bootstrap over clips for the confidence intervals (95 %, percentile).
    label_set_version : written into every recipe.
    reliability : (default True) also infer true labels and each annotator's confusion (Dawid-Skene,
        ``truth_model`` "full" or "one-coin") and, with ``known_answers`` {clip: label}, score
        each annotator on those check clips (accuracy with Wilson interval, kappa).
    overlap_clips : leave-one-out ROUGE-L and chrF are computed on at most this many clips
        captioned by two or more people (a seeded random sample above it, said in their
        recipes' note; default 2,000); None computes them on every clip.
    captions_done : the :func:`caption_part` of ``captions`` (same ``seed`` and
        ``overlap_clips``) computed earlier; given, ``captions`` is not read again. The caption
        part is what costs most in a report, and it depends on the captions alone.

    Returns
    -------
    AgreementReport
        Each part is measured on its own: a part with nothing to measure (no labels, no
        segments, no clip captioned by two people) is None and ``.not_measured`` says why, and
        the other parts are still computed. ``.labels`` (Krippendorff alpha with CI, Fleiss when every clip has the same number of
        labels, pairwise Cohen kappa and confusion matrices, one-vs-rest alpha per label with
        CI), ``.segments``, ``.captions``, ``.clips`` (per clip scores), ``.review_queue()``,
        ``.to_dict()``, ``.to_text()``. Formulas and sources are in the functions used:
        :func:`krippendorff_alpha`, :func:`fleiss_kappa`, :func:`cohen_kappa`,
        :func:`segment_matching`, :func:`frame_agreement`, :func:`leave_one_out_bleu`,
        :func:`cider_d`, :func:`caption_retrieval`; bands: Landis & Koch (1977),
        https://doi.org/10.2307/2529310
    """
    n_boot = _checks.positive_int("n_boot", n_boot)
    seed = _checks.positive_int("seed", seed, minimum=0)
    labels = labels if isinstance(labels, list) else list(labels)
    codes, clip_list, annotators, label_list = collect(labels, label_order)
    summary = None
    if codes.size:
        summary = summarize(codes, clip_list, annotators, label_list, ordinal=ordinal, seed=seed,
                            n_boot=n_boot, label_set_version=label_set_version)
    worked: dict[Any, set] = {}
    seg_summary, seg_f1 = None, {}
    rows = check_segments(segments) if segments is not None else []
    if rows:  # with no segment at all, every pair would "agree" on nothing: not measured
        for a, row in zip(annotators, codes):
            for c in np.flatnonzero(row >= 0).tolist():
                worked.setdefault(clip_list[c], set()).add(a)
        for clip, ann, *_ in rows:
            worked.setdefault(clip, set()).add(ann)
        pairs, seg_f1 = segment_matching(rows, fps=fps, annotated=worked)
        fa = frame_agreement(rows, frame_count, annotated=worked) if frame_count else None
        seg_summary = SegmentSummary(fa, pairs)
    part = captions_done if captions_done is not None else caption_part(
        captions, seed=seed, overlap_clips=overlap_clips)
    cap_summary, cap_bleu, cap_cider = part.summary, part.clip_bleu, part.clip_cider
    clips = _clip_scores(summary, clip_list, seg_f1, cap_bleu, cap_cider)
    everyone = sorted(set(annotators) | {a for s in worked.values() for a in s}
                      | set(part.annotators))
    recipe = Recipe.make("report", "agreement", ordinal=ordinal, seed=seed, n_boot=n_boot,
                         n_raters=len(everyone), n_items=len(clips), annotators=everyone,
                         label_set_version=label_set_version)
    rel = None
    if reliability:
        rel = reliability_summary(labels, known=known_answers, label_order=label_order,
                                  model=truth_model, label_set_version=label_set_version)
    why = {"labels": None if summary is not None else NO_LABELS,
           "segments": None if seg_summary is not None else
           LEFT_OUT if segments is None else NO_SEGMENTS,
           "captions": None if cap_summary is not None else
           LEFT_OUT if part.left_out else ONE_CAPTIONER if part.rows else NO_CAPTIONS}
    return AgreementReport(summary, seg_summary, cap_summary, clips, recipe, rel,
                           {k: v for k, v in why.items() if v is not None})


def _clip_sample(by_clip: dict[Any, list], limit: int | None, seed: int
                 ) -> tuple[dict[Any, list], str | None]:
    """The clips ROUGE-L and chrF are computed on: all clips captioned by two or more people,
    or, above ``limit`` of them, a random sample of ``limit`` (seeded), with the note that
    says so. Both metrics compare every caption with every other caption of its clip, character
    n-grams for chrF, so on a big project they cost far more than BLEU and CIDEr-D, which
    share one n-gram index and stay on every clip; a sample of a few thousand clips pins down
    a project-wide mean well (the per-clip scores of the review queue do not use them)."""
    shared = [c for c, v in by_clip.items() if len({a for a, _ in v}) > 1]
    if limit is None or len(shared) <= limit:
        return by_clip, None
    pick = np.sort(np.random.default_rng(seed).choice(len(shared), limit, replace=False))
    return ({shared[i]: by_clip[shared[i]] for i in pick.tolist()},
            f"estimated on {limit} of {len(shared)} clips, sampled with seed {seed}")


def _clip_scores(summary, clip_list, seg_f1, cap_bleu, cap_cider) -> ClipTable:
    order = list(clip_list)
    known = set(order)
    order += [c for c in dict.fromkeys([*seg_f1, *cap_bleu, *cap_cider]) if c not in known]
    n = len(order)
    dis = np.full(n, np.nan)
    if summary is not None:
        dis[:len(clip_list)] = summary.disagreement

    def column(values: dict) -> np.ndarray:
        out = np.full(n, np.nan)
        if values:
            index = {c: i for i, c in enumerate(order)}
            out[[index[c] for c in values]] = list(values.values())
        return out

    return ClipTable(order, dis, column(seg_f1), column(cap_bleu), column(cap_cider))
