"""The arrays an import computed, stored once as a compressed NumPy archive with its digest.

Pages draw a measurement's spectrum, band fit, percentile spread, heat-map and sample
baselines from this archive instead of re-reading the raw file and re-running the pipeline;
the SHA-256 lets a plot be cached by content (ETag) and lets a reader refuse a changed file.
Float arrays are kept as float32 (7 significant digits, far finer than the counts' noise).
"""

from __future__ import annotations

import io

import numpy as np
from django.core.files.base import ContentFile
from django.db import transaction

from inventory.roles import MAKER, require_role
from inventory.services import sha256_of
from inventory.services.toolkit import User, files_removed_if_failed, save_changed
from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import read_spectrum_or_map

from .raman_analysis import analyse

__all__ = ["measurement_results_store", "results_fields"]


def _compact(array) -> np.ndarray:
    array = np.asarray(array)
    return array.astype(np.float32) if array.dtype.kind == "f" else array


def pack_results(arrays: dict) -> bytes:
    """The arrays as a compressed ``.npz`` (no pickled objects, so reading it is safe)."""
    buffer = io.BytesIO()
    np.savez_compressed(buffer, **{name: _compact(value) for name, value in arrays.items()})
    return buffer.getvalue()


def results_fields(arrays: dict, *, filename: str) -> dict:
    """Model fields for the stored results of one import (empty when there are none)."""
    if not arrays:
        return {}
    content = pack_results(arrays)
    stem = filename.rsplit("/", 1)[-1].rsplit(".", 1)[0] or "results"
    return {"results_file": ContentFile(content, name=f"{stem}.npz"),
            "results_sha256": sha256_of(content)}


@transaction.atomic
def measurement_results_store(*, actor: User | None, measurement) -> bool:
    """Store the arrays of a measurement imported before results were stored.

    Re-runs the analysis once on the kept raw file with the stored settings (the same
    figures, so only the arrays are attached; the history notes it).  Returns False when
    the record already has results or its raw file can no longer be read.
    """
    require_role(actor, MAKER, action="Storing QC results")
    measurement = type(measurement).objects.select_for_update().get(pk=measurement.pk)
    if measurement.results_sha256:
        return False
    with measurement.raw_file.open("rb") as handle:
        content = handle.read()
    try:
        data = read_spectrum_or_map(content, measurement.raw_filename)
    except AnalysisInputError:
        return False
    band = analyse(data, band_center_cm1=measurement.band_center_cm1,
                   band_window_cm1=measurement.band_window_cm1, power_mW=measurement.power_mW,
                   integration_s=measurement.integration_s,
                   accumulations=measurement.accumulations)
    for name, value in results_fields(band.arrays, filename=measurement.raw_filename).items():
        setattr(measurement, name, value)
    if hasattr(measurement, "has_heatmap"):
        measurement.has_heatmap = band.map_fields()["has_heatmap"]
    with files_removed_if_failed(measurement):
        save_changed(measurement, actor=actor, reason="Stored the arrays its plots draw.")
    return True
