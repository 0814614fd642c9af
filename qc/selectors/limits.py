"""The lab's QC and colloid limits as a whole: what is set, what is a default, what is missing.

Read by the limits page and by the system check (``qc.checks``), so both say the same.
"""

from __future__ import annotations

from dataclasses import dataclass

from inventory.models import Substrate

from ..limit_defaults import COLLOID_DEFAULTS, QC_DEFAULTS
from ..models.colloid import ColloidLimitSet, ColloidMetal
from ..models.raman import QcLimitSet, ReferenceAnalyte

__all__ = ["LimitRow", "colloid_limits_overview", "qc_limits_overview",
           "qc_stages_without_limits"]


@dataclass(frozen=True)
class LimitRow:
    """One setting's place on the page: the stored row (None if unset) and its defaults."""

    scope_label: str
    stored: object | None  # a QcLimitSet or ColloidLimitSet
    default: object  # a qc.limit_defaults QcDefault or ColloidDefault

    @property
    def to_review(self) -> bool:
        """True while the values are shipped defaults (or nothing is stored yet)."""
        return self.stored is None or self.stored.is_example


def qc_limits_overview() -> list[tuple[ReferenceAnalyte, list[tuple[str, LimitRow]]]]:
    """Per analyte, one row per substrate stage (two queries)."""
    stored = {(limit.analyte_id, limit.product_kind): limit
              for limit in QcLimitSet.objects.select_related("updated_by")}
    return [(analyte, [(stage, LimitRow(str(label), stored.get((analyte.pk, stage)),
                                        QC_DEFAULTS[stage]))
                       for stage, label in Substrate.Stage.choices])
            for analyte in ReferenceAnalyte.objects.order_by("name")]


def colloid_limits_overview() -> list[tuple[str, LimitRow]]:
    stored = {limit.metal: limit for limit in ColloidLimitSet.objects.select_related("updated_by")}
    return [(metal, LimitRow(str(label), stored.get(metal), COLLOID_DEFAULTS[metal]))
            for metal, label in ColloidMetal.choices]


def qc_stages_without_limits() -> list[str]:
    """Stage labels that no analyte has limits for (all of them when there is no analyte)."""
    covered = set(QcLimitSet.objects.values_list("product_kind", flat=True))
    return [str(label) for stage, label in Substrate.Stage.choices if stage not in covered]
