"""Agreement between annotators: labels, segments and captions. numpy only, no Qt, no database.

Every number comes with its recipe (``.recipe``); see :mod:`clipscribe.agreement._recipe`.
Verbal bands follow Landis & Koch (1977), :mod:`clipscribe.agreement.interpret`.

Why written here rather than imported: the statistics libraries that compute these numbers are
test-only dependencies of clipscribe (the tests check every metric against them), and the report
needs what they do not offer: per-clip sufficient statistics shared by the point value and a
vectorised clip bootstrap, n-gram counts shared by all leave-one-out BLEU scores, and a recipe
on every number.
"""

from ._recipe import Recipe, Score
from .alpha import bootstrap_alpha, krippendorff_alpha, per_label_alpha
from .bleu import BleuScore, corpus_bleu, sentence_bleu
from .bootstrap import Interval, bootstrap_intervals
from .captions import tokenize_13a
from .chrf import ChrfScore, corpus_chrf
from .cider import CiderResult, cider_d
from .interpret import band as interpret
from .labels import (cohen_kappa, confusion_matrix, fleiss_kappa, observed_agreement,
                     pairwise_kappa)
from .loo import LooBleu, leave_one_out_bleu
from .loo_overlap import LooOverlap, leave_one_out_chrf, leave_one_out_rouge_l
from .reliability import CheckResult, ReliabilitySummary, reliability_summary
from .proportion import Proportion, proportion, wilson_interval
from .report import AgreementReport, CaptionPart, agreement_report, caption_part
from .retrieval import RetrievalResult, caption_retrieval
from .rouge import RougeScore, rouge_l
from .segments import frame_agreement, match_segments, segment_matching, temporal_iou
from .truth import InferredLabels, dawid_skene

__all__ = [
    "AgreementReport", "BleuScore", "bootstrap_alpha", "pairwise_kappa", "per_label_alpha", "CiderResult", "Interval", "LooBleu", "Recipe",
    "RetrievalResult", "Score", "agreement_report", "bootstrap_intervals", "caption_retrieval",
    "cider_d", "cohen_kappa", "confusion_matrix", "corpus_bleu", "fleiss_kappa",
    "frame_agreement", "interpret", "krippendorff_alpha", "leave_one_out_bleu", "match_segments",
    "observed_agreement", "segment_matching", "sentence_bleu", "temporal_iou", "tokenize_13a",
    "ChrfScore", "InferredLabels", "LooOverlap", "Proportion", "RougeScore", "corpus_chrf",
    "dawid_skene", "leave_one_out_chrf", "leave_one_out_rouge_l", "proportion", "rouge_l",
    "wilson_interval", "CheckResult", "ReliabilitySummary", "reliability_summary",
    "CaptionPart", "caption_part",
]
