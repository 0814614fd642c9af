"""Drift of QC results per lot and per month, judged by the project's control-chart run rules.

The rules and the chart are ``qc.analysis.control_charts.individuals_chart`` (Montgomery;
Western Electric 1956; Nelson 1984); nothing is re-implemented here.  A lot is judged as
phase II against the other lots: the others, in time order, set the centre line and σ̂
(``baseline_count``), and the rules are read only at the lot's own points.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from qc.analysis.control_charts import individuals_chart

from .errors import MIN_PER_GROUP


@dataclass(frozen=True)
class DriftFinding:
    """Run-rule signals at one lot's (or month's) points."""

    key: str
    metric: str
    n: int
    signals: int
    rules: tuple[str, ...]
    mean: float
    centre: float
    sigma: float
    lower_limit: float
    upper_limit: float
    evidence: tuple[str, ...]  # the rule sentences, with the substrate that completed each

    def as_dict(self) -> dict:
        return {"key": self.key, "metric": self.metric, "n": self.n, "signals": self.signals,
                "rules": list(self.rules), "mean": self.mean, "centre": self.centre,
                "sigma": self.sigma,
                "lower_limit": self.lower_limit, "upper_limit": self.upper_limit,
                "evidence": list(self.evidence)}


def drift_by(frame: pd.DataFrame, *, key: str, metric: str, order: str = "made_on",
             label: str = "substrate_code", min_signals: int = 3,
             min_signal_fraction: float = 0.1,
             min_n: int = MIN_PER_GROUP) -> list[DriftFinding]:
    """Lots (or months) of ``key`` whose points break the run rules against the rest.

    Parameters
    ----------
    frame : pandas.DataFrame
        One row per substrate with ``key``, ``metric``, ``order`` and ``label`` columns.
    min_signals, min_signal_fraction : int, float
        Signals needed before a group is reported: at least ``min_signals`` and at least
        this fraction of its points (with nine rules, a stray signal or two is chance).
    min_n : int
        Groups with fewer points, or a rest with fewer points, are not judged.

    Returns
    -------
    list of DriftFinding
        Only the groups that drift, most signals first.
    """
    data = frame[[key, metric, order, label]].dropna().sort_values([order, label])
    # Integer codes, not strings: every round compares each group with every point.
    codes, names = pd.factorize(data[key].astype(str), sort=False)
    values = data[metric].to_numpy(dtype=float)
    labels = data[label].to_numpy()
    sizes = np.bincount(codes, minlength=len(names))
    drifting: dict[str, DriftFinding] = {}
    candidates = list(range(len(names)))
    while candidates:  # a drifting group must not set the others' baseline: drop the worst
        clean = ~np.isin(codes, [names.get_loc(k) for k in drifting])
        signalling = [finding for code in candidates
                      if (finding := _judge(str(names[code]), codes == code,
                                            clean & (codes != code), values, labels, metric,
                                            max(min_signals, min_signal_fraction * sizes[code]),
                                            min_n))]
        if not signalling:
            break
        worst = max(signalling, key=lambda f: abs(f.mean - f.centre) / f.sigma)
        drifting[worst.key] = worst
        # Only groups that signalled are judged again: the baseline got cleaner for them.
        candidates = [names.get_loc(f.key) for f in signalling if f.key != worst.key]
    return sorted(drifting.values(), key=lambda f: (-f.signals, f.key))


def _judge(value: str, own: np.ndarray, rest: np.ndarray, values: np.ndarray,
           labels: np.ndarray, metric: str, min_signals: float,
           min_n: int) -> DriftFinding | None:
    """The group's points (mask ``own``) as phase II after the ``rest`` (phase I), in time
    order; None without enough signals."""
    n_own, n_rest = int(own.sum()), int(rest.sum())
    if n_own < min_n or n_rest < min_n:
        return None
    chart = individuals_chart(np.concatenate([values[rest], values[own]]), baseline_count=n_rest,
                              report_from=n_rest)
    signals = chart.violations
    if len(signals) < min_signals or chart.sigma <= 0:
        return None
    own_labels = labels[own]
    return DriftFinding(
        key=value, metric=metric, n=n_own, signals=len(signals),
        rules=tuple(sorted({v.rule for v in signals})), mean=float(values[own].mean()),
        centre=chart.centre, sigma=chart.sigma, lower_limit=chart.lower_limit,
        upper_limit=chart.upper_limit,
        evidence=tuple(f"{own_labels[v.index - n_rest]}: {v.message}" for v in signals))
