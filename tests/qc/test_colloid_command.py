"""import_uvvis on the command line, and the colloid demo on top of the inventory demo."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from django.core.management import call_command
from django.core.management.base import CommandError

from inventory.demo import load_inventory_demo
from inventory.models import Flag
from inventory.readiness import substrate_check_readiness
from qc.demo_colloid import UVVIS_DEMO_SERIES, load_colloid_demo
from qc.models import ColloidLimitSet, UvVisRecord

UVVIS = Path(__file__).resolve().parents[2] / "fixtures" / "uvvis"


def _run(capsys, *args):
    call_command("import_uvvis", *args)
    return capsys.readouterr().out


def test_json_prints_one_object_with_the_stored_numbers(chain, capsys):
    batch = chain.batch(days_ago=10)
    out = _run(capsys, batch.code, str(UVVIS / "ag_stable_day00.csv"), "--dilution", "10",
               "--measured-on", chain.day(10).isoformat(), "--json")
    payload = json.loads(out)  # exactly one JSON document, nothing else on stdout
    record = UvVisRecord.objects.get()
    assert payload["record"] == record.code and payload["duplicate"] is False
    assert payload["peak_nm"] == record.peak_nm and payload["diameter_nm"] == record.diameter_nm
    assert payload["sha256"] == record.raw_sha256 and payload["breaches"] == []
    again = json.loads(_run(capsys, batch.code.lower(), str(UVVIS / "ag_stable_day00.csv"),
                            "--dilution", "10", "--measured-on", chain.day(10).isoformat(),
                            "--json"))
    assert again["duplicate"] is True and again["record"] == record.code


def test_text_output_names_the_record_and_size(chain, capsys):
    batch = chain.batch(days_ago=10)
    out = _run(capsys, batch.code, str(UVVIS / "ag_stable_day00.csv"), "--dilution", "10",
               "--path-cm", "1", "--measured-on", chain.day(10).isoformat())
    assert "UV-00001" in out and "size " in out and "Mie" in out


def test_unknown_batch_bad_file_and_wrong_record_kind_fail(chain, tmp_path):
    batch = chain.batch(days_ago=10)
    with pytest.raises(CommandError, match="No record"):
        call_command("import_uvvis", "NPB-99999", str(UVVIS / "ag_stable_day00.csv"))
    lot = chain.lot("solvent")
    with pytest.raises(CommandError, match="not a nanoparticle batch"):
        call_command("import_uvvis", lot.code, str(UVVIS / "ag_stable_day00.csv"))
    bad = tmp_path / "bad.csv"
    bad.write_text("wavelength_nm,absorbance\n400,0.5\n401,oops\n")
    with pytest.raises(CommandError, match=r"nothing saved.*bad\.csv, line 3"):
        call_command("import_uvvis", batch.code, str(bad),
                     "--measured-on", chain.day(1).isoformat())
    with pytest.raises(CommandError, match="Cannot read"):
        call_command("import_uvvis", batch.code, str(tmp_path / "missing.csv"))
    with pytest.raises(CommandError, match="ISO 8601"):
        call_command("import_uvvis", batch.code, str(bad), "--measured-on", "15/06/2026")
    assert UvVisRecord.objects.count() == 0


def test_colloid_demo_flags_only_the_ageing_batch(db, today):
    scenario = load_inventory_demo(today=today)
    before = {name: substrate_check_readiness(s.code).ready
              for name, s in scenario.substrates.items()}
    load_colloid_demo(scenario)
    assert set(ColloidLimitSet.objects.values_list("is_example", flat=True)) == {True}
    for name, (_, _, days) in UVVIS_DEMO_SERIES.items():
        batch = scenario.batches[name]
        records = UvVisRecord.objects.filter(batch=batch).order_by("measured_on")
        assert [r.age_days for r in records] == list(days)
        assert records.last().measured_on == today  # the series runs up to today
    uv_flags = Flag.objects.filter(category="colloid", message__startswith="UV-vis")
    assert {f.target_code for f in uv_flags} == {scenario.batches["silver_ageing"].code}
    # The good batches' substrates keep their verdict; the ageing batch's gain UV-vis reasons.
    for name in ("ready_a", "flat_gold"):
        assert substrate_check_readiness(scenario.substrates[name].code).ready == before[name]
    assert before["ready_a"] is True
    blocked = substrate_check_readiness(scenario.substrates["old_linker"].code)
    assert {f.code for f in uv_flags} <= {r.record_code for r in blocked.reasons}
