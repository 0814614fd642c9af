"""Finite, physical ranges of stored numbers and dates: one table per kind, used twice.

Each model names its table in ``RANGES`` (field name → ``Span`` or ``PastDate``).  The
services check a record against it before saving (``inventory.services._common``: a refusal
naming the field and the allowed range), and the model's ``Meta.constraints`` turn the same
table into database CHECK constraints, so even a bug cannot store NaN or infinity:

* PostgreSQL orders NaN above every number, so ``x <= high`` excludes NaN and +∞ and
  ``x >= low`` excludes −∞.
* SQLite stores a NaN float as NULL: a NOT NULL column refuses it; a nullable one keeps
  "no value", which is why the services refuse NaN by name before anything is written.

Dates cannot be compared with "today" in a CHECK constraint (it must not change meaning
over time), so the database holds the fixed earliest date and the services refuse days
after today unless the field is a planned date.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date

from django.db import models
from django.db.models import Q

EARLIEST_DATE = date(1900, 1, 1)


@dataclass(frozen=True)
class Span:
    """A finite number from ``low`` to ``high`` in ``unit``; ``low`` excluded if ``above``.

    ``computed`` marks a figure the services work out (the message then points at the
    inputs rather than at a value nobody typed).
    """

    low: float
    high: float
    unit: str = ""
    above: bool = False
    computed: bool = False

    def holds(self, value: float) -> bool:
        number = float(value)
        if not math.isfinite(number):
            return False
        return (number > self.low if self.above else number >= self.low) and number <= self.high

    def describe(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        lower = f"more than {self.low:g}" if self.above else f"at least {self.low:g}"
        return f"a finite number, {lower} and at most {self.high:g}{unit}"

    def condition(self, name: str) -> Q:
        lower = Q(**{f"{name}__gt" if self.above else f"{name}__gte": self.low})
        return lower & Q(**{f"{name}__lte": self.high})


@dataclass(frozen=True)
class PastDate:
    """A date from ``EARLIEST_DATE`` to today (or later, for a ``planned`` date)."""

    planned: bool = False

    def holds(self, value: date, today: date) -> bool:
        return value >= EARLIEST_DATE and (self.planned or value <= today)

    def describe(self, today: date) -> str:
        latest = "" if self.planned else f" and not after today ({today.isoformat()})"
        return f"a date from {EARLIEST_DATE.isoformat()}{latest}"

    def condition(self, name: str) -> Q:
        return Q(**{f"{name}__gte": EARLIEST_DATE})


def positive(high: float, unit: str = "", *, computed: bool = False) -> Span:
    """More than zero and at most ``high``: areas, volumes, times, concentrations."""
    return Span(0, high, unit, above=True, computed=computed)


def finite(limit: float = 1e30, unit: str = "") -> Span:
    """A computed figure with no physical bound of its own: finite, |x| ≤ ``limit``."""
    return Span(-limit, limit, unit, computed=True)


def range_constraints(prefix: str,
                      ranges: dict[str, Span | PastDate]) -> list[models.CheckConstraint]:
    """One CHECK constraint per field of ``ranges``, named ``{prefix}_{field}_range``.

    An empty (NULL) value passes: whether a field may be empty is the column's own NOT NULL.
    """
    return [models.CheckConstraint(name=f"{prefix}_{name}_range"[:63],
                                   condition=Q(**{f"{name}__isnull": True}) | span.condition(name))
            for name, span in ranges.items()]
