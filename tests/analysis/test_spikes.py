"""Tests for qc.analysis.spikes (Whitaker & Hayes 2018 despiking)."""

import numpy as np
import pytest

from qc.analysis.errors import AnalysisInputError
from qc.analysis.spikes import modified_z_score_of_difference, remove_spikes


def _lorentzian(x, x0, height, fwhm):
    return height / (1 + ((x - x0) / (fwhm / 2)) ** 2)


def _clean_spectrum(rng, n=600):
    x = np.linspace(400, 1700, n)
    truth = 1500 + 0.4 * (x - 400) + _lorentzian(x, 1075, 2000, 12) + _lorentzian(x, 1580, 1200, 14)
    return x, truth, truth + rng.normal(0, 25, n)


def test_modified_z_score_matches_hand_formula():
    # Whitaker & Hayes 2018: z = 0.6745 (Δx − median Δx) / MAD, recomputed here by hand.
    y = np.array([1.0, 2.0, 4.0, 7.0, 8.0, 30.0, 9.0])
    delta = np.diff(y)  # [1, 2, 3, 1, 22, -21]
    med = np.median(delta)  # 1.5
    mad = np.median(np.abs(delta - med))  # median of [0.5,0.5,1.5,0.5,20.5,22.5] = 1.0
    assert mad == 1.0
    np.testing.assert_allclose(modified_z_score_of_difference(y), 0.6745 * (delta - 1.5) / 1.0)


def test_planted_spikes_are_found_and_repaired():
    rng = np.random.default_rng(7)
    x, truth, noisy = _clean_spectrum(rng)
    spiked = noisy.copy()
    planted = [50, 201, 202, 420]  # a one-point, a two-point and another one-point spike
    spiked[[50, 201, 202, 420]] += [9000, 6000, 7000, 12000]
    result = remove_spikes(spiked)
    found = np.flatnonzero(result.spike_mask)
    assert set(planted) <= set(found)
    # widened by one point each side (default widen_points=1), nothing else flagged
    assert set(found) <= {p + d for p in planted for d in (-1, 0, 1)}
    # repaired values are within a few noise SDs (25 counts) of the truth near the spikes
    near = sorted({p + d for p in planted for d in (-1, 0, 1)})
    assert np.max(np.abs(result.cleaned[near] - truth[near])) < 5 * 25
    # points away from spikes are untouched
    away = np.setdiff1d(np.arange(x.size), near)
    np.testing.assert_array_equal(result.cleaned[away], spiked[away])
    assert result.replaced_count == found.size


def test_clean_spectrum_with_strong_bands_is_unchanged():
    rng = np.random.default_rng(3)
    _, _, noisy = _clean_spectrum(rng)
    result = remove_spikes(noisy)
    assert result.replaced_count == 0
    np.testing.assert_array_equal(result.cleaned, noisy)


def test_map_is_processed_row_by_row_identically():
    rng = np.random.default_rng(11)
    rows = []
    for k in range(6):
        _, _, noisy = _clean_spectrum(rng)
        if k % 2 == 0:
            noisy[100 + 30 * k] += 8000
        rows.append(noisy)
    stack = np.array(rows)
    whole = remove_spikes(stack)
    for k, row in enumerate(stack):
        single = remove_spikes(row)
        np.testing.assert_array_equal(whole.cleaned[k], single.cleaned)
        assert whole.replaced_per_spectrum[k] == single.replaced_count
    assert list(whole.replaced_per_spectrum > 0) == [True, False, True, False, True, False]


@pytest.mark.parametrize(
    "kwargs, field",
    [
        ({"threshold": 0}, "threshold"),
        ({"widen_points": -1}, "widen_points"),
        ({"replace_window_points": 0}, "replace_window_points"),
    ],
)
def test_bad_parameters_name_the_field(kwargs, field):
    with pytest.raises(AnalysisInputError) as err:
        remove_spikes(np.ones(50), **kwargs)
    assert err.value.field == field


def test_nan_is_refused():
    values = np.ones(50)
    values[3] = np.nan
    with pytest.raises(AnalysisInputError) as err:
        remove_spikes(values)
    assert err.value.field == "intensity"


@pytest.mark.parametrize("where", ["first", "last"])
@pytest.mark.parametrize("width", [1, 2])
def test_spike_on_the_first_or_last_points_is_found_and_repaired(where, width):
    # Whitaker & Hayes 2018 flag every point whose first difference has |z| > threshold;
    # a cosmic ray on the edge pixel(s) has only one jump inside the spectrum, and must
    # still be found and replaced by the mean of its clean neighbours.
    rng = np.random.default_rng(21)
    _, truth, noisy = _clean_spectrum(rng)
    planted = list(range(width)) if where == "first" else list(range(-width, 0))
    planted = [p % noisy.size for p in planted]
    spiked = noisy.copy()
    spiked[planted] += 9000
    result = remove_spikes(spiked)
    found = set(np.flatnonzero(result.spike_mask))
    assert set(planted) <= found
    edge = {p + d for p in planted for d in (-1, 0, 1)} & set(range(noisy.size))
    assert found <= edge  # widened by one point, nothing else
    assert np.max(np.abs(result.cleaned[planted] - truth[planted])) < 5 * 25


def test_band_cut_by_the_spectrum_edge_is_not_a_spike():
    # A strong narrow band whose maximum is the first point: its flank falls over several
    # similar differences, unlike a one-step cosmic ray, so nothing is replaced.
    rng = np.random.default_rng(5)
    x = np.linspace(1075, 1700, 300)
    y = 1500 + _lorentzian(x, 1075, 6000, 12) + rng.normal(0, 25, x.size)
    for values in (y, y[::-1]):
        assert remove_spikes(values).replaced_count == 0


def test_interior_spike_near_the_edge_does_not_grow_into_an_edge_spike():
    rng = np.random.default_rng(8)
    _, _, noisy = _clean_spectrum(rng)
    spiked = noisy.copy()
    spiked[2] += 9000  # one-point spike two points from the start
    found = set(np.flatnonzero(remove_spikes(spiked).spike_mask))
    assert found == {1, 2, 3}


def test_threaded_row_blocks_give_the_same_mask(monkeypatch):
    from qc.analysis import spikes

    rng = np.random.default_rng(30)
    rows = []
    for k in range(40):
        _, _, noisy = _clean_spectrum(rng)
        noisy[(37 * k) % noisy.size] += 8000 * (k % 3 == 0)
        rows.append(noisy)
    stack = np.array(rows)
    single = remove_spikes(stack)
    monkeypatch.setattr(spikes, "_ROWS_PER_THREAD", 7)  # several blocks on several threads
    threaded = remove_spikes(stack)
    np.testing.assert_array_equal(threaded.spike_mask, single.spike_mask)
    np.testing.assert_array_equal(threaded.cleaned, single.cleaned)
    assert single.replaced_count > 0
