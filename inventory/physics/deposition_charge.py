"""Deposition charge from a chronoamperogram: the integral of current over time.

The first step of the electrodeposition chain (:mod:`inventory.physics.electrodeposition`);
the checks of a time/current record and of the cathodic sign live here too, because the
graded-run model (:mod:`inventory.physics.graded_deposition`) integrates the same record.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from scipy import integrate

from .errors import AnalysisInputError
from .validation import as_finite_1d

CathodicSign = Literal["negative", "positive", "auto"]


def deposition_charge_C(
    time_s,
    current_A,
    *,
    start_s: float | None = None,
    end_s: float | None = None,
    cathodic_sign: CathodicSign = "negative",
) -> float:
    """Deposition charge, C, by trapezoidal integration of current over time.

    .. math:: Q = s \\int_{t_1}^{t_2} I(t)\\,dt

    with s = −1 when cathodic current is recorded negative (the IUPAC convention) and
    s = +1 when it is recorded positive.  The current at ``start_s``/``end_s`` is linearly
    interpolated so the bounds need not fall on samples.

    Parameters
    ----------
    time_s : array_like
        Sample times, s, strictly increasing.
    current_A : array_like
        Current, A, same length.
    start_s, end_s : float, optional
        Integration bounds, s, inside the record; default the whole record.
    cathodic_sign : {"negative", "positive", "auto"}
        Sign of cathodic (deposition) current in the record.  ``"auto"`` takes the sign of
        the net charge as cathodic, so it cannot detect an anodic record: use it only when
        the file is known to be a deposition.

    Returns
    -------
    float
        Net deposition charge, C, a positive magnitude.

    Raises
    ------
    AnalysisInputError
        Bad arrays or bounds, or a net charge of the wrong sign for deposition (net anodic)
        or of zero.

    References
    ----------
    A. J. Bard and L. R. Faulkner, *Electrochemical Methods: Fundamentals and Applications*,
    2nd ed., Wiley, New York, 2001 (charge as the integral of current, ch. 5; sign
    conventions, ch. 1).
    """
    time, current = checked_time_and_current(time_s, current_A)
    low, high = integration_bounds(time, start_s, end_s)
    inside = (time > low) & (time < high)
    grid = np.concatenate(([low], time[inside], [high]))
    values = np.interp(grid, time, current)
    return cathodic_magnitude(float(integrate.trapezoid(values, grid)), cathodic_sign)


def checked_time_and_current(time_s, current_A) -> tuple[np.ndarray, np.ndarray]:
    """The record as two finite arrays of equal length, time strictly increasing."""
    time = as_finite_1d(time_s, field="time_s", min_points=2)
    current = as_finite_1d(current_A, field="current_A", min_points=2)
    if time.size != current.size:
        raise AnalysisInputError(
            f"time has {time.size} points but current has {current.size}", field="current_A"
        )
    bad = np.flatnonzero(np.diff(time) <= 0)
    if bad.size:
        raise AnalysisInputError(
            f"time must increase strictly; it does not at index {bad[0] + 1}", field="time_s"
        )
    return time, current


def integration_bounds(time: np.ndarray, start_s, end_s) -> tuple[float, float]:
    """The integration bounds, s (default the whole record), checked to lie inside it."""
    low = float(time[0]) if start_s is None else float(start_s)
    high = float(time[-1]) if end_s is None else float(end_s)
    for value, field in ((low, "start_s"), (high, "end_s")):
        if not (np.isfinite(value) and time[0] <= value <= time[-1]):
            raise AnalysisInputError(
                f"{value} s is outside the record ({time[0]} to {time[-1]} s)", field=field
            )
    if high <= low:
        raise AnalysisInputError(f"end {high} s is not after start {low} s", field="end_s")
    return low, high


def cathodic_magnitude(signed_charge_C: float, cathodic_sign: str) -> float:
    """Turn a signed integral into a positive deposition charge, refusing net anodic."""
    if cathodic_sign not in ("negative", "positive", "auto"):
        raise AnalysisInputError(
            f"must be 'negative', 'positive' or 'auto', got {cathodic_sign!r}",
            field="cathodic_sign",
        )
    if signed_charge_C == 0.0:
        raise AnalysisInputError("the net charge is zero: nothing was deposited", field="current_A")
    if cathodic_sign == "auto":
        return abs(signed_charge_C)
    deposition = -signed_charge_C if cathodic_sign == "negative" else signed_charge_C
    if deposition < 0:
        raise AnalysisInputError(
            f"net charge {signed_charge_C:.4g} C is anodic for cathodic_sign="
            f"'{cathodic_sign}': this record dissolves metal or the sign convention is wrong",
            field="current_A",
        )
    return deposition
