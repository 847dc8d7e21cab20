"""Quality warnings about an export plan that are not leakage: splits that came out empty or far
from their ratios, and clips exported with fewer reference captions than the guideline asks for.

They never stop an export; the CLI prints them, the export dialog shows them and the manifest
records them (``warnings``).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import Hashable, Mapping, Sequence

#: a split whose share of the exported clips is further than this from its ratio is reported
#: (percentage points / 100; our choice, see :func:`split_balance`)
SPLIT_TOLERANCE = 0.10
#: how many files a warning's message names before "and N more"
FILES_NAMED = 5


@dataclass(frozen=True)
class PlanWarning:
    """One quality warning: ``kind``, a sentence, the clips involved (ids and media paths)."""

    kind: str
    message: str
    clips: tuple[str, ...] = ()
    files: tuple[str, ...] = ()
    details: dict = field(default_factory=dict, compare=False)

    severity = "warning"  # read by the tables that also show leakage findings

    def to_dict(self) -> dict:
        return {"kind": self.kind, "message": self.message, "clips": list(self.clips),
                "files": list(self.files), "details": self.details}


def name_files(files: Sequence[str], most: int = FILES_NAMED) -> str:
    """``a.mp4, b.mp4 and 3 more`` (files in the order given)."""
    shown = [str(f) for f in files[:most]]
    rest = len(files) - len(shown)
    if rest:
        return ", ".join(shown) + f" and {rest} more"
    return shown[0] if len(shown) == 1 else ", ".join(shown[:-1]) + " and " + shown[-1]


def _pct(x: float) -> str:
    return f"{100 * x:.0f}%"


def split_balance(assignment: Mapping[str, str], ratios: Mapping[str, float],
                  groups: Mapping[str, Hashable | None],
                  tolerance: float = SPLIT_TOLERANCE) -> list[PlanWarning]:
    """Warn about splits that came out empty or far from their ratio.

    A split :math:`s` with target fraction :math:`t_s > 0` is reported when it holds no clip
    (kind ``split-empty``) or when its share :math:`n_s / N` of the :math:`N` exported clips
    differs from :math:`t_s` by more than ``tolerance`` (kind ``split-off-ratio``; 10
    percentage points by default).

    Why an absolute 10 points, and no allowance for group sizes: a group-exclusive assignment
    moves whole groups, so a few large groups explain a large deviation, but the person exporting
    still needs to know that their "15 % test" is 37 % — e.g. 70/15/15 over 8 clips in groups of
    3, 3 and 2 can at best be 37/37/25 with every split filled, and that is worth a warning
    precisely because nothing better is possible with those groups. An allowance of one
    group's share would hide exactly that case. Ten points is our choice (there is no fixed
    standard): small enough to catch a split that is a different size in kind, large enough
    that rounding on a few dozen clips stays quiet. The message says how many groups there are
    and how large the largest is, so the reader can tell bad luck from too few groups.

    Parameters
    ----------
    assignment : mapping of clip id to split
    ratios : mapping of split name to target fraction (normalised)
    groups : mapping of clip id to group (None: the clip is its own group)
    tolerance : float
        In fractions of 1 (0.10 = 10 percentage points).

    Returns
    -------
    list of PlanWarning
    """
    n = len(assignment)
    if n == 0:
        return []
    per_split = Counter(assignment.values())
    sizes = Counter(groups.get(c) if groups.get(c) is not None else ("clip", c)
                    for c in assignment)
    largest = max(sizes.values())
    why = (f"{len(sizes)} group{'s' if len(sizes) != 1 else ''} among {n} clips, the largest "
           f"with {largest}")
    out = []
    for split, target in ratios.items():
        if target <= 0:
            continue
        got = per_split.get(split, 0)
        share = got / n
        details = {"split": split, "ratio": round(target, 6), "share": round(share, 6),
                   "clips": got, "of": n, "groups": len(sizes), "largest_group": largest,
                   "tolerance": tolerance}
        if got == 0:
            out.append(PlanWarning("split-empty", f"split {split!r} is empty although its ratio "
                                   f"is {_pct(target)} ({why})", details=details))
        elif abs(share - target) > tolerance + 1e-9:
            out.append(PlanWarning(
                "split-off-ratio",
                f"split {split!r} holds {_pct(share)} of the clips ({got} of {n}) where its ratio "
                f"is {_pct(target)}: {100 * abs(share - target):.0f} points off, more than "
                f"{100 * tolerance:.0f} ({why})", details=details))
    return out


def few_references(counts: Mapping[str, int], wanted: int | None,
                   files: Mapping[str, str], caption_policy: str) -> list[PlanWarning]:
    """Warn when exported clips have fewer reference captions than the guideline's ``wanted``.

    ``counts`` maps each exported clip to the number of reference captions it is exported with.
    A dataset without any caption (labels only) gets no warning; otherwise every clip below
    ``wanted`` is listed in one warning (kind ``few-captions``).
    """
    if not wanted or not any(counts.values()):
        return []
    short = sorted((c for c, k in counts.items() if k < wanted), key=lambda c: files.get(c, c))
    if not short:
        return []
    hint = (" (caption policy 'gold': clips with gold references export only the captions the "
            "lead ticked; 'gold+agreeing' adds the captions of annotators who agree with the "
            "exported label)" if caption_policy == "gold" else "")
    paths = [files.get(c, c) for c in short]
    return [PlanWarning(
        "few-captions",
        f"{len(short)} of {len(counts)} clips have fewer than the {wanted} reference captions "
        f"the guideline asks for: {name_files(paths)}{hint}",
        tuple(short), tuple(paths),
        {"wanted": wanted, "captions": {c: counts[c] for c in short},
         "caption_policy": caption_policy})]
