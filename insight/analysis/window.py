"""The operating window: the range of a setting inside which substrates pass at the target rate.

Hand-written because no library offers it: it is a search over contiguous ranges of one
setting (on the sorted values, cumulative sums, so O(k²) for k candidate edges), with the
pass rates inside and outside given as Wilson intervals.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import MIN_PER_GROUP, NotEnoughData
from .proportions import PassRate, wilson_pass_rate

MAX_EDGES = 80  # candidate edges at distinct quantiles: fine enough, and fast for 5,000 points


@dataclass(frozen=True)
class OperatingWindow:
    """``low``–``high`` (unit of the setting) with the pass rate inside and outside."""

    setting: str
    low: float
    high: float
    inside: PassRate
    outside: PassRate | None
    target: float

    @property
    def contrast(self) -> float:
        return self.inside.rate - (self.outside.rate if self.outside else self.inside.rate)

    def as_dict(self) -> dict:
        return {"setting": self.setting, "low": self.low, "high": self.high,
                "target": self.target, "inside": self.inside.as_dict(),
                "outside": self.outside.as_dict() if self.outside else None}

    def sentence(self, label: str, digits: int = 3) -> str:
        outside = (f"; outside it, {self.outside.rate:.0%} (n = {self.outside.n})"
                   if self.outside else "")
        return (f"substrates with {label} between {self.low:.{digits}g} and "
                f"{self.high:.{digits}g} passed {self.inside.sentence()}{outside}")


def operating_window(x, passed, *, setting: str = "x", target: float = 0.9,
                     min_n: int = MIN_PER_GROUP) -> OperatingWindow:
    """Widest contiguous range of ``x`` whose observed pass rate is at least ``target``.

    "Widest" counts substrates, not units of x; ties go to the higher pass rate.  The range
    runs from the smallest to the largest x of the substrates inside it.

    Parameters
    ----------
    x : array_like
        The setting (any unit); non-finite values are left out.
    passed : array_like of bool
        QC verdict of each substrate.
    target : float
        Pass-rate target as a fraction (the lab's, 0.9 by default).
    min_n : int
        Fewest substrates a window may hold.

    Raises
    ------
    NotEnoughData
        Fewer than ``min_n`` substrates, a setting that never varies, or no range reaching
        the target.
    """
    x = np.asarray(x, dtype=float)
    ok = np.asarray(passed, dtype=float)
    keep = np.isfinite(x) & np.isfinite(ok)
    x, ok = x[keep], ok[keep].astype(bool)
    if x.size < min_n:
        raise NotEnoughData(f"{x.size} substrates (need {min_n})", field=setting)
    if np.ptp(x) == 0:
        raise NotEnoughData("the setting never varies", field=setting)
    order = np.argsort(x, kind="stable")
    x, ok = x[order], ok[order]
    edges = np.unique(np.quantile(x, np.linspace(0, 1, MAX_EDGES + 1)))
    # Index ranges [start, stop) of the sorted points between candidate edges.
    starts = np.searchsorted(x, edges, side="left")
    stops = np.searchsorted(x, edges, side="right")
    passes = np.concatenate([[0], np.cumsum(ok)])
    best: tuple[int, float, int, int] | None = None
    for i, start in enumerate(starts):
        stop = stops[i:]
        n = stop - start
        rate = (passes[stop] - passes[start]) / np.maximum(n, 1)
        good = (n >= min_n) & (rate >= target)
        if not good.any():
            continue
        j = np.flatnonzero(good)
        k = j[np.lexsort((-rate[j], -n[j]))[0]]
        candidate = (int(n[k]), float(rate[k]), int(start), int(stop[k]))
        if best is None or candidate[:2] > best[:2]:
            best = candidate
    if best is None:
        raise NotEnoughData(f"no range of {min_n} or more substrates reaches the target "
                            f"{target:.0%}", field=setting)
    _, _, first, end = best
    inside_n, inside_pass = end - first, int(ok[first:end].sum())
    outside_n = x.size - inside_n
    outside = (wilson_pass_rate(int(ok.sum()) - inside_pass, outside_n)
               if outside_n else None)
    return OperatingWindow(setting, float(x[first]), float(x[end - 1]),
                           wilson_pass_rate(inside_pass, inside_n), outside, target)
