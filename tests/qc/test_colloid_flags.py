"""Colloid limits: a breach raises an open flag on the batch, which blocks decorated substrates.

Expected stability numbers come from qc.analysis (the pure functions, tested against
published values in tests/analysis) applied to the same files; this layer is tested for the
rule "breach when the value passes the lab's limit", with the limit set either side of it.
"""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path

import numpy as np
import pytest

from inventory.models import Flag
from inventory.readiness import substrate_check_readiness
from qc.analysis.colloid_stability import colloid_snapshot, compare_with_first
from qc.services import colloid_limit_set_set, silver_calibration_record, uvvis_record_import

UVVIS = Path(__file__).resolve().parents[2] / "fixtures" / "uvvis"
GENEROUS = {"peak_min_nm": 380.0, "peak_max_nm": 430.0, "fwhm_max_nm": 60.0,
            "peak_shift_max_nm": 20.0, "absorbance_loss_max_fraction": 0.9,
            "aggregation_index_max": 0.5}


def _change(day: int):
    """Change of ag_ageing day ``day`` versus day 0, from the pure functions."""
    snapshots = []
    for d in (0, day):
        data = np.loadtxt(UVVIS / f"ag_ageing_day{d:02d}.csv", delimiter=",", skiprows=2)
        snapshots.append(colloid_snapshot(data[:, 0], data[:, 1], metal="Ag", day=d,
                                          dilution_factor=10))
    return snapshots[1], compare_with_first(snapshots)[0]


def _limits(chain, **overrides):
    return colloid_limit_set_set(actor=None, metal="Ag", **{**GENEROUS, **overrides})


def _import(chain, batch, day, stem="ag_ageing"):
    name = f"{stem}_day{day:02d}.csv"
    return uvvis_record_import(actor=chain.maker, batch=batch, filename=name,
                               content=(UVVIS / name).read_bytes(),
                               measured_on=batch.made_on + timedelta(days=day),
                               dilution_factor=10)


def _colloid_flags(batch):
    return list(Flag.objects.filter(target_code=batch.code, category="colloid",
                                    state="open").order_by("code"))


@pytest.fixture
def batch(chain):
    return chain.batch(days_ago=40)


@pytest.mark.parametrize("limit, value_of", [
    ("peak_shift_max_nm", lambda snap, change: abs(change.peak_shift_nm)),
    ("absorbance_loss_max_fraction", lambda snap, change: change.absorbance_loss_fraction),
    ("fwhm_max_nm", lambda snap, change: snap.band.fwhm_nm),
    ("aggregation_index_max", lambda snap, change: snap.aggregation_index),
])
@pytest.mark.parametrize("factor, breached", [(0.9, True), (1.1, False)])
def test_each_limit_flags_only_when_passed(chain, batch, limit, value_of, factor, breached):
    snapshot, change = _change(35)
    _limits(chain, **{limit: factor * value_of(snapshot, change)})
    _import(chain, batch, 0)
    result = _import(chain, batch, 35)
    assert [b["limit"] for b in result.breaches] == ([limit] if breached else [])
    assert len(_colloid_flags(batch)) == (1 if breached else 0)
    if breached:
        assert result.flags_raised[0].code == result.breaches[0]["flag_code"]
        assert result.record.code in result.flags_raised[0].message


def test_peak_outside_the_window_is_flagged_on_the_first_record(chain, batch):
    snapshot, _ = _change(35)
    _limits(chain, peak_min_nm=snapshot.band.peak_nm + 5, peak_max_nm=snapshot.band.peak_nm + 30)
    result = _import(chain, batch, 0)
    assert [b["limit"] for b in result.breaches] == ["peak_window_nm"]
    assert len(_colloid_flags(batch)) == 1


def test_without_limits_nothing_is_flagged_and_the_record_says_so(chain, batch):
    _import(chain, batch, 0)
    record = _import(chain, batch, 35).record
    assert record.breaches == [] and "no colloid limits" in record.limits_note
    assert _colloid_flags(batch) == []


def test_a_limit_already_flagged_is_not_flagged_again_until_resolved(chain, batch):
    _, change21 = _change(21)
    _limits(chain, absorbance_loss_max_fraction=0.5 * change21.absorbance_loss_fraction)
    _import(chain, batch, 0)
    first_breach = _import(chain, batch, 21)
    second = _import(chain, batch, 35)
    (flag,) = _colloid_flags(batch)
    assert second.flags_raised == () and second.breaches[0]["flag_code"] == flag.code
    assert second.breaches[0]["flag_raised"] is False
    assert first_breach.flags_raised == (flag,)
    chain.s.flag_resolve(actor=chain.reviewer, flag=flag, resolution="re-made, test")
    # After resolution the same breach is a new deviation: a re-measurement (same data with
    # an added comment line, so a new digest) raises a fresh flag.
    content = b"# re-measured\n" + (UVVIS / "ag_ageing_day35.csv").read_bytes()
    again = uvvis_record_import(actor=chain.maker, batch=batch, filename="again.csv",
                                content=content, measured_on=batch.made_on + timedelta(days=35),
                                dilution_factor=10)
    assert len(again.flags_raised) == 1 and _colloid_flags(batch) == list(again.flags_raised)


def test_size_disagreement_flags_only_when_the_lab_asks(chain, batch):
    # A lab table (invented rows, as from the lab's own TEM sizing) is independent of the
    # Mie model, so the two sizes can be compared.
    silver_calibration_record(actor=None, name="lab TEM", provenance="invented test table",
                              rows=[(395.0, 30.0, 3e10), (405.0, 45.0, 6e10),
                                    (420.0, 65.0, 1e11)])
    _limits(chain, size_tolerance_percent=0.01)  # any difference is beyond ±0.01 %
    record = _import(chain, batch, 0).record
    assert record.sizes_agree is False and record.breaches == []
    _limits(chain, size_tolerance_percent=0.01, flag_size_disagreement=True)
    result = _import(chain, batch, 7)
    assert "size_tolerance_percent" in [b["limit"] for b in result.breaches]


def test_built_in_table_is_not_called_an_agreement(chain, batch):
    # The built-in silver table is computed with the same Mie model as the fit.
    record = _import(chain, batch, 0).record
    assert record.sizes_agree is None and record.calibration_independent is False
    assert "not an independent check" in record.size_agreement_message


def test_an_ageing_record_makes_a_decorated_substrate_not_ready(chain, batch):
    substrate = chain.decorated_substrate(batch=batch)
    _limits(chain, peak_shift_max_nm=3.0, absorbance_loss_max_fraction=0.15,
            fwhm_max_nm=35.0, aggregation_index_max=0.05)
    _import(chain, batch, 0)
    assert substrate_check_readiness(substrate.code).ready
    result = _import(chain, batch, 35)
    readiness = substrate_check_readiness(substrate.code)
    assert not readiness.ready
    flagged = {r.record_code for r in readiness.reasons if r.code == "open_flag"}
    assert flagged == {flag.code for flag in result.flags_raised} and flagged
    assert all(batch.code in r.message for r in readiness.reasons)


def test_the_stable_series_stays_unflagged_with_tight_limits(chain, batch):
    # README.txt: the stable series is "unchanged within noise", so 1 nm / 5 % limits hold.
    _limits(chain, peak_shift_max_nm=1.0, absorbance_loss_max_fraction=0.05, fwhm_max_nm=30.0,
            aggregation_index_max=0.02)
    for day in (0, 7, 21):
        assert _import(chain, batch, day, stem="ag_stable").breaches == ()
    assert _colloid_flags(batch) == []
