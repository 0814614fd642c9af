"""import_qc: one JSON object with the stored figures; clear errors and no partial records."""

import json
from io import StringIO

import pytest
from django.core.management import CommandError, call_command

from qc.models import QcMeasurement

from .test_raman_services import GOOD_MAP, QcWorld, map_file, map_heights


@pytest.fixture
def world(chain):
    return QcWorld(chain)


def _run(world, substrate, path, *extra):
    out = StringIO()
    call_command("import_qc", substrate.code, str(path), "--analyte-lot", world.lot.code,
                 "--laser-nm", "785", "--power-mw", "5", "--integration-s", "2",
                 "--reference", world.reference.code,
                 "--measured-on", world.chain.day(1).isoformat(), *extra, stdout=out)
    return out.getvalue()


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
                     "--laser-nm", "785", "--power-mw", "5", "--integration-s", "2")
    with pytest.raises(CommandError, match="power_mW"):
        call_command("import_qc", substrate.code, str(path), "--analyte-lot", world.lot.code,
                     "--laser-nm", "785", "--power-mw", "0", "--integration-s", "2",
                     "--measured-on", world.chain.day(1).isoformat())
