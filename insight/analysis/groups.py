"""Comparison of a categorical setting's groups: mean outcome and pass rate, with intervals."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from .errors import MIN_PER_GROUP, NotEnoughData
from .proportions import PassRate, wilson_pass_rate


@dataclass(frozen=True)
class GroupSummary:
    """One group: its size, mean outcome with a t interval, and pass rate (Wilson)."""

    label: str
    n: int
    mean: float | None
    ci_low: float | None
    ci_high: float | None
    pass_rate: PassRate | None
    refusal: str = ""

    def as_dict(self) -> dict:
        return {"label": self.label, "n": self.n, "mean": self.mean, "ci_low": self.ci_low,
                "ci_high": self.ci_high,
                "pass_rate": self.pass_rate.as_dict() if self.pass_rate else None,
                "refusal": self.refusal}


def mean_interval(values, *, confidence: float = 0.95) -> tuple[float, float, float]:
    """Mean with its Student-t interval, ``x̄ ± t(1−α/2, n−1)·s/√n``.

    References
    ----------
    .. [1] Student (W. S. Gosset). The probable error of a mean. Biometrika 1908, 6, 1–25
       (scipy.stats.t quantiles).
    """
    data = np.asarray(values, dtype=float)
    data = data[np.isfinite(data)]
    if data.size < 2:
        raise NotEnoughData(f"{data.size} value(s)", field="values")
    mean = float(data.mean())
    half = float(stats.t.ppf(0.5 + confidence / 2, data.size - 1)
                 * data.std(ddof=1) / np.sqrt(data.size))
    return mean, mean - half, mean + half


def compare_groups(labels, outcome, passed, *, min_n: int = MIN_PER_GROUP) -> list[GroupSummary]:
    """Each group's mean outcome (t interval) and pass rate (Wilson), largest group first.

    A group with fewer than ``min_n`` substrates gets "not enough data" instead of numbers.
    Raises NotEnoughData when fewer than two groups can be compared.
    """
    frame = pd.DataFrame({"label": labels, "y": outcome, "passed": passed}).dropna(
        subset=["label"])
    out = []
    for label, part in frame.groupby("label", sort=False):
        n = len(part)
        if n < min_n:
            out.append(GroupSummary(str(label), n, None, None, None, None,
                                    f"not enough data: {n} substrates (need {min_n})"))
            continue
        judged = part["passed"].dropna().astype(bool)
        rate = wilson_pass_rate(int(judged.sum()), len(judged)) if len(judged) else None
        mean: float | None
        low: float | None
        high: float | None
        try:
            mean, low, high = mean_interval(part["y"])
        except NotEnoughData:  # a group with no finite outcome: its size and rate only
            mean = low = high = None
        out.append(GroupSummary(str(label), n, mean, low, high, rate))
    if sum(1 for g in out if not g.refusal) < 2:
        raise NotEnoughData(f"fewer than two groups with {min_n} or more substrates",
                            field="labels")
    return sorted(out, key=lambda g: (-g.n, g.label))
