"""The lab's tolerances on fabrication numbers, edited by the administrator."""

from __future__ import annotations

from django.db import models

from .base import StampedRecord
from .ranges import positive, range_constraints

TOLERANCE_RANGES = {"max_abs_deviation_height_over_diameter": positive(10)}


class DepositionTolerance(StampedRecord):
    """How far a run's film height h/D may stray from its target before it is flagged.

    A tolerance with a ``metal`` applies to runs of that metal and wins over the general
    one (blank ``metal``).  ``is_example`` marks values shipped with the demo, which a lab
    must replace with its own.
    """

    RANGES = TOLERANCE_RANGES

    metal = models.CharField(max_length=4, blank=True,
                             help_text="Element symbol; blank for every metal.")
    max_abs_deviation_height_over_diameter = models.FloatField(
        help_text="Largest accepted |h/D − target h/D|.")
    is_example = models.BooleanField(default=False)
    rationale = models.TextField(blank=True)

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["metal"], name="one_deposition_tolerance_per_metal"),
            *range_constraints("deposition_tolerance", TOLERANCE_RANGES),
        ]

    def __str__(self) -> str:
        scope = self.metal or "every metal"
        return f"{scope}: |h/D − target| ≤ {self.max_abs_deviation_height_over_diameter:g}"
