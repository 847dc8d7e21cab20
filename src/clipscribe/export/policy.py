"""Label policy: which label and which captions a clip is exported with, or why it is left out."""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field, replace
from typing import Iterable, Literal, Mapping, Sequence

from .inputs import CaptionInput, ClipInput
from .segment_choice import SEGMENT_POLICIES, describe_segment_rule
from .textdup import normalise_caption

# Shares are ratios of small integers; compare with a little slack so 3/5 >= 0.6 holds.
_EPS = 1e-9

#: caption policies: which reference captions a clip is exported with
CAPTION_POLICIES = ("gold", "gold+agreeing")
#: label rules without gold: the majority of annotator labels, or the inferred true label
LABEL_RULES = ("majority", "inferred")


@dataclass(frozen=True)
class LabelPolicy:
    """Settings of the label policy.

    Parameters
    ----------
    min_agreement : float
        Smallest majority share (0..1) accepted when no gold label exists.
    require_label : bool
        When False, clips with no labels at all are exported without a label (caption-only
        datasets). Ties and weak majorities are left out either way.
    captions : "gold" or "gold+agreeing"
        ``"gold"``: the lead's gold reference set when there is one, else every accepted
        annotator caption. ``"gold+agreeing"``: the gold set (if any) followed by the accepted
        captions of the *agreeing* annotators, dropping any caption whose normalised text
        (:func:`clipscribe.export.textdup.normalise_caption`) is already in the list. See
        :func:`decide_captions` for who is agreeing. Under either policy a reference equal
        to one already taken (same text, same segment) is dropped and counted.
    segments : "gold+best" or "gold"
        ``"gold"``: the lead's gold segments, else none. ``"gold+best"``: the gold segments,
        else those of the agreeing annotator whose segments agree best with the others', else
        none (see :func:`clipscribe.export.segment_choice.choose_segments`).
    labels : "majority" or "inferred"
        Without gold: ``"majority"`` takes the majority label (``min_agreement``);
        ``"inferred"`` takes the most probable inferred true label when its posterior
        probability (``ClipInput.posterior``, given by the caller) is at least
        ``min_posterior``. Gold wins under either rule.
    min_posterior : float
        Smallest posterior accepted under ``labels="inferred"`` (default 0.9).
    inference : dict, optional
        The recipe of the truth inference that gave the posteriors (written into the
        manifest beside the rule).
    """

    min_agreement: float = 0.6
    require_label: bool = True
    captions: Literal["gold", "gold+agreeing"] = "gold"
    segments: Literal["gold+best", "gold"] = "gold+best"
    labels: Literal["majority", "inferred"] = "majority"
    min_posterior: float = 0.9
    inference: dict | None = field(default=None, compare=False)

    def __post_init__(self) -> None:
        if not 0.0 <= self.min_agreement <= 1.0:
            raise ValueError(f"min_agreement must lie in [0, 1], got {self.min_agreement!r}")
        if not 0.0 <= self.min_posterior <= 1.0:
            raise ValueError(f"min_posterior must lie in [0, 1], got {self.min_posterior!r}")
        if self.labels not in LABEL_RULES:
            raise ValueError(f"labels must be one of {', '.join(LABEL_RULES)}, "
                             f"got {self.labels!r}")
        if self.captions not in CAPTION_POLICIES:
            raise ValueError(f"captions must be one of {', '.join(CAPTION_POLICIES)}, "
                             f"got {self.captions!r}")
        if self.segments not in SEGMENT_POLICIES:
            raise ValueError(f"segments must be one of {', '.join(SEGMENT_POLICIES)}, "
                             f"got {self.segments!r}")

    def describe(self) -> str:
        """The rule in words, for the manifest."""
        caps = ("the gold reference set when present, else every accepted annotator caption"
                if self.captions == "gold" else
                "the gold reference set (if any) followed by the accepted captions of every "
                "agreeing annotator (one whose own label of the clip equals the exported label; "
                "every annotator when the clip is exported without a label), leaving out text "
                "equal after normalisation to a caption already taken")
        if self.labels == "inferred":
            how = (f"else the inferred true label (Dawid-Skene: the most probable label given "
                   f"every annotator's estimated confusion) when its posterior probability is "
                   f">= {self.min_posterior:.2f}")
        else:
            how = (f"else the majority label when its share of annotator labels is >= "
                   f"{self.min_agreement:.2f} and no other label has as many votes")
        return (f"gold label when the lead settled one; {how}; else the clip is left out. "
                f"Annotators who skipped the clip give no "
                f"label and are not counted. Captions ({self.captions}): {caps}; a reference "
                f"equal to one already taken (same text, same segment) is dropped. Segments "
                f"({self.segments}): {describe_segment_rule(self.segments)}.")


@dataclass(frozen=True)
class LabelDecision:
    """The outcome for one clip: ``label`` and ``source``, or ``reason`` when left out."""

    clip_id: str
    label: str | None
    source: Literal["gold", "majority", "inferred"] | None
    agreement: float | None
    annotators: int
    reason: str | None = None
    skipped: int = 0
    posterior: float | None = None   # inferred probability of ``label`` (inferred rule only)

    @property
    def included(self) -> bool:
        return self.reason is None


def _quote_list(names: Sequence[str]) -> str:
    quoted = [f"'{n}'" for n in names]
    return quoted[0] if len(quoted) == 1 else ", ".join(quoted[:-1]) + " and " + quoted[-1]


def decide_label(labels: Iterable[str], gold: str | None = None, *, min_agreement: float = 0.6,
                 require_label: bool = True, clip_id: str = "") -> LabelDecision:
    """Decide a clip's label: gold first, else a strong enough majority.

    The agreement share of a label :math:`y` over the :math:`n` annotator labels is

    .. math:: a(y) = \\frac{|\\{i : y_i = y\\}|}{n}

    A majority label :math:`\\hat y = \\arg\\max_y a(y)` is accepted when it is unique (a tie is
    not a majority) and :math:`a(\\hat y) \\ge` ``min_agreement``. This is plain plurality voting
    with a quorum, common practice for settling crowd labels.

    Parameters
    ----------
    labels : iterable of str
        One label per annotator.
    gold : str or None
        The lead's settled label; when given it wins and ``agreement`` is the share of
        annotators who chose it (None when nobody labelled the clip).
    min_agreement : float
        Quorum for the majority, 0..1.
    require_label : bool
        When False a clip with no labels is kept with ``label=None``.
    clip_id : str
        Carried into the decision.

    Returns
    -------
    LabelDecision
        ``reason`` is None when the clip is exported, else one of ``"no labels"``,
        ``"tie between 'X' and 'Y'"``, ``"majority 'X' 0.50 below minimum 0.60"``.
    """
    votes: dict[str, int] = {}  # a Counter's type check costs more than counting three labels
    for lab in labels:
        votes[lab] = votes.get(lab, 0) + 1
    n = sum(votes.values())
    if gold is not None:
        share = votes.get(gold, 0) / n if n else None
        return LabelDecision(clip_id, gold, "gold", share, n)
    if n == 0:
        if require_label:
            return LabelDecision(clip_id, None, None, None, 0, reason="no labels")
        return LabelDecision(clip_id, None, None, None, 0)
    top = max(votes.values())
    leaders = sorted(lab for lab, c in votes.items() if c == top)
    share = top / n
    if len(leaders) > 1:
        return LabelDecision(clip_id, None, None, share, n,
                             reason=f"tie between {_quote_list(leaders)}")
    if share + _EPS < min_agreement:
        return LabelDecision(clip_id, None, None, share, n,
                             reason=f"majority '{leaders[0]}' {share:.2f} below minimum "
                                    f"{min_agreement:.2f}")
    return LabelDecision(clip_id, leaders[0], "majority", share, n)


def decide_inferred(labels: Iterable[str], posterior: Mapping[str, float],
                    gold: str | None = None, *, min_posterior: float = 0.9,
                    require_label: bool = True, clip_id: str = "") -> LabelDecision:
    r"""Decide a clip's label by its inferred posterior: gold first, else the most probable
    label :math:`\hat y = \arg\max_y P(y \mid \text{answers})` when
    :math:`P(\hat y) \ge` ``min_posterior`` (a tie for the top is not a decision).

    ``posterior`` is {label: probability} from a truth inference such as
    :func:`clipscribe.agreement.dawid_skene` (Dawid & Skene 1979); empty when the clip has no
    labels. ``agreement`` is the share of annotator labels equal to the decided label, as for
    :func:`decide_label`; ``posterior`` on the decision is the probability of its label.
    Reasons: ``"no labels"``, ``"tie between …"``, ``"inferred 'X' 0.72 below minimum 0.90"``.
    """
    votes = Counter(labels)
    n = sum(votes.values())
    if gold is not None or n == 0:  # gold wins; no labels: as under the majority rule
        return replace(decide_label(votes.elements(), gold, require_label=require_label,
                                    clip_id=clip_id),
                       posterior=posterior.get(gold) if gold is not None else None)
    if not posterior:
        return LabelDecision(clip_id, None, None, None, n, reason="no inferred label")
    top = max(posterior.values())
    leaders = sorted(lab for lab, p in posterior.items() if p == top)
    share = votes.get(leaders[0], 0) / n if n else None
    if len(leaders) > 1:
        return LabelDecision(clip_id, None, None, share, n, posterior=top,
                             reason=f"tie between {_quote_list(leaders)}")
    if top + _EPS < min_posterior:
        return LabelDecision(clip_id, None, None, share, n, posterior=top,
                             reason=f"inferred '{leaders[0]}' {top:.2f} below minimum "
                                    f"{min_posterior:.2f}")
    return LabelDecision(clip_id, leaders[0], "inferred", share, n, posterior=top)


@dataclass(frozen=True)
class CaptionChoice:
    """Captions exported for a clip: ``(text, segment or None)`` pairs and where they came from.

    ``source`` is ``"gold"`` when the list starts with the gold set, else ``"accepted"``;
    ``sources`` gives the source of each caption (``"gold"`` or ``"accepted"``); ``dropped``
    counts the references left out because an equal one was already taken."""

    captions: tuple[tuple[str, tuple[int, int] | None], ...]
    source: Literal["gold", "accepted"]
    sources: tuple[Literal["gold", "accepted"], ...] = ()
    dropped: int = 0

    def source_of(self, i: int) -> Literal["gold", "accepted"]:
        return self.sources[i] if self.sources else self.source


def decide_captions(captions: Sequence[CaptionInput], gold: Sequence[str] | None = None, *,
                    policy: Literal["gold", "gold+agreeing"] = "gold",
                    agreeing: Iterable[str] | None = None) -> CaptionChoice:
    """Choose a clip's reference captions.

    ``policy="gold"``: the gold set when present, else the accepted annotator captions.
    ``policy="gold+agreeing"``: the gold set (if any), then the accepted captions of the
    annotators named in ``agreeing``, leaving out any whose normalised text is already taken.
    Exact repeats (same text, same segment) are dropped under either policy; ``dropped``
    counts every reference left out as a repeat.
    *Agreeing* is decided by the caller (:func:`agreeing_annotators`): an annotator whose own
    label of the clip equals the exported label.

    Parameters
    ----------
    captions : sequence of CaptionInput
        Annotator captions; ``accepted`` is the caller's verdict.
    gold : sequence of str, optional
        The lead's reference set; an empty set counts as absent.
    policy : "gold" or "gold+agreeing"
    agreeing : iterable of str, optional
        Annotator names whose captions join the gold set (``"gold+agreeing"`` only).

    Returns
    -------
    CaptionChoice
        ``(text, segment)`` pairs (gold first, annotator captions in input order) and sources.
    """
    if policy == "gold":
        if gold:
            return _without_repeats([(t, None) for t in gold], "gold")
        return _without_repeats([(c.text, c.segment) for c in captions if c.accepted], "accepted")
    who = set(agreeing or ())
    out: list[tuple[str, tuple[int, int] | None]] = [(t, None) for t in gold or ()]
    first = _without_repeats(out, "gold")
    out, dropped = list(first.captions), first.dropped
    sources: list[Literal["gold", "accepted"]] = ["gold"] * len(out)
    seen = {normalise_caption(t) for t, _ in out}
    for c in captions:
        if not (c.accepted and c.annotator in who):
            continue
        norm = normalise_caption(c.text)
        if norm in seen:
            dropped += 1
            continue
        seen.add(norm)
        out.append((c.text, c.segment))
        sources.append("accepted")
    return CaptionChoice(tuple(out), "gold" if gold else "accepted", tuple(sources), dropped)


def _without_repeats(refs: Sequence[tuple[str, tuple[int, int] | None]],
                     source: Literal["gold", "accepted"]) -> CaptionChoice:
    """``refs`` in order with exact repeats (same text, same segment) dropped and counted."""
    kept = list(dict.fromkeys(refs))
    return CaptionChoice(tuple(kept), source, dropped=len(refs) - len(kept))


def agreeing_annotators(clip: ClipInput, label: str | None) -> set[str]:
    """Annotators who agree with the exported ``label`` of ``clip``: those whose own label of
    the clip (``clip.annotator_labels``) equals it. A clip exported without a label has nothing
    to disagree with, so every annotator with a caption agrees. Annotators who skipped the clip
    never agree."""
    skipped = {who for who, _ in clip.skipped}
    if label is None:
        return {c.annotator for c in clip.captions if c.annotator} - skipped
    return {who for who, lab in clip.annotator_labels if lab == label} - skipped


def choose_captions(clip: ClipInput, label: str | None, policy: "LabelPolicy") -> CaptionChoice:
    """:func:`decide_captions` for one clip under ``policy``, given its exported ``label``."""
    return decide_captions(clip.captions, clip.gold_captions, policy=policy.captions,
                           agreeing=agreeing_annotators(clip, label)
                           if policy.captions != "gold" else None)


def caption_texts(clip: ClipInput) -> tuple[str, ...]:
    """The caption texts a clip is exported with under the ``"gold"`` caption policy (the
    leakage checks are given the plan's own choice when there is one)."""
    if clip.gold_captions:  # the same rule as decide_captions, without building the choice
        return tuple(clip.gold_captions)
    return tuple(c.text for c in clip.captions if c.accepted)


def apply_policy(clips: Iterable[ClipInput], policy: LabelPolicy) -> list[LabelDecision]:
    """:func:`decide_label` (or :func:`decide_inferred` under ``labels="inferred"``) for every
    clip, in input order; ``skipped`` counts the clip's skips (they are not among its
    labels)."""
    if policy.labels == "inferred":
        return [_with_skips(decide_inferred(c.labels, dict(c.posterior), c.gold_label,
                                            min_posterior=policy.min_posterior,
                                            require_label=policy.require_label,
                                            clip_id=c.clip_id), c) for c in clips]
    return [_with_skips(decide_label(c.labels, c.gold_label, min_agreement=policy.min_agreement,
                                     require_label=policy.require_label, clip_id=c.clip_id), c)
            for c in clips]


def _with_skips(decision: LabelDecision, clip: ClipInput) -> LabelDecision:
    """``decision`` with the clip's skips counted; copied only when there are some (most clips
    have none, and a copy per clip is a fair part of deciding 100k clips)."""
    return replace(decision, skipped=len(clip.skipped)) if clip.skipped else decision
