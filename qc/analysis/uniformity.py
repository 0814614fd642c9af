"""Uniformity of a reference band over a map, and reproducibility between substrates."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ._validation import as_finite_1d, require_positive
from .errors import AnalysisInputError


@dataclass(frozen=True, eq=False)
class MapUniformity:
    """Spread of one band metric over the points of a map.

    Attributes
    ----------
    n_points : int
    mean, median, standard_deviation : float
        Standard deviation is the sample one (ddof = 1).
    rsd_percent : float
        ``100 · s / mean``.
    fraction_within_tolerance : float
        Share of points with ``|v − median| ≤ tolerance · median``.
    tolerance_fraction : float
        The tolerance used (0.2 means ±20 %).
    heat_map : numpy.ndarray or None
        Values arranged as ``grid_shape`` (row-major, point order of the map) for a heat-map.
    """

    n_points: int
    mean: float
    median: float
    standard_deviation: float
    rsd_percent: float
    fraction_within_tolerance: float
    tolerance_fraction: float
    heat_map: np.ndarray | None


@dataclass(frozen=True)
class Reproducibility:
    """Between- and within-substrate spread from a one-way random-effects ANOVA.

    Attributes
    ----------
    n_substrates, n_total : int
    grand_mean : float
        Mean of all points.
    between_substrate_rsd_percent : float
        RSD (ddof = 1) of the substrate means.
    within_variance, between_variance : float
        Variance components σ²_w = MS_within and σ²_b = max(0, (MS_between − MS_within)/n₀).
    within_rsd_percent, between_rsd_percent, total_rsd_percent : float
        ``100·σ/grand_mean`` for σ_w, σ_b and √(σ²_w + σ²_b).
    f_statistic, p_value : float
        One-way ANOVA test that all substrate means are equal.
    n0 : float
        Effective points per substrate, ``(N − Σ n_i²/N)/(k − 1)``.
    """

    n_substrates: int
    n_total: int
    grand_mean: float
    between_substrate_rsd_percent: float
    within_variance: float
    between_variance: float
    within_rsd_percent: float
    between_rsd_percent: float
    total_rsd_percent: float
    f_statistic: float
    p_value: float
    n0: float


def map_uniformity(
    values,
    *,
    grid_shape: tuple[int, int] | None = None,
    tolerance_fraction: float = 0.2,
) -> MapUniformity:
    """RSD and share of points near the median for a band metric over a map.

    ``RSD % = 100 · s / x̄`` with the sample standard deviation
    ``s = √(Σ (x_i − x̄)² / (n − 1))``; fraction within tolerance
    ``= #{|x_i − median| ≤ t · median} / n``.

    Parameters
    ----------
    values : array_like, shape (n_points,)
        Per-point band height or area (any unit; RSD is unitless).
    grid_shape : (rows, cols), optional
        Map grid, row-major in the order of ``values``; ``rows · cols`` must equal n_points.
    tolerance_fraction : float, default 0.2
        Half-width of the band around the median (0.2 = ±20 %, common practice).

    Returns
    -------
    MapUniformity
    """
    data = as_finite_1d(values, field="values", min_points=2)
    tolerance = require_positive(tolerance_fraction, field="tolerance_fraction")
    mean = float(np.mean(data))
    if mean <= 0:
        raise AnalysisInputError(
            "the mean band intensity is not positive, so an RSD is meaningless", field="values"
        )
    median = float(np.median(data))
    sd = float(np.std(data, ddof=1))
    within = float(np.mean(np.abs(data - median) <= tolerance * abs(median)))
    heat_map = None
    if grid_shape is not None:
        rows, cols = (int(v) for v in grid_shape)
        if rows < 1 or cols < 1 or rows * cols != data.size:
            raise AnalysisInputError(
                f"grid {grid_shape} does not hold {data.size} points", field="grid_shape"
            )
        heat_map = data.reshape(rows, cols)
    return MapUniformity(
        n_points=int(data.size),
        mean=mean,
        median=median,
        standard_deviation=sd,
        rsd_percent=100.0 * sd / mean,
        fraction_within_tolerance=within,
        tolerance_fraction=tolerance,
        heat_map=heat_map,
    )


def batch_reproducibility(groups: Sequence) -> Reproducibility:
    """Between/within-substrate variance components by one-way random-effects ANOVA.

    With k substrates of n_i points each (N in total), group means x̄_i and grand mean x̄:
    ``MS_b = Σ n_i (x̄_i − x̄)² / (k − 1)``, ``MS_w = Σ Σ (x_ij − x̄_i)² / (N − k)``,
    ``n₀ = (N − Σ n_i² / N) / (k − 1)``, ``σ²_w = MS_w``,
    ``σ²_b = max(0, (MS_b − MS_w) / n₀)``.

    Parameters
    ----------
    groups : sequence of array_like
        Per-point band metrics of each substrate of one deposition run or colloid batch.

    Returns
    -------
    Reproducibility

    Notes
    -----
    A negative ANOVA estimate of σ²_b is truncated at zero, the usual practice (Searle et al.
    §3.5). The between-substrate RSD of the substrate means is reported as well because it
    is the figure labs usually quote.

    References
    ----------
    .. [1] Searle, S. R.; Casella, G.; McCulloch, C. E. Variance Components. Wiley, 1992,
       ch. 3 (one-way classification, unbalanced data).
    .. [2] Montgomery, D. C. Design and Analysis of Experiments, 8th ed. Wiley, 2013,
       §3.9 (the random effects model).
    """
    if len(groups) < 2:
        raise AnalysisInputError("needs at least two substrates", field="groups")
    arrays = [as_finite_1d(g, field=f"groups[{i}]", min_points=2) for i, g in enumerate(groups)]
    sizes = np.array([a.size for a in arrays], dtype=float)
    means = np.array([a.mean() for a in arrays])
    k, n_total = len(arrays), float(sizes.sum())
    grand_mean = float(np.concatenate(arrays).mean())
    if grand_mean <= 0:
        raise AnalysisInputError("the grand mean is not positive", field="groups")
    ms_between = float(np.sum(sizes * (means - grand_mean) ** 2) / (k - 1))
    ms_within = float(sum(np.sum((a - a.mean()) ** 2) for a in arrays) / (n_total - k))
    n0 = float((n_total - np.sum(sizes**2) / n_total) / (k - 1))
    between_var = max(0.0, (ms_between - ms_within) / n0)
    f_stat = ms_between / ms_within if ms_within > 0 else float("inf")
    from scipy import stats  # on first use: scipy.stats costs a map worker ~25 MiB at start

    p_value = float(stats.f.sf(f_stat, k - 1, n_total - k))
    return Reproducibility(
        n_substrates=k,
        n_total=int(n_total),
        grand_mean=grand_mean,
        between_substrate_rsd_percent=float(100 * np.std(means, ddof=1) / np.mean(means)),
        within_variance=ms_within,
        between_variance=between_var,
        within_rsd_percent=100 * np.sqrt(ms_within) / grand_mean,
        between_rsd_percent=100 * np.sqrt(between_var) / grand_mean,
        total_rsd_percent=100 * np.sqrt(ms_within + between_var) / grand_mean,
        f_statistic=float(f_stat),
        p_value=p_value,
        n0=n0,
    )
