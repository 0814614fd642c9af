"""The shared containers for one spectrum and for a Raman map.

Readers produce these, and every later step (spike removal, baselines, band fitting,
enhancement factors, uniformity) takes them in.  They check their own invariants on
construction, so a ``Spectrum`` or ``RamanMap`` that exists is always usable: finite
numbers, a strictly ascending axis, matching lengths.  Arrays are copied and made
read-only so that "frozen" also holds for the numbers.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ._validation import all_finite, as_finite_1d
from .errors import AnalysisInputError


def _frozen_copy(array: np.ndarray, dtype=float) -> np.ndarray:
    """A read-only copy; an array that is already read-only, owns its data and has the dtype
    (a reader's own, handed over) is kept as it is: nobody can change it, and a big map is
    not held twice."""
    if (array.dtype == dtype and not array.flags.writeable and array.flags.owndata
            and array.flags.c_contiguous):
        return array
    copy = np.array(array, dtype=dtype, copy=True)
    copy.setflags(write=False)
    return copy


def _require_ascending(axis: np.ndarray, *, field: str) -> None:
    steps = np.diff(axis)
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        index = int(bad[0]) + 1
        raise AnalysisInputError(
            f"axis must be strictly ascending; value {axis[index]} at index {index} "
            f"does not exceed the one before ({axis[index - 1]})",
            field=field,
        )


@dataclass(frozen=True, eq=False)
class Spectrum:
    """One spectrum: a strictly ascending axis and one intensity per axis value.

    Parameters
    ----------
    x : array_like, shape (n,)
        Axis values in ``x_unit``, strictly ascending, finite, at least 2 points.
    y : array_like, shape (n,)
        Intensity in ``y_unit``, finite.
    x_unit : str
        Unit of ``x``: ``"1/cm"`` for Raman shift, ``"nm"`` for wavelength, or as read.
    y_unit : str
        Unit of ``y``: ``"counts"``, ``"absorbance"``, ``"arbitrary units"`` or as read.
    metadata : dict
        Anything else known about the spectrum (``title``, ``laser_nm``, reader notes).
    """

    x: np.ndarray
    y: np.ndarray
    x_unit: str = "1/cm"
    y_unit: str = "counts"
    metadata: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        x = as_finite_1d(self.x, field="x", min_points=2)
        y = as_finite_1d(self.y, field="y", min_points=2)
        if x.shape != y.shape:
            raise AnalysisInputError(
                f"x has {x.size} values but y has {y.size}", field="y"
            )
        _require_ascending(x, field="x")
        object.__setattr__(self, "x", _frozen_copy(x))
        object.__setattr__(self, "y", _frozen_copy(y))
        object.__setattr__(self, "metadata", dict(self.metadata))

    def __len__(self) -> int:
        return int(self.x.size)

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Spectrum):
            return NotImplemented
        return (
            self.x_unit == other.x_unit
            and self.y_unit == other.y_unit
            and np.array_equal(self.x, other.x)
            and np.array_equal(self.y, other.y)
            and self.metadata == other.metadata
        )

    __hash__ = None  # type: ignore[assignment]  # arrays and a dict inside: not hashable


def infer_grid_shape(x_um, y_um) -> tuple[int, int] | None:
    """Return ``(ny, nx)`` when the positions fill a rectangular grid exactly once.

    A grid means every combination of the distinct x and distinct y values occurs exactly
    once.  Anything else (missing points, repeated points, an irregular pattern) gives
    ``None``.  Positions are compared exactly, as read from the file.
    """
    x = np.asarray(x_um, dtype=float)
    y = np.asarray(y_um, dtype=float)
    x_values, column = np.unique(x, return_inverse=True)
    y_values, row = np.unique(y, return_inverse=True)
    nx, ny = x_values.size, y_values.size
    if nx * ny != x.size:
        return None
    cell = row.ravel() * nx + column.ravel()
    if np.unique(cell).size != x.size:
        return None
    return (ny, nx)


@dataclass(frozen=True, eq=False)
class RamanMap:
    """Spectra recorded at many stage positions over one common Raman-shift axis.

    Parameters
    ----------
    x_um, y_um : array_like, shape (n_points,)
        Stage position of each spectrum, in micrometres; no position may repeat.
    shift_cm1 : array_like, shape (n_shift,)
        Raman shift in cm⁻¹, strictly ascending, shared by every point.
    intensity : array_like, shape (n_points, n_shift)
        Intensity of point ``i`` at shift ``j`` in row ``i``, column ``j``; finite.
    grid_shape : tuple of int or None
        ``(ny, nx)`` when the positions form a full rectangular grid, else ``None``.
        Leave it ``None`` to have it inferred; a value given must match the positions.
    metadata : dict
        Anything else known (``title``, ``laser_nm``, ``intensity_unit``, reader notes).
    """

    x_um: np.ndarray
    y_um: np.ndarray
    shift_cm1: np.ndarray
    intensity: np.ndarray
    grid_shape: tuple[int, int] | None = None
    metadata: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        x = as_finite_1d(self.x_um, field="x_um")
        y = as_finite_1d(self.y_um, field="y_um")
        if x.shape != y.shape:
            raise AnalysisInputError(
                f"x_um has {x.size} values but y_um has {y.size}", field="y_um"
            )
        shift = as_finite_1d(self.shift_cm1, field="shift_cm1", min_points=2)
        _require_ascending(shift, field="shift_cm1")
        # float32 counts (7 significant digits, a reader's choice for big maps) stay float32.
        intensity = np.asarray(self.intensity)
        if intensity.dtype != np.float32:
            intensity = intensity.astype(float, copy=False)
        if intensity.shape != (x.size, shift.size):
            raise AnalysisInputError(
                f"intensity must have shape (n_points, n_shift) = ({x.size}, {shift.size}), "
                f"got {intensity.shape}",
                field="intensity",
            )
        if not all_finite(intensity):
            point, column = np.argwhere(~np.isfinite(intensity))[0]
            raise AnalysisInputError(
                f"intensity at point {point}, shift index {column} is not a finite number",
                field="intensity",
            )
        _require_distinct_positions(x, y)
        inferred = infer_grid_shape(x, y)
        if self.grid_shape is not None and tuple(self.grid_shape) != inferred:
            raise AnalysisInputError(
                f"grid_shape {tuple(self.grid_shape)} does not match the positions "
                f"(they give {inferred})",
                field="grid_shape",
            )
        object.__setattr__(self, "x_um", _frozen_copy(x))
        object.__setattr__(self, "y_um", _frozen_copy(y))
        object.__setattr__(self, "shift_cm1", _frozen_copy(shift))
        object.__setattr__(self, "intensity", _frozen_copy(intensity, intensity.dtype))
        object.__setattr__(self, "grid_shape", inferred)
        object.__setattr__(self, "metadata", dict(self.metadata))

    @property
    def n_points(self) -> int:
        return int(self.x_um.size)

    @property
    def n_shift(self) -> int:
        return int(self.shift_cm1.size)

    def spectrum(self, index: int, *, y_unit: str | None = None) -> Spectrum:
        """Return the spectrum of point ``index`` as a :class:`Spectrum` in cm⁻¹."""
        if not -self.n_points <= index < self.n_points:
            raise AnalysisInputError(
                f"point index {index} is outside 0..{self.n_points - 1}", field="index"
            )
        unit = y_unit or self.metadata.get("intensity_unit", "counts")
        point_metadata = dict(
            self.metadata, x_um=float(self.x_um[index]), y_um=float(self.y_um[index])
        )
        return Spectrum(
            self.shift_cm1, self.intensity[index], "1/cm", unit, point_metadata
        )

    def grid_axes(self) -> tuple[np.ndarray, np.ndarray]:
        """Return the distinct x and y positions (µm), ascending: the image's column, row axes."""
        return np.unique(self.x_um), np.unique(self.y_um)

    def image(self, values_per_point) -> np.ndarray:
        """Arrange one value per point as a ``(ny, nx)`` image for a heat-map.

        Row ``r`` holds the ``r``-th smallest y, column ``c`` the ``c``-th smallest x, so
        the image can be drawn with ``origin="lower"`` and the extents of
        :meth:`grid_axes`, whatever order the points were recorded in.

        Parameters
        ----------
        values_per_point : array_like, shape (n_points,)
            e.g. a band height per point, in any unit.
        """
        if self.grid_shape is None:
            raise AnalysisInputError(
                "the map positions do not form a full rectangular grid, so there is no image",
                field="grid_shape",
            )
        values = np.asarray(values_per_point, dtype=float)
        if values.shape != (self.n_points,):
            raise AnalysisInputError(
                f"expected one value per point ({self.n_points}), got shape {values.shape}",
                field="values_per_point",
            )
        _, column = np.unique(self.x_um, return_inverse=True)
        _, row = np.unique(self.y_um, return_inverse=True)
        picture = np.empty(self.grid_shape, dtype=float)
        picture[row.ravel(), column.ravel()] = values
        return picture

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, RamanMap):
            return NotImplemented
        return (
            np.array_equal(self.x_um, other.x_um)
            and np.array_equal(self.y_um, other.y_um)
            and np.array_equal(self.shift_cm1, other.shift_cm1)
            and np.array_equal(self.intensity, other.intensity)
            and self.metadata == other.metadata
        )

    __hash__ = None  # type: ignore[assignment]


def first_repeated_point(x_um, y_um) -> int | None:
    """Index of the first point whose position occurs more than once, or ``None``.

    Positions are compared exactly (−0.0 equals 0.0).  One stable sort of the positions
    puts equal ones side by side, first occurrence first: a fraction of the cost of
    numpy's ``unique`` over rows, which mattered on 10,000-point maps.
    """
    order = np.lexsort((y_um, x_um))
    x_sorted, y_sorted = x_um[order], y_um[order]
    same = (x_sorted[1:] == x_sorted[:-1]) & (y_sorted[1:] == y_sorted[:-1])
    return int(order[:-1][same].min()) if same.any() else None


def _require_distinct_positions(x: np.ndarray, y: np.ndarray) -> None:
    repeated = first_repeated_point(x, y)
    if repeated is not None:
        raise AnalysisInputError(
            f"position ({x[repeated]}, {y[repeated]}) µm occurs more than once "
            f"(first at point {repeated})",
            field="x_um",
        )
