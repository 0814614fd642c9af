"""Raman QC imports: stored numbers, the enhancement factor, limits, flags, hold and release.

Files are seeded synthetic spectra (invented): Lorentzian bands on a sloped background with
Gaussian noise.  Benzenethiol band positions 999, 1022, 1073 and 1573 cm⁻¹ are from memory.
Expected numbers come from the pipeline run independently on the same array (the stored
figures must equal it) and from Le Ru's EF definition worked by hand below.
"""

from __future__ import annotations

import io
from datetime import timedelta

import numpy as np
import pytest
from django.core.exceptions import ValidationError
from scipy.constants import Avogadro

from inventory.models import Flag, LineageEdge, Status, StatusChange, Substrate
from inventory.readiness import substrate_check_readiness
from inventory.selectors import record_get_signatures
from inventory.signatures import SignatureIntent
from qc.analysis import qc_pipeline
from qc.models import QcLimitSet, QcMeasurement, ReferenceAnalyte, ReferenceMeasurement
from qc.services import (
    qc_limit_set_define,
    qc_measurement_import,
    reference_analyte_define,
    reference_measurement_import,
    substrate_release,
)
from tests.conftest import PASSWORDS

BAND_CM1 = 1073.0  # benzenethiol ring/C–S band, from memory
SHIFT_CM1 = np.arange(600.0, 1700.0, 2.0)
NEAT_BENZENETHIOL_M = 1.073 / 110.18 * 1000  # density g/mL ÷ molar mass g/mol, from memory


def _lorentz(x, centre, height, fwhm):
    return height / (1 + ((x - centre) / (fwhm / 2)) ** 2)


def synthetic_counts(heights, *, seed=0, centre=BAND_CM1, noise=20.0):
    """Counts for each height: bands of benzenethiol on a sloped background plus noise."""
    rng = np.random.default_rng(seed)
    heights = np.atleast_1d(np.asarray(heights, dtype=float))
    background = 800 + 0.4 * (SHIFT_CM1 - 600)
    bands = (_lorentz(SHIFT_CM1, centre, 1.0, 10.0) + 0.6 * _lorentz(SHIFT_CM1, 999, 1.0, 8.0)
             + 0.4 * _lorentz(SHIFT_CM1, 1573, 1.0, 12.0))
    return background + heights[:, None] * bands + rng.normal(0, noise, (heights.size,
                                                                         SHIFT_CM1.size))


def spectrum_file(height, *, seed=0, centre=BAND_CM1) -> bytes:
    counts = synthetic_counts([height], seed=seed, centre=centre)[0]
    lines = ["raman_shift_cm1,intensity_counts"]
    lines += [f"{x:.1f},{y:.3f}" for x, y in zip(SHIFT_CM1, counts, strict=True)]
    return ("\n".join(lines) + "\n").encode()


def map_heights(mean, rsd, *, n=25, seed=1):
    rng = np.random.default_rng(seed)
    return np.clip(mean * (1 + rsd * rng.standard_normal(n)), mean * 0.05, None)


def map_file(heights, *, seed=2, step_um=2.0) -> bytes:
    side = round(np.sqrt(len(heights)))
    counts = synthetic_counts(heights, seed=seed)
    out = io.StringIO()
    out.write("x_um,y_um," + ",".join(f"{x:.1f}" for x in SHIFT_CM1) + "\n")
    for index, row in enumerate(counts):
        x, y = (index % side) * step_um, (index // side) * step_um
        out.write(f"{x:g},{y:g}," + ",".join(f"{v:.3f}" for v in row) + "\n")
    return out.getvalue().encode()


def parsed_map(content: bytes):
    """The file read back independently of the service (for pipeline comparisons)."""
    text = content.decode().splitlines()
    shift = np.array([float(v) for v in text[0].split(",")[2:]])
    block = np.array([[float(v) for v in line.split(",")] for line in text[1:]])
    return shift, block[:, 2:]


ACQ = dict(laser_nm=785.0, power_mW=5.0, integration_s=2.0, accumulations=1)


class QcWorld:
    """An analyte, its lot, limits for particles and film, a reference measurement."""

    def __init__(self, chain, *, min_ef=1e4, max_rsd=20.0, min_snr=10.0, tolerance=5.0,
                 valid_days=14):
        self.chain = chain
        self.lot = chain.lot("reference_analyte", days_ago=20)
        # The lab's definitions are the administrator's; None is the system acting for them.
        self.analyte = reference_analyte_define(
            actor=None, name="Benzenethiol",
            band_positions_cm1=[999, 1022, 1073, 1573],
            band_positions_source="from memory", qc_band_cm1=BAND_CM1, qc_band_window_cm1=60,
            surface_density_per_nm2=6.8, surface_density_source="from memory",
            lots=[self.lot])
        for kind in ("particles", "film", "linker"):
            qc_limit_set_define(actor=None, product_kind=kind, analyte=self.analyte,
                                min_enhancement_factor=min_ef, max_rsd_percent=max_rsd,
                                min_snr=min_snr, band_position_tolerance_cm1=tolerance,
                                valid_days=valid_days)
        self.reference_content = spectrum_file(400.0, seed=7)
        self.reference = reference_measurement_import(
            actor=chain.maker, analyte_lot=self.lot, filename="neat.csv",
            content=self.reference_content, measured_on=chain.day(3),
            concentration_mol_L=NEAT_BENZENETHIOL_M, effective_height_um=20.0,
            effective_area_um2=1.5, effective_height_rel_u=0.1, **dict(ACQ, power_mW=50.0,
                                                                        integration_s=10.0))

    def measure(self, substrate, content, *, filename="map.csv", days_ago=1, **extra):
        # The test chain's runs have no chronoamperogram, so no film height to derive the
        # surface-area factor from: these tests choose "assume 1" unless they say otherwise.
        # The few fixture maps stand for many substrates' own maps (stated, as the rule asks).
        arguments = dict(ACQ, reference=self.reference, surface_area_assumed_one=True,
                         shared_measurement=True)
        arguments.update(extra)
        return qc_measurement_import(
            actor=self.chain.maker, substrate=substrate, analyte_lot=self.lot,
            filename=filename, content=content, measured_on=self.chain.day(days_ago),
            **arguments)


@pytest.fixture
def world(chain):
    return QcWorld(chain)


GOOD_MAP = map_file(map_heights(3000, 0.08))
FLOAT32_REL = 1e-6  # float32 resolution, 2⁻²³ ≈ 1.2e-7, with room for the arithmetic after it


def test_stored_map_numbers_equal_the_pipeline_on_the_same_file(world):
    # The import reads maps into float32 (7 significant digits), the reference here float64.
    substrate = world.chain.decorated_substrate()
    measurement = world.measure(substrate, GOOD_MAP)
    shift, counts = parsed_map(GOOD_MAP)
    expected = qc_pipeline.analyse_qc_map(shift, counts, band_center_cm1=BAND_CM1,
                                          band_window_cm1=60, power_mW=5.0, integration_s=2.0)
    assert measurement.is_map and measurement.n_points == 25
    assert (measurement.map_nx, measurement.map_ny, measurement.map_step_um) == (5, 5, 2.0)
    assert measurement.rsd_percent == pytest.approx(expected.rsd_percent, rel=FLOAT32_REL)
    assert measurement.fraction_within_20_percent == expected.fraction_within_tolerance
    assert measurement.median_height_counts_per_mW_s == pytest.approx(
        expected.median_height_counts_per_mW_s, rel=FLOAT32_REL)
    assert measurement.normalised_height_counts_per_mW_s == pytest.approx(
        expected.mean_band.height, rel=FLOAT32_REL)
    assert measurement.band_position_cm1 == pytest.approx(expected.mean_band.position_cm1)
    assert measurement.band_fwhm_cm1 == pytest.approx(expected.mean_band.fwhm_cm1)
    assert measurement.snr == pytest.approx(expected.snr)
    assert measurement.spikes_removed == expected.spikes_removed
    assert measurement.point_values["normalised_height_counts_per_mW_s"] == pytest.approx(
        expected.height_per_point.tolist())
    # The heat-map image puts point (x, y) at row y/step, column x/step (file order here).
    assert np.allclose(measurement.point_values["image"]["rows"],
                       expected.height_per_point.reshape(5, 5))
    # Raw file kept as uploaded, with its digest (hashlib, independent of the service).
    import hashlib
    measurement.raw_file.open("rb")
    assert measurement.raw_file.read() == GOOD_MAP
    assert measurement.raw_sha256 == hashlib.sha256(GOOD_MAP).hexdigest()
    assert measurement.passed and measurement.failure_reasons == []


def test_enhancement_factor_recomputed_from_le_ru_definition(world):
    substrate = world.chain.decorated_substrate()
    m = world.measure(substrate, GOOD_MAP)
    ref = world.reference
    # Le Ru et al., J. Phys. Chem. C 2007: SSEF = (I_SERS / N_Surf) / (I_RS / N_Vol).
    # N_Surf = μ_S [nm⁻²] · 10⁶ nm²/µm² · f · A_eff; N_Vol = c · N_A · 10⁻¹⁵ L/µm³ · A_eff · H_eff
    n_surf = 6.8 * 1e6 * 1.0 * 1.5
    n_vol = NEAT_BENZENETHIOL_M * Avogadro * 1e-15 * 1.5 * 20.0
    ef = (m.normalised_height_counts_per_mW_s / n_surf) / (
        ref.normalised_height_counts_per_mW_s / n_vol)
    assert m.enhancement_factor == pytest.approx(ef, rel=1e-9)
    assert m.log10_enhancement_factor == pytest.approx(np.log10(ef), rel=1e-9)
    # Relative uncertainties add in quadrature (GUM §5.1.6); H_eff carries 10 %.
    u_rel = np.sqrt(0.1 ** 2 + (m.normalised_height_u_counts_per_mW_s
                                / m.normalised_height_counts_per_mW_s) ** 2
                    + (ref.normalised_height_u_counts_per_mW_s
                       / ref.normalised_height_counts_per_mW_s) ** 2)
    assert m.enhancement_factor_u == pytest.approx(ef * u_rel, rel=1e-6)
    assert m.log10_enhancement_factor_u == pytest.approx(u_rel / np.log(10), rel=1e-6)
    assert m.ef_inputs["reference_code"] == ref.code
    assert m.ef_inputs["surface_density_per_nm2"] == 6.8


def test_a_limit_set_on_band_area_gives_an_area_ef_and_area_uniformity(world):
    # Labs report EFs from band heights or integrated areas (common practice); the limit set
    # chooses, and each stored EF says which.
    qc_limit_set_define(actor=None, product_kind="particles", analyte=world.analyte,
                        min_enhancement_factor=1e4, max_rsd_percent=20.0, min_snr=10.0,
                        band_position_tolerance_cm1=5.0, valid_days=14,
                        intensity_measure="area")
    substrate = world.chain.decorated_substrate()
    m = world.measure(substrate, GOOD_MAP)
    ref = world.reference
    assert m.intensity_measure == "area" and m.ef_inputs["intensity_measure"] == "area"
    # Le Ru et al. 2007 with areas on both sides (same N_Surf and N_Vol as for heights).
    n_surf = 6.8 * 1e6 * 1.0 * 1.5
    n_vol = NEAT_BENZENETHIOL_M * Avogadro * 1e-15 * 1.5 * 20.0
    ef = (m.normalised_area_counts_cm1_per_mW_s / n_surf) / (
        ref.normalised_area_counts_cm1_per_mW_s / n_vol)
    assert m.enhancement_factor == pytest.approx(ef, rel=1e-9)
    # Uniformity from the per-point areas: RSD recomputed here (sample SD, ddof = 1).
    areas = np.asarray(m.point_values["normalised_area_counts_cm1_per_mW_s"])
    assert m.rsd_percent == pytest.approx(100 * areas.std(ddof=1) / areas.mean(), rel=1e-9)


def test_single_spectrum_is_stored_like_the_pipeline_result(world):
    substrate = world.chain.decorated_substrate()
    content = spectrum_file(3000, seed=4)
    m = world.measure(substrate, content, filename="one.csv")
    counts = synthetic_counts([3000], seed=4)[0]
    expected = qc_pipeline.analyse_qc_spectrum(
        SHIFT_CM1, np.round(counts, 3), band_center_cm1=BAND_CM1, band_window_cm1=60,
        power_mW=5.0, integration_s=2.0)
    assert not m.is_map and m.rsd_percent is None and m.point_values is None
    assert m.normalised_height_counts_per_mW_s == pytest.approx(expected.band.height, rel=1e-9)
    assert m.normalised_area_counts_cm1_per_mW_s == pytest.approx(expected.band.area, rel=1e-9)
    assert m.passed  # RSD limit applies to maps only


def test_failed_qc_flags_and_holds_a_released_substrate(world):
    substrate = world.chain.decorated_substrate()
    assert substrate.status == Status.RELEASED
    bad = map_file(map_heights(3000, 0.45, seed=5))
    m = world.measure(substrate, bad)
    assert not m.passed and any("RSD" in reason for reason in m.failure_reasons)
    substrate.refresh_from_db()
    assert substrate.status == Status.QUARANTINE
    change = StatusChange.objects.get(record_code=substrate.code, to_status="quarantine")
    assert m.code in change.reason
    flag = Flag.objects.get(target_code=substrate.code, category="qc")
    assert flag.state == "open" and m.code in flag.message
    # Lineage: substrate, analyte lot and reference are parents of the measurement.
    parents = set(LineageEdge.objects.filter(child_code=m.code)
                  .values_list("parent_code", flat=True))
    assert parents == {substrate.code, world.lot.code, world.reference.code}


def test_release_only_after_a_passing_latest_qc(world):
    chain = world.chain
    _, (piece,) = chain.run(pieces=1)  # a quarantined film
    with pytest.raises(ValidationError) as missing:
        substrate_release(actor=chain.reviewer, substrate=piece)
    assert missing.value.error_dict["substrate"][0].code == "qc_missing"
    world.measure(piece, map_file(map_heights(3000, 0.45, seed=5)))
    with pytest.raises(ValidationError) as failed:
        substrate_release(actor=chain.reviewer, substrate=piece)
    assert failed.value.error_dict["substrate"][0].code == "qc_failed"
    world.measure(piece, GOOD_MAP, days_ago=0)
    with pytest.raises(ValidationError) as flagged:  # the failure's flag is still open
        substrate_release(actor=chain.reviewer, substrate=piece)
    assert flagged.value.error_dict["substrate"][0].code == "open_flag"
    flag = Flag.objects.get(target_code=piece.code)
    chain.s.flag_resolve(actor=chain.reviewer, flag=flag, resolution="Re-measured; passes.")

    signed = SignatureIntent(password=PASSWORDS["reviewer"], meaning="approved")
    released = substrate_release(actor=chain.reviewer, substrate=piece, signature=signed)
    assert released.status == Status.RELEASED
    reason = StatusChange.objects.filter(record_code=piece.code).last().reason
    assert "signed: approved" in reason and "passed" in reason
    (signature,) = record_get_signatures(piece)
    assert (signature.meaning, signature.signer_username) == ("approved", "reviewer")


# --- limits at their boundaries (inclusive: a value exactly at the limit passes) ----------


def _limits_at(world, **values):
    limits = QcLimitSet.objects.get(product_kind="particles", analyte=world.analyte)
    fields = dict(min_enhancement_factor=limits.min_enhancement_factor,
                  max_rsd_percent=limits.max_rsd_percent, min_snr=limits.min_snr,
                  band_position_tolerance_cm1=limits.band_position_tolerance_cm1,
                  valid_days=limits.valid_days)
    fields.update(values)
    qc_limit_set_define(actor=None, product_kind="particles", analyte=world.analyte, **fields)


def _measure_twice_around(world, metric, limit_name, *, pass_factor, fail_factor):
    """Measure once to learn the value, then set the limit exactly at it and just beyond."""
    substrate = world.chain.decorated_substrate()
    first = world.measure(substrate, GOOD_MAP)
    value = getattr(first, metric)
    _limits_at(world, **{limit_name: value * pass_factor})
    at_limit = world.measure(world.chain.decorated_substrate(), GOOD_MAP)
    _limits_at(world, **{limit_name: value * fail_factor})
    beyond = world.measure(world.chain.decorated_substrate(), GOOD_MAP)
    return at_limit, beyond


@pytest.mark.parametrize("metric, limit_name, pass_factor, fail_factor", [
    ("enhancement_factor", "min_enhancement_factor", 1.0, 1.0 + 1e-9),
    ("rsd_percent", "max_rsd_percent", 1.0, 1.0 - 1e-9),
    ("snr", "min_snr", 1.0, 1.0 + 1e-9),
])
def test_limits_are_inclusive_at_the_boundary(world, metric, limit_name, pass_factor,
                                              fail_factor):
    at_limit, beyond = _measure_twice_around(world, metric, limit_name,
                                             pass_factor=pass_factor, fail_factor=fail_factor)
    assert at_limit.passed, at_limit.failure_reasons
    assert not beyond.passed and len(beyond.failure_reasons) == 1


def test_band_position_tolerance_boundary(world):
    substrate = world.chain.decorated_substrate()
    first = world.measure(substrate, GOOD_MAP)
    offset = abs(first.band_position_cm1 - BAND_CM1)
    _limits_at(world, band_position_tolerance_cm1=offset)
    assert world.measure(world.chain.decorated_substrate(), GOOD_MAP).passed
    _limits_at(world, band_position_tolerance_cm1=offset * (1 - 1e-6))
    assert not world.measure(world.chain.decorated_substrate(), GOOD_MAP).passed


def test_a_shifted_band_fails_the_position_tolerance(world):
    shifted = spectrum_file(3000, seed=3, centre=BAND_CM1 + 12)
    m = world.measure(world.chain.decorated_substrate(), shifted, filename="s.csv")
    assert not m.passed and "cm⁻¹ from 1073" in m.failure_reasons[0]


def test_no_reference_means_no_ef_and_a_fail_when_ef_is_required(world):
    m = world.measure(world.chain.decorated_substrate(), GOOD_MAP, reference=None)
    assert m.enhancement_factor is None and not m.passed
    assert "reference measurement" in m.failure_reasons[0]


# --- refused input saves nothing ------------------------------------------------------------


def _counts():
    return {model: model.objects.count() for model in (
        QcMeasurement, ReferenceMeasurement, Flag, LineageEdge, StatusChange, Substrate,
        ReferenceAnalyte, QcLimitSet)}


def _bad_map_rows_of_different_length() -> bytes:
    lines = GOOD_MAP.decode().splitlines()
    lines[3] = ",".join(lines[3].split(",")[:-5])
    return ("\n".join(lines) + "\n").encode()


def _spectrum_lines(edit) -> bytes:
    lines = spectrum_file(3000).decode().splitlines()
    edit(lines)
    return ("\n".join(lines) + "\n").encode()


@pytest.mark.parametrize("content, field, fragment", [
    (b"", "raw_file", "empty"),
    (_spectrum_lines(lambda ls: ls.__setitem__(10, "618.0,nan")), "raw_file", "line 11"),
    (_spectrum_lines(lambda ls: ls.__setitem__(10, ls[9])), "raw_file", "line 11"),
    (_spectrum_lines(lambda ls: ls.__setitem__(10, "500.0,900")), "raw_file", "line 11"),
    (_bad_map_rows_of_different_length(), "raw_file", "line 4"),
    (("raman_shift_cm1,intensity_counts\n" + "\n".join(
        f"{x},{900 + x}" for x in range(100, 400))).encode(), "raw_file", "outside"),
])
def test_bad_files_are_refused_naming_the_line_and_nothing_is_saved(world, content, field,
                                                                    fragment):
    substrate = world.chain.decorated_substrate()
    before = _counts()
    with pytest.raises(ValidationError) as refused:
        world.measure(substrate, content, filename="bad.csv")
    message = " ".join(refused.value.message_dict[field])
    assert fragment in message
    assert _counts() == before
    assert Substrate.objects.get(pk=substrate.pk).status == Status.RELEASED


@pytest.mark.parametrize("override, field", [
    ({"power_mW": 0.0}, "power_mW"),
    ({"power_mW": -1.0}, "power_mW"),
    ({"integration_s": 0.0}, "integration_s"),
    ({"integration_s": float("nan")}, "integration_s"),
    ({"accumulations": 0}, "accumulations"),
    ({"laser_nm": 0.0}, "laser_nm"),
])
def test_bad_values_are_refused_by_field_and_nothing_is_saved(world, override, field):
    substrate = world.chain.decorated_substrate()
    before = _counts()
    with pytest.raises(ValidationError) as refused:
        world.measure(substrate, GOOD_MAP, **override)
    assert field in refused.value.message_dict
    assert _counts() == before


def test_a_failure_is_all_or_nothing_with_the_flag(world, monkeypatch):
    """If raising the flag fails, the measurement is not left behind (single transaction)."""
    from qc.services import raman

    def broken(**kwargs):
        raise ValidationError({"message": "simulated"})

    monkeypatch.setattr(raman, "flag_raise", broken)
    substrate = world.chain.decorated_substrate()
    before = _counts()
    with pytest.raises(ValidationError):
        world.measure(substrate, map_file(map_heights(3000, 0.45, seed=5)))
    assert _counts() == before


def test_future_date_and_wrong_lot_kind_are_refused(world):
    substrate = world.chain.decorated_substrate()
    with pytest.raises(ValidationError) as future:
        world.measure(substrate, GOOD_MAP, days_ago=-1)
    assert "measured_on" in future.value.message_dict
    with pytest.raises(ValidationError) as kind:
        qc_measurement_import(actor=None, substrate=substrate,
                              analyte_lot=world.chain.lot("solvent"), filename="m.csv",
                              content=GOOD_MAP, measured_on=world.chain.day(1), **ACQ)
    assert "analyte_lot" in kind.value.message_dict


def test_no_limit_set_for_the_stage_is_refused(world):
    QcLimitSet.objects.filter(product_kind="particles").delete()
    with pytest.raises(ValidationError) as refused:
        world.measure(world.chain.decorated_substrate(), GOOD_MAP)
    assert refused.value.error_dict["substrate"][0].code == "no_limits"


def test_readiness_after_a_failure_shows_qc_failed_and_the_flag(world, settings):
    settings.SERSLEDGER_READINESS_PROVIDERS = ["qc.readiness.qc_reasons"]
    substrate = world.chain.decorated_substrate()
    world.measure(substrate, map_file(map_heights(3000, 0.45, seed=5)))
    codes = sorted(r.code for r in substrate_check_readiness(substrate.code).reasons)
    assert codes == ["open_flag", "qc_failed", "status_quarantine"]
    assert world.chain.today - timedelta(days=1) == QcMeasurement.objects.get().measured_on
