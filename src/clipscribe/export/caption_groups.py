"""The part of the caption checks that needs no split assignment: which clips wrote each
normalised caption, and the clusters of near-identical captions (:mod:`.textdup`). It is most of
a caption check's work, so a plan finds it in a worker thread while it assigns splits and checks
the media; :mod:`.leakage` turns it into findings once the splits are known."""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from typing import Callable, Mapping, Sequence

from .clusters import Clusters
from .inputs import ClipInput
from .policy import caption_texts
from .textdup import caption_clusters, normalise_captions


class ClipsOfText(dict):
    """Clip ids per normalised caption text: the texts of several clips are kept as sets, and
    every other text gives the set of its one clip when asked."""

    def __init__(self, one: Mapping[str, str], several: dict[str, set[str]]):
        super().__init__(several)
        self.one = one

    def __missing__(self, text: str) -> set[str]:
        return {self.one[text]}


def _clips_of_text(owners: Sequence[str], norms: Sequence[str]) -> ClipsOfText:
    """The clips of each non-empty normalised text (``owners[k]`` wrote ``norms[k]``)."""
    one = dict(zip(norms, owners))
    one.pop("", None)
    several: dict[str, set[str]] = {}
    if len(one) < len(norms):  # some text is written more than once (or is empty)
        repeated = {t for t, n in Counter(norms).items() if n > 1 and t}
        for clip_id, norm in zip(owners, norms):
            if norm in repeated:
                several.setdefault(norm, set()).add(clip_id)
        several = {t: ids for t, ids in several.items() if len(ids) > 1}
    return ClipsOfText(one, several)


@dataclass(frozen=True)
class CaptionGroups:
    """What the caption checks find before any split is assigned: the clips of each normalised
    text (``by_text``), every distinct text sorted (``texts``, which the clusters number), and
    the clusters of near-identical texts at ``threshold`` (None when only identical text is
    checked, ``threshold`` 1.0)."""

    by_text: ClipsOfText
    texts: list[str]
    clusters: Clusters | None
    threshold: float


def caption_groups(clips: Sequence[ClipInput], threshold: float,
                   chosen: Mapping[str, Sequence[str]] | None = None,
                   cluster: Callable[[list[str], float], Clusters] = caption_clusters
                   ) -> CaptionGroups:
    """The :class:`CaptionGroups` of the captions of ``clips`` (``chosen`` per clip, by default
    :func:`clipscribe.export.policy.caption_texts`), clustered at ``threshold``."""
    owners: list[str] = []
    raw: list[str] = []
    for c in clips:
        got = (chosen[c.clip_id] if chosen is not None and c.clip_id in chosen
               else caption_texts(c))
        owners += [c.clip_id] * len(got)
        raw += got
    by_text = _clips_of_text(owners, normalise_captions(raw))
    if threshold >= 1.0:
        return CaptionGroups(by_text, [], None, threshold)
    texts = sorted(by_text.one)
    return CaptionGroups(by_text, texts, cluster(texts, threshold), threshold)
