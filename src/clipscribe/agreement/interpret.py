"""Verbal bands for chance-corrected agreement (kappa, alpha), as shown to users.

Source: Landis, J.R. & Koch, G.G. (1977). The measurement of observer agreement for categorical
data. Biometrics 33(1):159-174. https://doi.org/10.2307/2529310

The bands are the authors' own "benchmarks" and were offered as a convention, not a test; a value
is shown with its band and its confidence interval, never the band alone.
"""

from __future__ import annotations

import math

CITATION = ("Landis, J.R. & Koch, G.G. (1977). The measurement of observer agreement for "
            "categorical data. Biometrics 33(1):159-174. doi:10.2307/2529310")

#: (upper bound inclusive, band) in increasing order; below 0 is "poor".
BANDS: tuple[tuple[float, str], ...] = (
    (0.20, "slight"),
    (0.40, "fair"),
    (0.60, "moderate"),
    (0.80, "substantial"),
    (1.00, "almost perfect"),
)


def band(value: float) -> str:
    """Landis & Koch band of a kappa-like value.

    ``< 0`` "poor"; ``0-0.20`` "slight"; ``0.21-0.40`` "fair"; ``0.41-0.60`` "moderate";
    ``0.61-0.80`` "substantial"; ``0.81-1.00`` "almost perfect". Values between the printed
    two-decimal edges go to the upper band: each edge is the inclusive top of its band, so 0.20
    is "slight" and 0.205 is "fair".
    NaN gives ``"undefined"``.

    Examples
    --------
    >>> band(0.21), band(0.61), band(-0.1)
    ('fair', 'substantial', 'poor')
    """
    v = float(value)
    if math.isnan(v):
        return "undefined"
    if v < 0:
        return "poor"
    for upper, name in BANDS:
        if v <= upper + 1e-12:
            return name
    return "almost perfect"
