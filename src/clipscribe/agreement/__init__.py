"""Agreement between annotators: labels, segments and captions. numpy only, no Qt, no database.

Every number comes with its recipe (``.recipe``); see :mod:`clipscribe.agreement._recipe`.
"""

from ._recipe import Recipe, Score
from .alpha import krippendorff_alpha
from .bootstrap import Interval, bootstrap_intervals
from .interpret import band as interpret
from .labels import cohen_kappa, confusion_matrix, fleiss_kappa, observed_agreement

__all__ = [
    "Interval", "Recipe", "Score", "bootstrap_intervals", "cohen_kappa", "confusion_matrix",
    "fleiss_kappa", "interpret", "krippendorff_alpha", "observed_agreement",
]
