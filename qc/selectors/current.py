"""The current QC result of a substrate: the one rule pages, API, readiness and review share.

The current result is the newest QC measurement (by date measured, then record order) at the
substrate's current stage that is not voided: QC of a bare film says nothing about the same
piece after particles are bound, and a voided result no longer speaks for anything.  Whether a
flag still counts is ``inventory.flags.flags_open``'s rule.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from datetime import date

from django.db.models import Exists, F, OuterRef, Q, QuerySet

from inventory.models import Substrate

from ..models.raman import QcMeasurement

__all__ = ["qc_measurement_get_latest", "qc_measurements_current", "qc_measurements_get_latest",
           "qc_measurements_standing"]

# Per-point data a list or a verdict never shows; a detail read asks for it with ``fields``.
_HEAVY_FIELDS = ("point_values", "ef_inputs")


def qc_measurements_standing(*, on_date: date | None = None,
                             analyte_ids: Iterable[int] | QuerySet | None = None,
                             ) -> QuerySet[QcMeasurement]:
    """Every QC result that still speaks for its substrate: not voided, measured on or before
    ``on_date``, with one of ``analyte_ids`` (a list or a subquery) when given."""
    rows = QcMeasurement.objects.filter(voided_at__isnull=True)
    if on_date is not None:
        rows = rows.filter(measured_on__lte=on_date)
    if analyte_ids is not None:
        rows = rows.filter(analyte_id__in=analyte_ids)
    return rows


def qc_measurements_current(substrates: QuerySet[Substrate], *,
                            product_kind: str | None = None, on_date: date | None = None,
                            analyte_ids: Iterable[int] | QuerySet | None = None,
                            ) -> QuerySet[QcMeasurement]:
    """The current QC of every substrate ``substrates`` selects, as one query of any size.

    A standing result (``qc_measurements_standing``) at the substrate's stage (or at
    ``product_kind``) with no newer standing one at that stage, newer meaning measured later,
    or the same day and recorded later.  The bulk form for tables: the rule runs in the
    database, so callers pick their columns with ``values()`` and no id list travels.
    """
    standing = qc_measurements_standing(on_date=on_date, analyte_ids=analyte_ids)
    newer = standing.filter(
        Q(measured_on__gt=OuterRef("measured_on"))
        | Q(measured_on=OuterRef("measured_on"), id__gt=OuterRef("id")),
        substrate_id=OuterRef("substrate_id"), product_kind=OuterRef("product_kind"))
    return (standing.filter(substrate__in=substrates,
                            product_kind=product_kind or F("substrate__stage"))
            .exclude(Exists(newer)))


def qc_measurements_get_latest(
    substrates: Iterable[Substrate], *, product_kind: str | None = None,
    on_date: date | None = None, analyte_ids: Iterable[int] | None = None,
    fields: Sequence[str] = (), select_related: Sequence[str] = (),
) -> dict[int, QcMeasurement]:
    """The current QC of each substrate, keyed by substrate id (one query for a whole page).

    ``product_kind`` replaces each substrate's own stage; ``on_date`` ignores results measured
    after it; ``analyte_ids`` keeps results with those reference analytes only; ``fields``
    loads only those columns (else everything but the per-point data).
    """
    ids = [s.pk for s in substrates]
    if not ids:
        return {}
    rows = qc_measurements_current(
        Substrate.objects.filter(pk__in=ids), product_kind=product_kind, on_date=on_date,
        analyte_ids=None if analyte_ids is None else list(analyte_ids))
    if fields:
        rows = rows.only(*fields, "substrate_id", "product_kind")
    else:
        rows = rows.defer(*_HEAVY_FIELDS)
    if select_related:
        rows = rows.select_related(*select_related)
    return {measurement.substrate_id: measurement for measurement in rows}


def qc_measurement_get_latest(substrate: Substrate, *, product_kind: str | None = None,
                              on_date: date | None = None,
                              analyte_ids: Iterable[int] | None = None,
                              fields: Sequence[str] = ()) -> QcMeasurement | None:
    """The current QC of one substrate (``qc_measurements_get_latest`` for a single record)."""
    return qc_measurements_get_latest(
        [substrate], product_kind=product_kind, on_date=on_date, analyte_ids=analyte_ids,
        fields=fields, select_related=() if fields else ("analyte", "reference", "limit_set"),
    ).get(substrate.pk)
