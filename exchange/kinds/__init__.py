"""The record kinds a lab keeps in sheets: their columns (with units) and how a row is written.

A row is written by the service the pages and API call (inventory.services, qc.services,
exchange.services), so every check of those services applies to every row.  Split by
topic: ``base`` (what a kind declares), ``materials``, ``fabrication``, ``qc_results``.
"""

from __future__ import annotations

import math
from datetime import date

from django.db.models import Model

from .base import Column, Kind, header_variants, normalise
from .fabrication import (
    DEPOSITION_RUNS,
    LINKER_LAYERS,
    PARTICLE_ATTACHMENTS,
    SUBSTRATES,
    TEMPLATES,
)
from .materials import COLLOID_BATCHES, REAGENT_LOTS, SPHERE_LOTS
from .qc_results import QC_RESULTS

__all__ = ["KINDS", "Column", "Kind", "example_row", "export_rows", "export_value",
           "header_variants", "normalise"]

KINDS: dict[str, Kind] = {kind.name: kind for kind in (
    SPHERE_LOTS, REAGENT_LOTS, COLLOID_BATCHES, TEMPLATES, DEPOSITION_RUNS, SUBSTRATES,
    LINKER_LAYERS, PARTICLE_ATTACHMENTS, QC_RESULTS)}


def export_value(kind: Kind, column: Column, record) -> object:
    """The value a record shows in ``column`` of its kind's sheet (codes for references)."""
    if column.field in kind.export_value:
        value = kind.export_value[column.field](record)
    else:
        value = getattr(record, column.field, None)
    if isinstance(value, Model):
        value = getattr(value, "code", str(value))
    if isinstance(value, list):  # a many-to-many set: in code order, not the database's
        value = "; ".join(sorted(value))
    if isinstance(value, float) and not math.isfinite(value):
        value = None
    return value


def _export_records(kind: Kind):
    """The kind's records in creation order, their parents joined and their sets prefetched
    (a fixed number of queries, whatever the lab's size)."""
    if kind.export_queryset:
        return kind.export_queryset()
    joined, prefetched = [], list(kind.export_prefetch)
    for column in kind.columns:
        if column.type in ("ref", "refs"):
            relation = kind.model._meta.get_field(column.field)
            (prefetched if relation.many_to_many else joined).append(column.field)
    return (kind.model.objects.order_by("id").select_related(*joined)
            .prefetch_related(*prefetched).iterator(chunk_size=2000))


def export_rows(kind: Kind) -> list[list]:
    return [[export_value(kind, column, record) for column in kind.columns]
            for record in _export_records(kind)]


def example_row(kind: Kind) -> list:
    return [column.example.isoformat() if isinstance(column.example, date) else column.example
            for column in kind.columns]
