"""Leave-one-out BLEU: each annotator's captions against the other annotators' captions of the
same clip, computed for all captions at once.

Why by hand: scoring caption by caption recounts every reference once per hypothesis. Here each
caption's n-grams are counted once (:func:`~clipscribe.agreement.captions.ngram_index`); per
clip and n-gram we keep the two largest per-annotator counts, so "the largest count among the
other annotators" is the top count, or the second one for the annotator who holds the top.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from . import _checks
from ._recipe import Recipe
from .bleu import BleuScore, _score_from_sums, bleu_from_stats
from .captions import NgramIndex, corpus_index, tokenizer

FLAG_RULE = ("a caption is flagged when its leave-one-out sentence BLEU is more than `margin` "
             "points below the median of its clip's captions (clips with >= 3 scored captions), "
             "or when it is empty (our choice)")


@dataclass(frozen=True)
class CaptionScore:
    clip: Any
    annotator: str
    text: str
    bleu: float          # sentence BLEU, 0-100; NaN when the clip has no other annotator
    clip_median: float
    flagged: bool
    reason: str | None = None

    def to_dict(self) -> dict:
        nan = np.isnan
        return {"clip": str(self.clip), "annotator": self.annotator, "text": self.text,
                "bleu": None if nan(self.bleu) else self.bleu,
                "clip_median": None if nan(self.clip_median) else self.clip_median,
                "flagged": self.flagged, "reason": self.reason}


def pack(values: list) -> tuple:
    """A column with few distinct values (clip ids, annotator names) as its distinct values
    and one small integer per row: pickled and read back many times faster than the list."""
    keys: dict = {}
    codes = np.fromiter((keys.setdefault(v, len(keys)) for v in values), dtype=np.int64,
                        count=len(values))
    return list(keys), codes


def unpack(packed: tuple) -> list:
    keys, codes = packed
    table = np.fromiter(keys, dtype=object, count=len(keys))  # one take in C, not a loop per row
    return table[codes].tolist()


class Columns(Sequence):
    """Base of per caption results kept as columns (one list or array per field, in
    ``__slots__``); a row is built when asked for. Columns named in ``_packed`` (few distinct
    values: clip ids, annotator names) pickle as :func:`pack` gives them."""

    __slots__: tuple[str, ...] = ()
    _packed: tuple[str, ...] = ()

    def __len__(self) -> int:
        return len(getattr(self, self.__slots__[0]))

    def _row(self, i: int) -> Any:
        raise NotImplementedError

    def __getitem__(self, i):  # type: ignore[override]
        if isinstance(i, slice):
            return [self._row(j) for j in range(*i.indices(len(self)))]
        return self._row(range(len(self))[i])

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Sequence):
            return NotImplemented
        return len(self) == len(other) and all(a == b for a, b in zip(self, other))

    def __repr__(self) -> str:
        return f"{type(self).__name__}({len(self)} captions)"

    def __getstate__(self):
        return tuple(pack(getattr(self, k)) if k in self._packed else getattr(self, k)
                     for k in self.__slots__)

    def __setstate__(self, state) -> None:
        for k, v in zip(self.__slots__, state):
            setattr(self, k, unpack(v) if k in self._packed else v)


class CaptionScores(Columns):
    """Every caption's score, kept as columns; an item comes out as a :class:`CaptionScore`
    when asked for. A 100k-clip project has close to a million captions: as columns they are
    built, stored and read back in a fraction of the time the objects take."""

    __slots__ = ("clips", "authors", "texts", "bleu", "median", "reasons")
    _packed = ("clips", "authors")

    def __init__(self, clips: list, authors: list[str], texts: list[str], bleu: np.ndarray,
                 median: np.ndarray, reasons: dict[int, str]) -> None:
        self.clips, self.authors, self.texts = clips, authors, texts
        self.bleu, self.median, self.reasons = bleu, median, reasons  # reasons: row -> why flagged

    def _row(self, i: int) -> CaptionScore:
        why = self.reasons.get(i)
        return CaptionScore(self.clips[i], self.authors[i], self.texts[i], float(self.bleu[i]),
                            float(self.median[i]), why is not None, why)

    def __iter__(self):
        why = self.reasons.get
        for i, row in enumerate(zip(self.clips, self.authors, self.texts, self.bleu.tolist(),
                                    self.median.tolist())):
            reason = why(i)
            yield CaptionScore(*row, reason is not None, reason)

    def flagged(self) -> list[CaptionScore]:
        return [self._row(i) for i in sorted(self.reasons)]

    def flagged_dicts(self) -> list[dict]:
        """``[c.to_dict() for c in self.flagged()]``, built without the objects."""
        nan = math.isnan
        return [{"clip": str(self.clips[i]), "annotator": self.authors[i], "text": self.texts[i],
                 "bleu": None if nan(b := float(self.bleu[i])) else b,
                 "clip_median": None if nan(m := float(self.median[i])) else m,
                 "flagged": True, "reason": self.reasons[i]} for i in sorted(self.reasons)]


@dataclass(frozen=True)
class LooBleu:
    """Result of :func:`leave_one_out_bleu`."""

    overall: BleuScore
    per_annotator: dict[str, BleuScore]
    captions: Sequence[CaptionScore]
    recipe: Recipe = field(compare=False)

    @property
    def flagged(self) -> list[CaptionScore]:
        caps = self.captions
        return caps.flagged() if isinstance(caps, CaptionScores) else [c for c in caps if c.flagged]

    @property
    def n_flagged(self) -> int:
        caps = self.captions
        return len(caps.reasons) if isinstance(caps, CaptionScores) else sum(c.flagged for c in caps)

    def flagged_dicts(self) -> list[dict]:
        caps = self.captions
        return caps.flagged_dicts() if isinstance(caps, CaptionScores) else [c.to_dict() for c in self.flagged]


def _flatten(captions_by_clip: Mapping[Any, Sequence[Any]]):
    clips, authors, texts, clip_keys = [], [], [], []
    for ci, (clip, caps) in enumerate(captions_by_clip.items()):
        clip_keys.append(clip)
        if isinstance(caps, str):
            raise ValueError(f"captions of clip {clip!r} must be a list, not one string")
        for j, item in enumerate(caps):
            if isinstance(item, str):
                author, text = f"#{j}", item
            else:
                try:
                    author, text = item
                except (TypeError, ValueError):
                    raise ValueError(f"caption {j} of clip {clip!r} must be a string or an "
                                     "(annotator, text) pair") from None
            if not isinstance(text, str):
                raise ValueError(f"caption {j} of clip {clip!r}: text must be a string")
            clips.append(ci)
            authors.append(str(author))
            texts.append(text)
    return np.asarray(clips, dtype=np.int64), authors, texts, clip_keys


def loo_stats(clip: np.ndarray, author: np.ndarray, index: NgramIndex, max_order: int):
    """Per caption: hyp_len, ref_len, matches (n, N), totals (n, N), has_refs (n,)."""
    n_docs = len(index.lengths)
    lengths = index.lengths
    correct = np.zeros((n_docs, max_order), dtype=np.int64)
    for n, o in enumerate(index.orders):
        if len(o.doc) == 0:
            continue
        # (the ``del``s keep the peak down: each array holds an entry per caption n-gram,
        # ~14 M at 100k clips)
        a = author[o.doc]
        group = clip[o.doc] * o.n_keys + o.key  # (clip, n-gram)
        # per (clip, n-gram): annotators sorted by their count, largest first
        order = np.lexsort((-o.count, a, group))
        g_s, a_s, n_s = group[order], a[order], o.count[order]
        del order
        first_of_author = np.ones(len(g_s), bool)
        first_of_author[1:] = (g_s[1:] != g_s[:-1]) | (a_s[1:] != a_s[:-1])
        g_u, a_u, n_u = g_s[first_of_author], a_s[first_of_author], n_s[first_of_author]
        del g_s, a_s, n_s, first_of_author
        order2 = np.lexsort((-n_u, g_u))
        g_u, a_u, n_u = g_u[order2], a_u[order2], n_u[order2]
        del order2
        head = np.ones(len(g_u), bool)
        head[1:] = g_u[1:] != g_u[:-1]
        heads = np.flatnonzero(head)
        second = np.zeros(len(heads), dtype=np.int64)
        has_second = np.append(~head[1:], False)[heads]
        second[has_second] = n_u[heads[has_second] + 1]
        gi = np.searchsorted(g_u[heads], group)
        other = np.where(a == a_u[heads][gi], second[gi], n_u[heads][gi])
        correct[:, n] = np.bincount(o.doc, weights=np.minimum(o.count, other),
                                    minlength=n_docs).astype(np.int64)
    total = np.maximum(lengths[:, None] - np.arange(max_order)[None, :], 0)
    ref_len, has_refs = _closest_other_lengths(clip, author, lengths)
    return lengths, ref_len, correct, total, has_refs


def _closest_other_lengths(clip, author, lengths):
    """Closest length (ties to shorter) among captions of the same clip by other annotators."""
    n = len(clip)
    order = np.argsort(clip, kind="stable")
    cs = clip[order]
    starts = np.searchsorted(cs, cs, side="left")
    counts = np.searchsorted(cs, cs, side="right") - starts
    width = int(counts.max()) if n else 0
    best = np.full(n, np.iinfo(np.int64).max)
    ref = np.zeros(n, dtype=np.int64)
    ls, au = lengths[order], author[order]
    pos = np.arange(n)
    for k in range(width):
        j = starts + k
        ok = k < counts
        j = np.where(ok, j, pos)
        ok &= au[j] != au
        key = np.abs(ls[j] - ls) * (1 << 32) + ls[j]
        better = ok & (key < best)
        best = np.where(better, key, best)
        ref = np.where(better, ls[j], ref)
    out_ref, out_has = np.empty(n, dtype=np.int64), np.empty(n, dtype=bool)
    out_ref[order], out_has[order] = ref, best != np.iinfo(np.int64).max
    return out_ref, out_has


def leave_one_out_bleu(captions_by_clip: Mapping[Any, Sequence[Any]], *, max_order: int = 4,
                       tokenize: str = "13a", smooth: str | None = None,
                       sentence_smooth: str | None = "exp", margin: float = 10.0) -> LooBleu:
    r"""Cross-reference BLEU: every caption against the other annotators' captions of its clip.

    Parameters
    ----------
    captions_by_clip : mapping clip -> sequence of (annotator, text) or of str
        Plain strings count as captions by distinct annotators.
    max_order, tokenize, smooth :
        As in :func:`~clipscribe.agreement.bleu.corpus_bleu`; ``smooth`` applies to the corpus
        scores (overall and per annotator).
    sentence_smooth : {None, "floor", "add-k", "exp"}
        Smoothing of the per-caption sentence scores (with effective order), default ``"exp"``.
    margin : float
        Flagging margin in BLEU points, see ``FLAG_RULE``.

    Returns
    -------
    LooBleu
        ``.overall`` (corpus BLEU of all captions), ``.per_annotator`` (corpus BLEU of each
        annotator's captions), ``.captions`` (sentence score and flag of each caption),
        ``.flagged``. Captions whose clip has no other annotator are left out of the corpus
        scores and get NaN.

    Notes
    -----
    For caption :math:`h` of annotator :math:`a` on clip :math:`v`, the references are
    :math:`R = \{\rho : \rho \text{ captions } v, \text{author}(\rho) \ne a\}` and the clipped
    count of n-gram g is :math:`\min(\#_h g, \max_{\rho \in R} \#_\rho g)`; corpus sums and the
    BLEU formula are those of Papineni et al. (2002), https://doi.org/10.3115/1073083.1073135 .
    Per annotator, the value equals ``corpus_bleu`` of that annotator's captions with the other
    annotators' captions as references.
    """
    max_order = _checks.positive_int("max_order", max_order)
    margin = _checks.finite_number("margin", margin, minimum=0.0)
    _checks.choice("smooth", smooth, _checks.SMOOTHING)
    _checks.choice("sentence_smooth", sentence_smooth, _checks.SMOOTHING)
    tokenizer(tokenize)  # checks the name
    clip, authors, texts, clip_keys = _flatten(captions_by_clip)
    names = sorted(set(authors))
    aid = {a: i for i, a in enumerate(names)}
    author = np.fromiter((aid[a] for a in authors), dtype=np.int64, count=len(authors))
    index = corpus_index(tuple(texts), tokenize, max_order)
    hl, rl, correct, total, has = loo_stats(clip, author, index, max_order)
    if not has.any():
        raise ValueError("no caption has a caption by another annotator on its clip: "
                         "leave-one-out BLEU is undefined")
    sent, _, _ = bleu_from_stats(correct, total, hl, rl, smooth=sentence_smooth,
                                 effective_order=True)
    sent = np.where(has, sent, np.nan)
    stats = np.column_stack([hl, rl, correct, total])

    def recipe(variant, n, annot):
        return Recipe.make("bleu", variant, order=max_order, tok=tokenize,
                           smooth=smooth or "none", n_items=n, n_raters=len(annot),
                           annotators=annot)

    overall = _score_from_sums(stats[has].sum(axis=0), max_order, smooth, None, False,
                               recipe("leave-one-out", int(has.sum()), names))
    per = {}
    for name, i in aid.items():
        sel = has & (author == i)
        if sel.any():
            per[name] = _score_from_sums(stats[sel].sum(axis=0), max_order, smooth, None, False,
                                         recipe("leave-one-out", int(sel.sum()), [name]))
    caps = _flag(clip, clip_keys, authors, texts, index.lengths, sent, margin)
    rec = recipe("leave-one-out", len(texts), names).replace(
        options={"order": max_order, "tok": tokenize, "smooth": smooth or "none",
                 "sentence_smooth": sentence_smooth or "none", "margin": margin})
    return LooBleu(overall, per, caps, rec)


def _clip_medians(clip: np.ndarray, sent: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per caption: median of the non-NaN scores of its clip, and how many there are."""
    scored = ~np.isnan(sent)
    order = np.lexsort((np.where(scored, sent, np.inf), clip))
    cs = clip[order]
    start = np.searchsorted(cs, cs, side="left")
    k = np.bincount(clip, weights=scored, minlength=int(clip.max()) + 1).astype(np.int64)[cs]
    vals = sent[order]
    lo = start + np.maximum(k - 1, 0) // 2
    hi = start + k // 2
    med = np.where(k > 0, (vals[lo] + vals[np.minimum(hi, len(vals) - 1)]) / 2.0, np.nan)
    med = np.where(k % 2 == 1, vals[lo], med)
    med = np.where(k > 0, med, np.nan)
    out_med, out_k = np.empty(len(clip)), np.empty(len(clip), dtype=np.int64)
    out_med[order], out_k[order] = med, k
    return out_med, out_k


def _flag(clip, clip_keys, authors, texts, lengths, sent, margin) -> CaptionScores:
    median, scored = _clip_medians(clip, sent)
    empty = lengths == 0
    low = (scored >= 3) & (sent < median - margin) & ~empty
    reasons = {i: "empty caption" for i in np.flatnonzero(empty).tolist()}
    at = np.flatnonzero(low)
    for i, s, med in zip(at.tolist(), sent[at].tolist(), median[at].tolist()):
        reasons[i] = f"BLEU {s:.1f} < clip median {med:.1f} - {margin:g}"
    return CaptionScores([clip_keys[c] for c in clip.tolist()], list(authors), list(texts),
                         np.asarray(sent, dtype=float), np.asarray(median, dtype=float), reasons)
