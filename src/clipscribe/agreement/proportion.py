r"""Confidence interval of a proportion (e.g. an annotator's accuracy on check clips).

Wilson, E.B. (1927). Probable inference, the law of succession, and statistical inference.
Journal of the American Statistical Association 22(158):209-212.
https://doi.org/10.1080/01621459.1927.10502953
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from statistics import NormalDist

import numpy as np

from . import _checks
from ._recipe import Recipe

WILSON_1927 = ("Wilson, E.B. (1927). Probable inference, the law of succession, and "
               "statistical inference. JASA 22(158):209-212. doi:10.1080/01621459.1927.10502953")


def wilson_interval(successes, trials, *, level: float = 0.95) -> tuple:
    r"""Wilson score interval of a proportion: ``(low, high)``, arrays or floats.

    Parameters
    ----------
    successes, trials : int or array_like of int
        Counts; ``0 <= successes <= trials``. With ``trials == 0`` the interval is
        ``(nan, nan)`` (nothing observed).
    level : float
        Confidence level, default 0.95.

    Notes
    -----
    With :math:`\hat p = x/n` and :math:`z` the :math:`1 - (1-\text{level})/2` normal quantile,

    .. math:: \frac{\hat p + \frac{z^2}{2n}}{1 + \frac{z^2}{n}} \pm
              \frac{z}{1 + \frac{z^2}{n}} \sqrt{\frac{\hat p (1-\hat p)}{n} + \frac{z^2}{4n^2}}

    clipped to [0, 1]. Unlike the normal-approximation interval it stays inside [0, 1] and is
    not empty at 0 % or 100 %. Wilson (1927), JASA 22(158):209-212,
    https://doi.org/10.1080/01621459.1927.10502953

    Examples
    --------
    >>> [round(x, 4) for x in wilson_interval(8, 10)]
    [0.4902, 0.9433]
    """
    level = _checks.probability("level", level)
    x = np.asarray(successes, dtype=np.float64)
    n = np.asarray(trials, dtype=np.float64)
    if np.any(x < 0) or np.any(x > n) or np.any(x != np.round(x)) or np.any(n != np.round(n)):
        raise ValueError("successes and trials must be whole counts with 0 <= successes <= trials")
    z = NormalDist().inv_cdf(1.0 - (1.0 - level) / 2.0)
    z2 = z * z
    with np.errstate(divide="ignore", invalid="ignore"):
        p = x / n
        denom = 1.0 + z2 / n
        center = (p + z2 / (2.0 * n)) / denom
        half = z * np.sqrt(p * (1.0 - p) / n + z2 / (4.0 * n * n)) / denom
    low, high = np.clip(center - half, 0.0, 1.0), np.clip(center + half, 0.0, 1.0)
    if low.ndim == 0:
        return float(low), float(high)
    return low, high


@dataclass(frozen=True)
class Proportion:
    """A share (e.g. accuracy on check clips) with its Wilson interval and recipe."""

    successes: int
    trials: int
    low: float
    high: float
    level: float
    recipe: Recipe = field(compare=False)

    @property
    def value(self) -> float:
        return self.successes / self.trials if self.trials else math.nan

    def to_dict(self) -> dict:
        def f(x):
            return None if math.isnan(x) else float(x)
        return {"value": f(self.value), "successes": self.successes, "trials": self.trials,
                "low": f(self.low), "high": f(self.high), "level": self.level,
                "interval": "wilson", "recipe": self.recipe.to_dict()}


def proportion(successes: int, trials: int, *, level: float = 0.95, what: str = "accuracy",
               **recipe_options) -> Proportion:
    """``successes / trials`` with its Wilson interval (:func:`wilson_interval`)."""
    low, high = wilson_interval(successes, trials, level=level)
    recipe = Recipe.make("proportion", what, interval="wilson", level=level, n_items=trials,
                         **recipe_options)
    return Proportion(int(successes), int(trials), low, high, level, recipe)
