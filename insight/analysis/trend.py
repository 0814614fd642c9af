"""A smooth trend of an outcome against a setting, with a pointwise confidence band.

The curve is statsmodels' LOWESS.  Its band is hand-written because statsmodels gives no
standard error for LOWESS: a local linear fit is a linear smoother, ``ŷ(g) = Σ lᵢ(g)·yᵢ``, so
``Var ŷ(g) = σ²·Σ lᵢ(g)²``; the weights lᵢ are rebuilt here (tricube over the k nearest
points, as statsmodels does — a test checks ``l·y`` reproduces its curve) and σ² comes from
Rice's difference estimator.  Analytic rather than bootstrap: 5,000 points take
milliseconds instead of seconds.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats
from statsmodels.nonparametric.smoothers_lowess import lowess

from .errors import MIN_PER_GROUP, NotEnoughData

GRID_POINTS = 40


@dataclass(frozen=True, eq=False)
class Trend:
    """LOWESS curve on ``grid`` with a pointwise band (``low``, ``high``)."""

    grid: np.ndarray
    fit: np.ndarray
    low: np.ndarray
    high: np.ndarray
    n: int


def lowess_weights(x: np.ndarray, grid: np.ndarray, frac: float) -> np.ndarray:
    """Rows ``l(g)`` with ``ŷ(g) = l(g)·y`` for a local linear fit with tricube weights.

    References
    ----------
    .. [1] Cleveland, W. S. Robust locally weighted regression and smoothing scatterplots.
       J. Am. Stat. Assoc. 1979, 74, 829–836.
    """
    k = min(x.size, max(2, int(np.ceil(frac * x.size))))
    offset = x[None, :] - grid[:, None]
    distance = np.abs(offset)
    radius = np.partition(distance, k - 1, axis=1)[:, k - 1]
    weights = np.clip(1 - (distance / np.where(radius > 0, radius, 1.0)[:, None]) ** 3,
                      0, None) ** 3
    s0, s1 = weights.sum(1), (weights * offset).sum(1)
    s2 = (weights * offset**2).sum(1)
    return weights * (s2[:, None] - s1[:, None] * offset) / (s0 * s2 - s1**2)[:, None]


def rice_variance(x: np.ndarray, y: np.ndarray) -> float:
    """Noise variance from successive differences of y ordered by x.

    ``σ̂² = Σ (y₍ᵢ₊₁₎ − y₍ᵢ₎)² / (2(n − 1))``.

    References
    ----------
    .. [1] Rice, J. Bandwidth choice for nonparametric regression. Ann. Stat. 1984, 12,
       1215–1230.
    """
    ordered = y[np.argsort(x, kind="stable")]
    return float(np.sum(np.diff(ordered) ** 2) / (2 * (ordered.size - 1)))


def lowess_trend(x, y, *, frac: float = 0.5, confidence: float = 0.95) -> Trend:
    """LOWESS trend of ``y`` on ``x`` with its pointwise confidence band.

    Parameters
    ----------
    x, y : array_like
        Setting (any unit) and outcome, same length; pairs with a non-finite value are left out.
    frac : float
        Fraction of the points in each local fit.
    confidence : float
        Two-sided level of the band (normal quantile; the band shows the curve's
        variability, not its bias).

    Returns
    -------
    Trend

    References
    ----------
    .. [1] Cleveland, W. S. J. Am. Stat. Assoc. 1979, 74, 829–836 (statsmodels ``lowess``).
    .. [2] Cleveland, W. S.; Devlin, S. J. Locally weighted regression: an approach to
       regression analysis by local fitting. J. Am. Stat. Assoc. 1988, 83, 596–610
       (variance of the local fit as a linear smoother).
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    keep = np.isfinite(x) & np.isfinite(y)
    x, y = x[keep], y[keep]
    if x.size < MIN_PER_GROUP:
        raise NotEnoughData(f"{x.size} substrates with both values (need {MIN_PER_GROUP})",
                            field="x")
    if np.ptp(x) == 0:
        raise NotEnoughData("the setting never varies", field="x")
    grid = np.linspace(x.min(), x.max(), GRID_POINTS)
    fit = lowess(y, x, frac=frac, it=0, xvals=grid)
    spread = np.sqrt(rice_variance(x, y) * np.sum(lowess_weights(x, grid, frac) ** 2, axis=1))
    z = stats.norm.ppf(0.5 + confidence / 2)
    return Trend(grid=grid, fit=fit, low=fit - z * spread, high=fit + z * spread, n=int(x.size))
