"""Individuals and moving-range control charts with run rules, for trends of QC results
(log10 enhancement factor, RSD %) per product kind.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._validation import as_finite_1d
from .errors import AnalysisInputError

#: Control-chart constants for moving ranges of span 2 (standard SPC tables).
D2_SPAN2 = 1.128
D3_SPAN2 = 0.0
D4_SPAN2 = 3.267

#: Rule code → sentence (the project's own wording).
RULE_SENTENCES = {
    "beyond-3-sigma": "the point lies outside the control limits (beyond 3 sigma)",
    "two-of-three-past-2-sigma": "two of the last three points lie beyond 2 sigma on one side",
    "four-of-five-past-1-sigma": "four of the last five points lie beyond 1 sigma on one side",
    "eight-on-one-side": "eight points in a row lie on one side of the centre line",
    "six-steady-trend": "six points in a row keep rising or keep falling",
    "fourteen-alternating": "fourteen points in a row alternate up and down",
    "fifteen-near-centre": "fifteen points in a row stay within 1 sigma of the centre line",
    "eight-avoiding-centre": "eight points in a row lie beyond 1 sigma, on either side",
    "moving-range-above-limit": "the jump from the previous point exceeds the moving-range limit",
}
#: The four zone rules of the Western Electric Statistical Quality Control Handbook (1956).
WESTERN_ELECTRIC_RULES = (
    "beyond-3-sigma",
    "two-of-three-past-2-sigma",
    "four-of-five-past-1-sigma",
    "eight-on-one-side",
)
#: Further tests of Nelson (1984), used with ``rules=ALL_RULES``.
NELSON_EXTRA_RULES = (
    "six-steady-trend",
    "fourteen-alternating",
    "fifteen-near-centre",
    "eight-avoiding-centre",
)
ALL_RULES = WESTERN_ELECTRIC_RULES + NELSON_EXTRA_RULES + ("moving-range-above-limit",)


@dataclass(frozen=True)
class RuleViolation:
    """A run-rule signal: the index of the point that completes it, a code and a sentence."""

    index: int
    rule: str
    message: str


@dataclass(frozen=True, eq=False)
class IndividualsChart:
    """Individuals (X) and moving-range (MR) chart.

    Attributes
    ----------
    values : numpy.ndarray
        The plotted values, in time order.
    moving_ranges : numpy.ndarray
        ``|x_i − x_{i−1}|`` (length n − 1).
    centre, sigma : float
        Centre line ``x̄`` and the short-term estimate ``σ̂ = MR̄ / d2``.
    lower_limit, upper_limit : float
        ``x̄ ∓ 3·MR̄/d2``.
    mr_centre, mr_upper_limit : float
        ``MR̄`` and ``D4·MR̄`` (the MR lower limit is D3·MR̄ = 0).
    baseline_count : int
        Number of leading points used to set the limits.
    violations : tuple of RuleViolation
    """

    values: np.ndarray
    moving_ranges: np.ndarray
    centre: float
    sigma: float
    lower_limit: float
    upper_limit: float
    mr_centre: float
    mr_upper_limit: float
    baseline_count: int
    violations: tuple[RuleViolation, ...]


def individuals_chart(
    values,
    *,
    baseline_count: int | None = None,
    rules: tuple[str, ...] = WESTERN_ELECTRIC_RULES + ("moving-range-above-limit",),
    report_from: int = 0,
) -> IndividualsChart:
    """Individuals and moving-range chart with run rules.

    ``MR_i = |x_i − x_{i−1}|``, ``MR̄`` their mean, ``σ̂ = MR̄/d2`` with d2 = 1.128;
    limits ``x̄ ± 3σ̂ = x̄ ± 2.66·MR̄``; MR chart upper limit ``D4·MR̄`` with D4 = 3.267.

    Parameters
    ----------
    values : array_like
        Results in time order (e.g. log10 EF, or RSD %), at least 3.
    baseline_count : int, optional
        Use only the first ``baseline_count`` points (≥ 3) to set centre and limits
        (phase I); all points by default. Rules are applied to every point.
    rules : tuple of str
        Rule codes from :data:`ALL_RULES`.
    report_from : int
        Report only the signals completed at this index or later (a phase II chart whose
        baseline signals are of no interest); the limits and rules are unchanged.

    Returns
    -------
    IndividualsChart

    References
    ----------
    .. [1] Montgomery, D. C. Introduction to Statistical Quality Control, 7th ed. Wiley,
       2012, §6.4 (individuals and moving-range charts) and Appendix VI (d2, D3, D4).
    .. [2] ASTM E2587, Standard Practice for Use of Control Charts in Statistical Process
       Control. ASTM International.
    .. [3] Western Electric Co. Statistical Quality Control Handbook, 1956 (zone rules).
    .. [4] Nelson, L. S. The Shewhart control chart — tests for special causes. Journal of
       Quality Technology 1984, 16, 237–239.
    """
    data = as_finite_1d(values, field="values", min_points=3)
    count = data.size if baseline_count is None else int(baseline_count)
    if baseline_count is not None and (count != baseline_count or not 3 <= count <= data.size):
        raise AnalysisInputError(
            f"must be a whole number between 3 and {data.size}", field="baseline_count"
        )
    unknown = [r for r in rules if r not in RULE_SENTENCES]
    if unknown:
        raise AnalysisInputError(f"unknown rule code(s) {unknown}", field="rules")
    if not 0 <= report_from <= data.size:
        raise AnalysisInputError(f"must be between 0 and {data.size}", field="report_from")
    moving = np.abs(np.diff(data))
    centre = float(data[:count].mean())
    mr_bar = float(moving[: count - 1].mean())
    sigma = mr_bar / D2_SPAN2
    chart_violations = _run_rules(data, moving, centre, sigma, D4_SPAN2 * mr_bar, rules,
                                  report_from)
    return IndividualsChart(
        values=data,
        moving_ranges=moving,
        centre=centre,
        sigma=sigma,
        lower_limit=centre - 3 * sigma,
        upper_limit=centre + 3 * sigma,
        mr_centre=mr_bar,
        mr_upper_limit=D4_SPAN2 * mr_bar,
        baseline_count=count,
        violations=chart_violations,
    )


def _window_hits(flags: np.ndarray, length: int, needed: int) -> np.ndarray:
    """Indices i where at least ``needed`` of flags[i-length+1 .. i] are true.

    Window counts as differences of one running sum: O(n) whatever the window length (the
    drift check charts thousands of points for every lot)."""
    if flags.size < length:
        return np.array([], dtype=int)
    running = np.concatenate(([0], np.cumsum(flags, dtype=np.int64)))
    counts = running[length:] - running[:-length]
    return np.flatnonzero(counts >= needed) + length - 1


def _run_rules(data, moving, centre, sigma, mr_limit, rules,
               report_from: int = 0) -> tuple[RuleViolation, ...]:
    z = (data - centre) / sigma if sigma > 0 else np.zeros_like(data)
    hits: dict[str, np.ndarray] = {}
    if "beyond-3-sigma" in rules:
        hits["beyond-3-sigma"] = np.flatnonzero(np.abs(z) > 3)
    if "two-of-three-past-2-sigma" in rules:
        hits["two-of-three-past-2-sigma"] = np.union1d(
            _window_hits(z > 2, 3, 2), _window_hits(z < -2, 3, 2)
        )
    if "four-of-five-past-1-sigma" in rules:
        hits["four-of-five-past-1-sigma"] = np.union1d(
            _window_hits(z > 1, 5, 4), _window_hits(z < -1, 5, 4)
        )
    if "eight-on-one-side" in rules:
        hits["eight-on-one-side"] = np.union1d(_window_hits(z > 0, 8, 8), _window_hits(z < 0, 8, 8))
    steps = np.sign(np.diff(data))
    if "six-steady-trend" in rules:  # six points = five steps of one sign
        rising, falling = _window_hits(steps > 0, 5, 5), _window_hits(steps < 0, 5, 5)
        hits["six-steady-trend"] = np.union1d(rising, falling) + 1
    if "fourteen-alternating" in rules:  # fourteen points = thirteen alternating steps
        alternation = (steps[1:] * steps[:-1]) < 0
        hits["fourteen-alternating"] = _window_hits(alternation, 12, 12) + 2
    if "fifteen-near-centre" in rules:
        hits["fifteen-near-centre"] = _window_hits(np.abs(z) < 1, 15, 15)
    if "eight-avoiding-centre" in rules:
        hits["eight-avoiding-centre"] = _window_hits(np.abs(z) > 1, 8, 8)
    if "moving-range-above-limit" in rules:
        hits["moving-range-above-limit"] = np.flatnonzero(moving > mr_limit) + 1
    found = [
        RuleViolation(int(i), rule, RULE_SENTENCES[rule])
        for rule, at in hits.items()
        for i in at[at >= report_from]
    ]
    return tuple(sorted(found, key=lambda v: (v.index, ALL_RULES.index(v.rule))))
