"""Array and number checks shared by the science modules.

Each check raises :class:`~inventory.physics.errors.AnalysisInputError` naming the field, so a
caller can show the lab member which input is wrong.  Nothing here computes science.
"""

from __future__ import annotations

import numpy as np

from .errors import AnalysisInputError


def as_finite_1d(values, *, field: str, min_points: int = 1) -> np.ndarray:
    """Return ``values`` as a 1-D float array, refusing NaN, infinity and short input."""
    array = np.asarray(values, dtype=float)
    if array.ndim != 1:
        raise AnalysisInputError(f"expected a 1-D sequence, got shape {array.shape}", field=field)
    if array.size < min_points:
        raise AnalysisInputError(
            f"needs at least {min_points} points, got {array.size}", field=field
        )
    bad = np.flatnonzero(~np.isfinite(array))
    if bad.size:
        raise AnalysisInputError(
            f"value at index {bad[0]} is not a finite number ({array[bad[0]]})", field=field
        )
    return array


def as_strictly_monotonic_axis(values, *, field: str, min_points: int = 2) -> np.ndarray:
    """Return an axis that is strictly increasing or strictly decreasing, else refuse it.

    Duplicate values and axes that turn back are refused with the index of the first
    offending point, because either makes interpolation and integration meaningless.
    """
    axis = as_finite_1d(values, field=field, min_points=min_points)
    steps = np.diff(axis)
    if np.any(steps == 0):
        index = int(np.flatnonzero(steps == 0)[0]) + 1
        raise AnalysisInputError(
            f"duplicate axis value {axis[index]} at index {index}", field=field
        )
    if not (np.all(steps > 0) or np.all(steps < 0)):
        direction = np.sign(steps[0])
        index = int(np.flatnonzero(np.sign(steps) != direction)[0]) + 1
        raise AnalysisInputError(
            f"axis is not monotonic: it turns back at index {index} (value {axis[index]})",
            field=field,
        )
    return axis


def require_positive(value: float | None, *, field: str) -> float:
    """Return ``value`` as float if it is finite and > 0, else refuse it (also when missing)."""
    if value is None:
        raise AnalysisInputError("a positive number is required", field=field)
    number = float(value)
    if not np.isfinite(number) or number <= 0:
        raise AnalysisInputError(f"must be a positive number, got {value}", field=field)
    return number


def require_non_negative(value: float, *, field: str) -> float:
    """Return ``value`` as float if it is finite and >= 0, else refuse it."""
    number = float(value)
    if not np.isfinite(number) or number < 0:
        raise AnalysisInputError(f"must be zero or positive, got {value}", field=field)
    return number


def require_fraction(value: float, *, field: str, allow_zero: bool = False) -> float:
    """Return ``value`` if it lies in (0, 1] (or [0, 1] with ``allow_zero``)."""
    number = float(value)
    low_ok = number >= 0 if allow_zero else number > 0
    if not np.isfinite(number) or not low_ok or number > 1:
        raise AnalysisInputError(f"must be a fraction between 0 and 1, got {value}", field=field)
    return number


def all_finite(values: np.ndarray) -> bool:
    """Whether every element is finite, in one reduction pass for the usual all-finite case.

    A NaN or infinity anywhere makes the sum non-finite; only then (or if the sum of
    finite values overflows) is the element-wise test run.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        if np.isfinite(np.sum(values)):
            return True
    return bool(np.isfinite(values).all())
