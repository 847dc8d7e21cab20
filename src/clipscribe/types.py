"""The plain result types the façade hands out: what the UI, the CLI and scripts read.

Frozen dataclasses with no behaviour beyond a few derived properties; no database, no Qt. Import
them from here (``from clipscribe.types import QueueRow``), never from the façade's private
modules.
"""

from __future__ import annotations

import datetime as dt
import enum
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # the agreement package (numpy) loads only where a recipe is made
    from .agreement._recipe import Recipe

#: how a clip reference may be given wherever the API takes a clip: its id, ``str(id)``, or the
#: media path relative to the media root
ClipRef = int | str

class Role(str, enum.Enum):
    """What a person may do in a project."""
    ANNOTATOR = "annotator"
    LEAD = "lead"


class ClipState(str, enum.Enum):
    """Where a clip stands for the whole team (stored in ``clips.state``)."""
    NEW = "new"
    IN_PROGRESS = "in_progress"
    DONE = "done"
    SETTLED = "settled"


class AssignmentState(str, enum.Enum):
    """Where one person stands on one clip (stored in ``assignments.state``)."""
    OPEN = "open"
    SUBMITTED = "submitted"
    SKIPPED = "skipped"
    UNSURE = "unsure"
    EXPIRED = "expired"


#: a pause between two edits longer than this is not counted as working time (our choice)
IDLE_SECONDS = 300.0

#: the group key of a clip is the folder it lies in, relative to the media root (clips directly
#: in the media root get none); the default of ``add_media`` from the CLI and the setup dialog
BY_FOLDER = r"^(?P<group>.+)/[^/]+$"

@dataclass(frozen=True, slots=True)
class SegmentInfo:
    """One annotator's segment. ``label`` is None while the segment is unlabelled (marked
    before its annotator chose the clip's label); never the word "unlabelled", which is only
    how screens show it."""
    id: int
    clip: int
    annotator: str
    label: str | None
    start: int
    end: int  # exclusive


@dataclass(frozen=True, slots=True)
class CaptionInfo:
    id: int
    clip: int
    annotator: str
    position: int
    text: str
    segment: int | None


@dataclass(frozen=True, slots=True)
class LabelInfo:
    id: int
    name: str
    key: str | None
    colour: str
    guideline: str
    position: int


@dataclass(frozen=True, slots=True)
class AnnotatorInfo:
    id: int
    name: str
    role: str


@dataclass(frozen=True, slots=True)
class ClipInfo:
    id: int
    path: str
    sha256: str
    fps: float
    frame_count: int
    duration: float
    width: int
    height: int
    group: str | None
    source: str | None
    licence: str | None
    consent: bool | None
    state: str
    fingerprint: int | None


@dataclass
class IngestReport:
    added: list[int] = field(default_factory=list)
    already_present: list[str] = field(default_factory=list)
    skipped: list[tuple[str, str]] = field(default_factory=list)  # (path, reason)
    #: (added path, path of the clip already holding the same bytes): exact copies, added
    #: anyway (a copy may be meant) but worth a look, since a copy in two splits is leakage
    duplicates: list[tuple[str, str]] = field(default_factory=list)

    def warnings(self) -> list[str]:
        """One line per thing worth a look: each exact duplicate, naming both files."""
        return [duplicate_warning(new, old) for new, old in self.duplicates]


@dataclass
class ComputeReport:
    """What a run of :meth:`Project.compute` did.

    ``computed``: clips whose missing work all succeeded, by kind the number of clips that
    kind was computed for; ``already_done``: clips that needed nothing; ``failed``: (media
    path, reason) per clip with a kind that failed. ``seconds`` is the whole run and
    ``write_seconds`` the part spent writing to the project database."""

    what: tuple[str, ...]
    ran_on: str = ""
    clips: int = 0
    computed: int = 0
    already_done: int = 0
    by_kind: dict[str, int] = field(default_factory=dict)
    failed: list[tuple[str, str]] = field(default_factory=list)
    seconds: float = 0.0
    write_seconds: float = 0.0

    @property
    def ok(self) -> bool:
        return not self.failed


def duplicate_warning(new: str, old: str) -> str:
    return f"{new}: same content (SHA-256) as {old}, already in the project"


def clip_state_word(state: str) -> str:
    """The word people see for a clip's stored state: a clip nobody has started is "open", as
    in the workbench (stored as "new")."""
    return {"new": "open", "in_progress": "in progress"}.get(state, state)


@dataclass(frozen=True, slots=True)
class EditInfo:
    id: int
    at: dt.datetime
    who: str | None
    action: str
    entity: str
    entity_id: int | None
    clip: int | None
    before: dict | None
    after: dict | None
    reverts: int | None


@dataclass(frozen=True, slots=True)
class DisputedClip:
    """One row of the review queue (NaN where there is nothing to measure)."""

    rank: int
    clip: int
    path: str
    group: str | None
    label_disagreement: float
    segment_f1: float
    caption_bleu: float
    caption_cider: float
    labels: dict[str, str]
    gold_label: str | None
    skipped: dict[str, str] = field(default_factory=dict)  # annotator -> reason
    unsure: dict[str, str] = field(default_factory=dict)   # annotator -> note ("" none)
    inferred_label: str | None = None   # the most probable true label (Dawid-Skene), if inferred
    certainty: float = float("nan")     # its posterior probability (NaN when not inferred)

    @property
    def settled(self) -> bool:
        return self.gold_label is not None


@dataclass(frozen=True, slots=True)
class DisputedOrder:
    """The review queue's order without its rows: clip ids, queue order, and each one's rank
    (as :attr:`DisputedClip.rank`). ``provisional``: ordered by label disagreement alone,
    before the agreement report was ready. Rows come page by page from
    :meth:`clipscribe.Project.review_rows`."""

    clips: tuple[int, ...]
    ranks: tuple[int, ...]
    provisional: bool = False
    rank_by: str = "disputed"

    def __len__(self) -> int:
        return len(self.clips)


@dataclass(frozen=True, slots=True)
class GoldCaptionInfo:
    id: int
    position: int
    text: str
    source: int | None  # the annotator caption it came from, if any


@dataclass(frozen=True)
class ClipComparison:
    """Everything the annotators said about one clip, and the lead's gold so far."""

    clip: ClipInfo
    annotators: list[str]
    labels: dict[str, str]
    segments: dict[str, list[SegmentInfo]]
    captions: dict[str, list[CaptionInfo]]
    gold_label: str | None
    gold_segments: list[tuple[str, int, int]]
    gold_captions: list[GoldCaptionInfo]
    comments: list[tuple[int, str | None, str, str]]
    scores: dict[str, float] = field(default_factory=dict)
    skipped: dict[str, str] = field(default_factory=dict)  # annotator -> reason
    unsure: dict[str, str] = field(default_factory=dict)   # annotator -> note ("" none)
    posterior: dict[str, float] = field(default_factory=dict)  # label -> inferred probability


@dataclass(frozen=True, slots=True)
class Throughput:
    """Clips per hour of working time, from the edit history."""

    annotator: str
    clips: int
    edits: int
    active_seconds: float
    clips_per_hour: float   # NaN when no working time was measured
    recipe: Recipe


@dataclass(frozen=True, slots=True)
class TrendPoint:
    """Label agreement over one window of clips (ordered by when their labels were set), or
    over the clips last labelled in one ISO week (``period`` "2026-W49"; "" for windows)."""

    window: int
    first: dt.datetime
    last: dt.datetime
    clips: list[int]
    alpha: float
    recipe: Recipe
    period: str = ""


@dataclass(frozen=True, slots=True)
class QueueRow:
    """One line of an annotator's clip queue."""
    clip: ClipInfo
    my_state: str          # open / submitted / skipped / unsure ("open" when never touched)
    my_label: str | None   # the person's own clip label, if any


@dataclass(frozen=True, slots=True)
class OthersWork:
    """The other annotators' work on one clip, for reading only (empty in blind mode)."""
    labels: list[tuple[str, str]]    # (annotator, label), by annotator name
    captions: list[CaptionInfo]      # by annotator, then position
    segments: list[SegmentInfo]      # by annotator, then start frame

    @property
    def empty(self) -> bool:
        return not (self.labels or self.captions or self.segments)


@dataclass(frozen=True, slots=True)
class CommentNote:
    """A lead's comment addressed to one annotator on one clip, as that annotator sees it."""
    id: int
    clip: int
    lead: str
    text: str
    at: dt.datetime
    unread: bool


@dataclass(frozen=True, slots=True)
class AssignmentPlan:
    """How many people each clip gets, and the recipe that chose the overlapped clips."""
    clips: int
    overlapped: int
    per_clip: int
    overlap: float
    overlap_count: int
    seed: int

    def recipe(self) -> dict[str, Any]:
        return {"clips": self.clips, "overlapped": self.overlapped, "per_clip": self.per_clip,
                "overlap": self.overlap, "overlap_count": self.overlap_count, "seed": self.seed,
                "selection": "numpy default_rng(seed).permutation over clip ids, first "
                             "floor(overlap * clips + 0.5)"}


@dataclass(frozen=True, slots=True)
class TableCheck:
    table: str
    rows_here: int
    rows_there: int
    sha256_here: str
    sha256_there: str

    @property
    def ok(self) -> bool:
        return self.rows_here == self.rows_there and self.sha256_here == self.sha256_there


@dataclass
class MoveReport:
    url: str
    tables: list[TableCheck] = field(default_factory=list)
    sequences: dict[str, int] = field(default_factory=dict)  # table -> next id
    lead: str | None = None

    @property
    def ok(self) -> bool:
        return all(t.ok for t in self.tables)

