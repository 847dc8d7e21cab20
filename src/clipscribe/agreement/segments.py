"""Agreement on temporal segments: frame-level alpha and one-to-one segment matching.

A segment is ``(label, start, end)`` in frames with ``end`` exclusive. Input to the public
functions is an iterable of ``(clip, annotator, label, start, end)`` tuples.

``label`` None is an *unlabelled* segment (marked before its annotator chose a label): it says
something happens there, not what. Matching pairs it by time only, with a segment of any label
(the pair's recipe counts such segments as ``unlabelled``); in frame agreement its frames are
not rated by that annotator (missing), neither a label nor "(no activity)".
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe, Score
from .alpha import nominal_unit_stats
from .labels import codes_to_table

NO_ACTIVITY = "(no activity)"
THRESHOLDS = (0.3, 0.5, 0.7)
_BATCH_FRAMES = 1 << 20


def check_segments(segments: Iterable[Any]) -> list[tuple]:
    """Validate ``(clip, annotator, label, start, end)`` rows: whole frames, 0 <= start < end."""
    out = []
    for i, row in enumerate(segments):
        try:
            clip, annotator, label, start, end = row
        except (TypeError, ValueError):
            raise ValueError(f"segments[{i}] must be (clip, annotator, label, start, end)") from None
        if isinstance(start, bool) or isinstance(end, bool) or \
                not float(start).is_integer() or not float(end).is_integer():
            raise ValueError(f"segments[{i}]: start and end must be whole frame numbers")
        if not 0 <= start < end:
            raise ValueError(f"segments[{i}]: need 0 <= start < end (end exclusive), "
                             f"got start={start}, end={end}")
        out.append((clip, str(annotator), label, int(start), int(end)))
    return out


def group_by_clip(rows: list[tuple]) -> dict[Any, dict[str, list[tuple]]]:
    by: dict = defaultdict(lambda: defaultdict(list))
    for clip, ann, label, s, e in rows:
        by[clip][ann].append((label, s, e))
    return by


def temporal_iou(a: tuple[int, int], b: tuple[int, int]) -> float:
    r"""Temporal IoU of frame ranges ``[s, e)``: :math:`|a \cap b| / |a \cup b|`."""
    inter = max(0, min(a[1], b[1]) - max(a[0], b[0]))
    union = (a[1] - a[0]) + (b[1] - b[0]) - inter
    return inter / union if union > 0 else 0.0


def match_segments(a: Sequence[tuple], b: Sequence[tuple], *, iou_threshold: float = 0.5,
                   same_label: bool = True) -> list[tuple[int, int, float]]:
    r"""One-to-one matching of two annotators' segments on one clip.

    Greedy: all pairs with :math:`\mathrm{IoU} \ge` ``iou_threshold`` (and the same label when
    ``same_label``; an unlabelled segment, label None, matches any label: by time only) are
    taken in order of decreasing IoU (ties: earlier segment of ``a``, then
    of ``b``), each segment used at most once. This is the matching used when scoring temporal
    detections (common practice); it can differ from an optimal (Hungarian) assignment when one
    segment overlaps two others about equally.

    Returns ``[(i, j, iou)]`` with indices into ``a`` and ``b``.
    """
    thr = _checks.probability("iou_threshold", iou_threshold) if iou_threshold != 1.0 else 1.0
    cands = []
    for i, (la, sa, ea) in enumerate(a):
        for j, (lb, sb, eb) in enumerate(b):
            if same_label and la != lb and la is not None and lb is not None:
                continue
            v = temporal_iou((sa, ea), (sb, eb))
            if v >= thr and v > 0:
                cands.append((-v, i, j))
    cands.sort()
    used_a, used_b, out = set(), set(), []
    for v, i, j in cands:
        if i not in used_a and j not in used_b:
            used_a.add(i)
            used_b.add(j)
            out.append((i, j, -v))
    return out


@dataclass(frozen=True)
class PairMatch:
    """Matching of annotator a's segments against b's, pooled over their shared clips."""

    annotator_a: str
    annotator_b: str
    iou_threshold: float
    matched: int
    n_a: int
    n_b: int
    precision: float
    recall: float
    f1: float
    start_offset_frames: float
    end_offset_frames: float
    boundary_offset_frames: float
    boundary_offset_seconds: float | None
    recipe: Recipe = field(compare=False)

    def to_dict(self) -> dict:
        d = {k: getattr(self, k) for k in self.__dataclass_fields__ if k != "recipe"}
        d = {k: (None if isinstance(v, float) and np.isnan(v) else v) for k, v in d.items()}
        d["recipe"] = self.recipe.to_dict()
        return d


def _ratio(num: int, den: int, other: int) -> float:
    """num/den; with den == 0: 1.0 when the other side is empty too, else 0.0 (our choice)."""
    return num / den if den else (1.0 if other == 0 else 0.0)


def segment_matching(segments: Iterable[Any], *, thresholds: Sequence[float] = THRESHOLDS,
                     fps: Mapping[Any, float] | float | None = None,
                     annotated: Mapping[Any, Iterable[str]] | None = None,
                     same_label: bool = True) -> tuple[list[PairMatch], dict[Any, float]]:
    r"""Precision, recall, F1 and boundary offsets for every annotator pair and IoU threshold.

    Parameters
    ----------
    segments : iterable of (clip, annotator, label, start, end)
    thresholds : IoU thresholds, default 0.3, 0.5, 0.7.
    fps : mapping clip -> frames per second, or one number for all clips; for offsets in seconds.
    annotated : mapping clip -> annotators who worked on it (so an annotator who marked nothing
        counts as "no segments"); default: those with a segment on the clip.
    same_label : match only segments with equal labels (default); an unlabelled segment
        (label None) matches by time only, and the pair's recipe gives their count as
        ``unlabelled`` (left out of the recipe when there are none).

    Returns
    -------
    (list of PairMatch, dict clip -> mean pairwise F1 at IoU 0.5 (or the middle threshold))

    Notes
    -----
    For pair (a, b) with M matches (see :func:`match_segments`):
    :math:`P = M/|a|`, :math:`R = M/|b|`, :math:`F_1 = 2M/(|a| + |b|)`; a pair with no segments on
    either side has :math:`F_1 = 1` (nothing to disagree on, our choice). Offsets are mean
    absolute start/end differences of matched segments. Temporal IoU as in Gaidon, Harchaoui &
    Schmid (2013), Temporal localization of actions with actoms, IEEE TPAMI 35(11):2782-2795,
    https://doi.org/10.1109/TPAMI.2013.65
    """
    ths = [float(t) for t in thresholds]
    for t in ths:
        _checks.probability("thresholds", t)
    rows = check_segments(segments)
    by = group_by_clip(rows)
    clips = set(by) | set(annotated or {})
    members = {c: sorted(set(by.get(c, {})) | set(map(str, (annotated or {}).get(c, ()))))
               for c in clips}
    mid = ths[len(ths) // 2] if 0.5 not in ths else 0.5
    acc: dict = defaultdict(lambda: [0, 0, 0, [], [], [], 0])
    clip_f1: dict[Any, list[float]] = defaultdict(list)
    for clip in clips:
        segs = by.get(clip, {})
        rate = _fps(fps, clip)
        m = members[clip]
        for ia, a in enumerate(m):
            for b in m[ia + 1:]:
                sa, sb = segs.get(a, []), segs.get(b, [])
                for t in ths:
                    pairs = match_segments(sa, sb, iou_threshold=t, same_label=same_label)
                    s = acc[(a, b, t)]
                    s[0] += len(pairs)
                    s[1] += len(sa)
                    s[2] += len(sb)
                    s[6] += sum(g[0] is None for g in (*sa, *sb))
                    for i, j, _ in pairs:
                        ds, de = abs(sa[i][1] - sb[j][1]), abs(sa[i][2] - sb[j][2])
                        s[3].append(ds)
                        s[4].append(de)
                        s[5].append((ds + de) / 2 / rate if rate else np.nan)
                    if t == mid:
                        n = len(sa) + len(sb)
                        clip_f1[clip].append(2 * len(pairs) / n if n else 1.0)
    out = []
    for (a, b, t), (mt, na, nb, ds, de, sec, blank) in sorted(acc.items()):
        rec = Recipe.make("segments", "matching", iou=t, matching="greedy",
                          same_label=same_label, unlabelled=blank or None, n_raters=2,
                          n_items=na + nb, annotators=(a, b))
        mean = (lambda xs: float(np.mean(xs)) if xs else float("nan"))
        seconds = mean(sec) if fps is not None else None
        out.append(PairMatch(a, b, t, mt, na, nb, _ratio(mt, na, nb), _ratio(mt, nb, na),
                             2 * mt / (na + nb) if na + nb else 1.0, mean(ds), mean(de),
                             mean([(x + y) / 2 for x, y in zip(ds, de)]), seconds, rec))
    per_clip = {c: float(np.mean(v)) for c, v in clip_f1.items()}
    return out, per_clip


def _fps(fps, clip) -> float | None:
    if fps is None:
        return None
    v = fps if isinstance(fps, (int, float)) else fps.get(clip)
    return None if v is None else _checks.finite_number("fps", v, minimum=1e-9)


def frame_agreement(segments: Iterable[Any], frame_counts: Mapping[Any, int], *,
                    annotated: Mapping[Any, Iterable[str]] | None = None) -> Score:
    r"""Krippendorff's nominal alpha with every frame a unit.

    Each annotator who worked on a clip gives each frame of it the label of the segment covering
    it, or ``"(no activity)"`` when none does; frames under an unlabelled segment (label None)
    are missing for that annotator (not rated; the recipe counts them as ``unlabelled_frames``).
    Where one annotator's segments overlap, the one starting last wins (then the later one in
    the input). Clips missing from ``frame_counts``
    are left out; segments past the clip's last frame raise ValueError.

    Notes
    -----
    The alpha formula is that of :func:`~clipscribe.agreement.alpha.krippendorff_alpha`
    (Krippendorff 2011, https://repository.upenn.edu/asc_papers/43), over units = frames.
    Frames of one clip are not independent, so no bootstrap interval is given here.
    """
    rows = check_segments(segments)
    by = group_by_clip(rows)
    labels = sorted({r[2] for r in rows if r[2] is not None}, key=str)
    code: dict = {lab: i + 1 for i, lab in enumerate(labels)}
    code[None] = -1  # an unlabelled segment: its frames are not rated
    blank = 0
    sums = np.zeros(3 + len(labels))
    batch: list[np.ndarray] = []
    size = n_frames = 0
    n_raters = set()
    for clip, count in frame_counts.items():
        count = _checks.positive_int("frame_counts", count)
        segs = by.get(clip, {})
        m = sorted(set(segs) | set(map(str, (annotated or {}).get(clip, ()))))
        if not m:
            continue
        n_raters.update(m)
        block = np.zeros((len(m), count), dtype=np.int32)
        for r, a in enumerate(m):
            for label, s, e in sorted(segs.get(a, []), key=lambda x: x[1]):
                if e > count:
                    raise ValueError(f"clip {clip!r}: segment [{s}, {e}) of {a} runs past its "
                                     f"{count} frames")
                block[r, s:e] = code[label]
            blank += int(np.count_nonzero(block[r] < 0))
        batch.append(block)
        size += block.size
        n_frames += count
        if size >= _BATCH_FRAMES:
            sums += _frame_sums(batch, len(labels) + 1)
            batch, size = [], 0
    if batch:
        sums += _frame_sums(batch, len(labels) + 1)
    us = nominal_unit_stats(np.zeros((0, len(labels) + 1)))
    value = float(us.finish(sums))
    recipe = Recipe.make("alpha", "krippendorff-frames", level="nominal",
                         empty=NO_ACTIVITY, unlabelled_frames=blank or None,
                         n_raters=len(n_raters), n_items=n_frames,
                         annotators=sorted(n_raters))
    return Score(value, recipe)


def _frame_sums(blocks: list[np.ndarray], n_cats: int) -> np.ndarray:
    width = max(b.shape[0] for b in blocks)
    codes = np.concatenate([np.pad(b, ((0, width - b.shape[0]), (0, 0)), constant_values=-1)
                            for b in blocks], axis=1)
    return nominal_unit_stats(codes_to_table(codes, n_cats)).stats.sum(axis=0)
