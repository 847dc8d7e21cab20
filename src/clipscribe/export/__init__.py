"""Dataset export: label policy, group-exclusive stratified splits, leakage checks, writers.

No Qt and no database: the project façade feeds plain :class:`ClipInput` objects in.

>>> from clipscribe.export import assign_splits
>>> a = assign_splits([("1", "p1", "run"), ("2", "p1", "run"), ("3", "p2", "sit")],
...                   {"train": 0.5, "test": 0.5})
>>> a["1"] == a["2"]
True
"""

from ..schema.export import ExportManifest, ExportRecord, export_schemas
from .inputs import CaptionInput, ClipInput, SegmentInput
from .leakage import Finding, LeakageReport, check_leakage
from .neardup import near_clusters, near_pairs, near_pairs_brute
from .plan import (
    ExportBlocked, ExportCancelled, ExportError, ExportPlan, Override, build_plan,
)
from .policy import (
    CaptionChoice, LabelDecision, LabelPolicy, apply_policy, decide_captions, decide_inferred,
    decide_label,
)
from .splits import SplitResult, assign_folds, assign_splits, normalise_ratios, split_clips
from .textdup import caption_clusters, normalise_caption
from .writers import remove_stale_partials, write_export

__all__ = [
    "CaptionInput", "ClipInput", "SegmentInput",
    "LabelPolicy", "LabelDecision", "CaptionChoice", "decide_label", "decide_captions",
    "decide_inferred", "apply_policy",
    "SplitResult", "assign_splits", "assign_folds", "split_clips", "normalise_ratios",
    "Finding", "LeakageReport", "check_leakage", "near_pairs", "near_pairs_brute", "near_clusters",
    "normalise_caption", "caption_clusters",
    "ExportPlan", "Override", "build_plan", "ExportError", "ExportBlocked", "ExportCancelled",
    "write_export", "remove_stale_partials", "ExportRecord", "ExportManifest", "export_schemas",
]
