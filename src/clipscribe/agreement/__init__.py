"""Agreement between annotators: labels, segments and captions. numpy only, no Qt, no database.

Every number comes with its recipe (``.recipe``); see :mod:`clipscribe.agreement._recipe`.
"""

from ._recipe import Recipe, Score
from .alpha import krippendorff_alpha
from .bleu import BleuScore, corpus_bleu, sentence_bleu
from .bootstrap import Interval, bootstrap_intervals
from .captions import tokenize_13a
from .interpret import band as interpret
from .labels import cohen_kappa, confusion_matrix, fleiss_kappa, observed_agreement
from .loo import LooBleu, leave_one_out_bleu

__all__ = [
    "BleuScore", "Interval", "LooBleu", "Recipe", "Score", "bootstrap_intervals", "cohen_kappa",
    "confusion_matrix", "corpus_bleu", "fleiss_kappa", "interpret", "krippendorff_alpha",
    "leave_one_out_bleu", "observed_agreement", "sentence_bleu", "tokenize_13a",
]
