"""Stored results: an import writes the arrays pages draw once; plots read them, not the file.

Independent checks: the heat-map equals the per-point heights placed on the grid, the
median spectrum equals numpy's median of the sampled processed spectra, and the stored
digest equals hashlib's SHA-256 of the stored file (Python standard library).
"""

from __future__ import annotations

import hashlib
import importlib

import numpy as np
import pytest
from django.core.management import call_command

from qc.analysis import qc_pipeline
from qc.analysis.readers import read_map
from qc.models import QcMeasurement
from qc.selectors import measurement_get_stored_results
from tests.qc_lab import RAMAN, QcLab


@pytest.fixture
def lab(chain, administrator):
    return QcLab(chain, administrator)


@pytest.fixture
def measured(lab):
    return lab.measure(lab.chain.decorated_substrate(), "good_substrate_map.csv")


def test_a_map_import_stores_its_arrays_with_their_digest(measured):
    with measured.results_file.open("rb") as handle:
        assert hashlib.sha256(handle.read()).hexdigest() == measured.results_sha256
    stored = measurement_get_stored_results(measured)
    heights = np.asarray(measured.point_values["normalised_height_counts_per_mW_s"])
    assert stored["height_per_point"] == pytest.approx(heights, rel=1e-6)
    image = np.asarray(measured.point_values["image"]["rows"])
    assert measured.has_heatmap and stored["heatmap"].shape == (measured.map_ny, measured.map_nx)
    np.testing.assert_allclose(stored["heatmap"], image, rtol=1e-6)
    assert stored["spectrum"].dtype == np.float32
    assert stored["sample_baselines"].shape == stored["sample_spectra"].shape


def test_percentile_spectra_of_identical_points_equal_the_mean_spectrum():
    """Every percentile of n copies of one value is that value (definition of a percentile)."""
    raman_map = read_map((RAMAN / "good_substrate_map.csv").read_bytes())
    copies = np.repeat(raman_map.intensity[:1], 30, axis=0)
    result = qc_pipeline.analyse_qc_map(raman_map.shift_cm1, copies, band_center_cm1=1073.0,
                                        band_window_cm1=40.0, power_mW=2.0, integration_s=1.0)
    assert result.percentile_spectra.shape == (len(result.percentile_q), copies.shape[1])
    for row in result.percentile_spectra:
        np.testing.assert_allclose(row, result.mean_spectrum, rtol=1e-9, atol=1e-9)
    baseline_removed = (result.sample_spectra - result.sample_baselines)[0]
    np.testing.assert_allclose(baseline_removed, result.mean_spectrum, rtol=1e-9, atol=1e-9)


def test_a_changed_archive_is_refused(measured):
    measured.results_sha256 = "0" * 64
    with pytest.raises(ValueError, match="SHA-256"):
        measurement_get_stored_results(measured)


def test_the_plot_reads_stored_results_and_is_cached_by_digest(measured, client, maker,
                                                               monkeypatch):
    review = importlib.import_module("bench.views.review")

    def no_rerun(*args, **kwargs):
        raise AssertionError("the plot re-ran the pipeline")

    monkeypatch.setattr(review, "_raman_rerun", no_rerun)
    client.force_login(maker)
    first = client.get(f"/plots/raman/{measured.code}.svg")
    assert first.status_code == 200 and first["ETag"]
    assert b"<svg" in first.content
    again = client.get(f"/plots/raman/{measured.code}.svg", HTTP_IF_NONE_MATCH=first["ETag"])
    assert again.status_code == 304
    heatmap = client.get(f"/plots/heatmap/{measured.code}.svg")
    assert heatmap.status_code == 200 and heatmap["ETag"] != first["ETag"]


def test_the_command_stores_results_for_records_made_before(measured, lab):
    QcMeasurement.objects.filter(pk=measured.pk).update(results_sha256="", results_file="")
    lab.reference.__class__.objects.filter(pk=lab.reference.pk).update(
        results_sha256="", results_file="")
    call_command("store_qc_results", "--user", lab.chain.maker.username)
    measured.refresh_from_db()
    lab.reference.refresh_from_db()
    assert measured.results_sha256 and lab.reference.results_sha256
    assert measurement_get_stored_results(measured)["heatmap"].shape == (
        measured.map_ny, measured.map_nx)
