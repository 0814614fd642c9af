"""A smooth trend of an outcome against a setting, with a bootstrap confidence band."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from statsmodels.nonparametric.smoothers_lowess import lowess

from .errors import MIN_PER_GROUP, NotEnoughData

GRID_POINTS = 40
BOOTSTRAP_RESAMPLES = 200


@dataclass(frozen=True, eq=False)
class Trend:
    """LOWESS curve on ``grid`` with a pointwise percentile band (``low``, ``high``)."""

    grid: np.ndarray
    fit: np.ndarray
    low: np.ndarray
    high: np.ndarray
    n: int


def lowess_trend(x, y, *, frac: float = 0.5, confidence: float = 0.95,
                 resamples: int = BOOTSTRAP_RESAMPLES, seed: int = 0) -> Trend:
    """LOWESS trend of ``y`` on ``x`` with a nonparametric bootstrap band.

    The curve is the locally weighted linear fit (tricube weights, no robustness
    iterations) evaluated on an even grid over the observed range; the band is the
    percentile interval of the same fit over ``resamples`` case-resamples of (x, y).

    Parameters
    ----------
    x, y : array_like
        Setting (any unit) and outcome, same length; pairs with a non-finite value are left out.
    frac : float
        Fraction of the points in each local fit.
    confidence : float
        Two-sided level of the band.
    resamples : int
        Bootstrap resamples (fixed ``seed``: the same data always draw the same band).

    Returns
    -------
    Trend

    References
    ----------
    .. [1] Cleveland, W. S. Robust locally weighted regression and smoothing scatterplots.
       J. Am. Stat. Assoc. 1979, 74, 829–836 (statsmodels ``lowess``).
    .. [2] Efron, B.; Tibshirani, R. J. An Introduction to the Bootstrap. Chapman & Hall,
       1993, ch. 13 (percentile intervals).
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
    rng = np.random.default_rng(seed)
    curves = np.empty((resamples, grid.size))
    for i in range(resamples):
        pick = rng.integers(0, x.size, x.size)
        curves[i] = lowess(y[pick], x[pick], frac=frac, it=0, xvals=grid)
    tail = (1 - confidence) / 2 * 100
    low, high = np.nanpercentile(curves, [tail, 100 - tail], axis=0)
    return Trend(grid=grid, fit=fit, low=low, high=high, n=int(x.size))
