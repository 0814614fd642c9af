"""Array and number checks of the science modules; home: :mod:`inventory.physics.validation`."""

from inventory.physics.validation import (
    all_finite,
    as_finite_1d,
    as_strictly_monotonic_axis,
    require_fraction,
    require_non_negative,
    require_positive,
)

__all__ = [
    "all_finite",
    "as_finite_1d",
    "as_strictly_monotonic_axis",
    "require_fraction",
    "require_non_negative",
    "require_positive",
]
