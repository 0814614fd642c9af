"""import_qc: one JSON object with the stored figures; clear errors and no partial records."""

import json
import math
from io import StringIO

import pytest
from django.core.management import CommandError, call_command

from qc.models import QcMeasurement

from .test_raman_services import GOOD_MAP, QcWorld, map_file, map_heights


@pytest.fixture
def world(chain):
    return QcWorld(chain)


def _run(world, substrate, path, *extra, area=("--assume-surface-area-one",)):
    # The test chain's runs have no chronoamperogram: "assume 1" unless a test says otherwise.
    out = StringIO()
    call_command("import_qc", substrate.code, str(path), "--analyte-lot", world.lot.code,
                 "--laser-nm", "785", "--power-mw", "5", "--integration-s", "2",
                 "--reference", world.reference.code,
                 "--measured-on", world.chain.day(1).isoformat(), "--shared-measurement",
                 "--user", "maker", *area, *extra, stdout=out)
    return out.getvalue()


def _film_from_a_measured_run(chain):
    """A film piece whose run has 600 nm spheres and a chronoamperogram (invented fixture
    made for h/D = 0.5, fixtures/chronoamperograms/README.md), so its film height is known."""
    run, pieces = chain.measured_run()
    run.refresh_from_db()
    return run, chain.release(pieces[0])


def test_the_ef_uses_the_surface_area_derived_from_the_film(world, tmp_path):
    # Raw chronoamperogram → film height → surface-area factor → EF, through import_qc.
    run, film = _film_from_a_measured_run(world.chain)
    path = tmp_path / "map.csv"
    path.write_bytes(GOOD_MAP)
    summary = json.loads(_run(world, film, path, "--json", area=()))
    stored = QcMeasurement.objects.get()
    # Geometry worked by hand here: F = 1 − n·π·h(D − h) + n·2π·(D/2)·h with n = 2/(√3·D²)
    # spheres per area (flat top minus the void openings, plus each void's spherical zone).
    d, h = run.sphere_diameter_nm, run.film_height_nm
    n = 2 / (math.sqrt(3) * d**2)
    expected = 1 - n * math.pi * h * (d - h) + n * 2 * math.pi * (d / 2) * h
    assert stored.surface_area_factor == pytest.approx(expected, rel=1e-9)
    assert 1.7 < stored.surface_area_factor < 2.1  # h/D near 0.5: about 1.9
    assert stored.surface_area_origin.startswith("derived") and run.code in \
        stored.surface_area_origin
    assert summary["surface_area_origin"] == stored.surface_area_origin
    # The same map with the factor assumed 1 gives an EF larger by exactly that factor.
    again = tmp_path / "again.csv"
    again.write_bytes(b"# same map again\n" + GOOD_MAP)
    assumed = json.loads(_run(world, film, again, "--json"))
    assert assumed["surface_area_origin"].startswith("assumed 1")
    assert assumed["enhancement_factor"] / summary["enhancement_factor"] == pytest.approx(
        stored.surface_area_factor, rel=1e-9)
    # The factor's uncertainty (from u(h)) is inside the EF's.
    assert summary["enhancement_factor_u"] / summary["enhancement_factor"] > \
        stored.surface_area_factor_u / stored.surface_area_factor


def test_an_entered_factor_needs_its_source(world, tmp_path):
    path = tmp_path / "map.csv"
    path.write_bytes(GOOD_MAP)
    substrate = world.chain.decorated_substrate()
    with pytest.raises(CommandError, match="surface_area_source"):
        _run(world, substrate, path, area=("--surface-area-factor", "2.5"))
    with pytest.raises(CommandError, match="no film height"):
        _run(world, substrate, path, area=())
    summary = json.loads(_run(world, substrate, path, "--json", area=(
        "--surface-area-factor", "2.5", "--surface-area-source", "Pb underpotential "
        "deposition charge, lab notebook 12")))
    assert summary["surface_area_factor"] == 2.5
    assert summary["surface_area_origin"] == ("entered: Pb underpotential deposition charge, "
                                              "lab notebook 12")
    assert QcMeasurement.objects.count() == 1


def test_json_is_one_object_matching_the_stored_record(world, tmp_path):
    path = tmp_path / "map.csv"
    path.write_bytes(GOOD_MAP)
    substrate = world.chain.decorated_substrate()
    summary = json.loads(_run(world, substrate, path, "--json"))
    stored = QcMeasurement.objects.get()
    assert summary["measurement"] == stored.code and summary["passed"] is True
    assert summary["enhancement_factor"] == stored.enhancement_factor
    assert summary["rsd_percent"] == stored.rsd_percent
    assert summary["n_points"] == 25 and summary["flags"] == []
    assert stored.created_by == world.chain.maker  # the write is the named user's


def test_a_failure_reports_its_flag_and_hold(world, tmp_path):
    path = tmp_path / "patchy.csv"
    path.write_bytes(map_file(map_heights(3000, 0.45, seed=5)))
    substrate = world.chain.decorated_substrate()
    summary = json.loads(_run(world, substrate, path, "--json"))
    assert summary["passed"] is False and summary["substrate_status"] == "quarantine"
    assert [f["target"] for f in summary["flags"]] == [substrate.code]
    text = _run(world, world.chain.decorated_substrate(), path)
    assert ": FAIL" in text and "FLAG" in text


def test_bad_file_is_a_command_error_naming_the_line(world, tmp_path):
    path = tmp_path / "bad.csv"
    path.write_bytes(b"raman_shift_cm1,intensity_counts\n600,1\n602,2\n602,3\n")
    with pytest.raises(CommandError, match="raw_file: line 4"):
        _run(world, world.chain.decorated_substrate(), path)
    assert QcMeasurement.objects.count() == 0


def test_unknown_ids_and_missing_file(world, tmp_path):
    substrate = world.chain.decorated_substrate()
    with pytest.raises(CommandError, match="No such file"):
        _run(world, substrate, tmp_path / "absent.csv")
    path = tmp_path / "map.csv"
    path.write_bytes(GOOD_MAP)
    with pytest.raises(CommandError, match="No substrate has the ID 'SUB-99999'"):
        call_command("import_qc", "SUB-99999", str(path), "--analyte-lot", world.lot.code,
                     "--laser-nm", "785", "--power-mw", "5", "--integration-s", "2",
                     "--user", "maker")
    with pytest.raises(CommandError, match="power_mW"):
        call_command("import_qc", substrate.code, str(path), "--analyte-lot", world.lot.code,
                     "--laser-nm", "785", "--power-mw", "0", "--integration-s", "2",
                     "--measured-on", world.chain.day(1).isoformat(), "--user", "maker")
