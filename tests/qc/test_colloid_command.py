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
    call_command("import_uvvis", *args, "--user", "maker")
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
    assert record.created_by == chain.maker  # the write is the named user's


def test_text_output_names_the_record_and_size(chain, capsys):
    batch = chain.batch(days_ago=10)
    out = _run(capsys, batch.code, str(UVVIS / "ag_stable_day00.csv"), "--dilution", "10",
               "--path-cm", "1", "--measured-on", chain.day(10).isoformat())
    assert "UV-00001" in out and "size " in out and "Mie" in out


def test_unknown_batch_bad_file_and_wrong_record_kind_fail(chain, tmp_path):
    batch = chain.batch(days_ago=10)
    as_maker = ("--user", chain.maker.username)
    with pytest.raises(CommandError, match="No nanoparticle batch has the ID 'NPB-99999'"):
        call_command("import_uvvis", "NPB-99999", str(UVVIS / "ag_stable_day00.csv"), *as_maker)
    lot = chain.lot("solvent")
    with pytest.raises(CommandError, match=f"No nanoparticle batch has the ID '{lot.code}'"):
        call_command("import_uvvis", lot.code, str(UVVIS / "ag_stable_day00.csv"), *as_maker)
    bad = tmp_path / "bad.csv"
    bad.write_text("wavelength_nm,absorbance\n400,0.5\n401,oops\n")
    with pytest.raises(CommandError, match=r"nothing saved.*bad\.csv, line 3"):
        call_command("import_uvvis", batch.code, str(bad),
                     "--measured-on", chain.day(1).isoformat(), *as_maker)
    with pytest.raises(CommandError, match="Cannot read"):
        call_command("import_uvvis", batch.code, str(tmp_path / "missing.csv"), *as_maker)
    with pytest.raises(CommandError, match="ISO 8601"):
        call_command("import_uvvis", batch.code, str(bad), "--measured-on", "15/06/2026",
                     *as_maker)
    with pytest.raises(CommandError, match="--user"):  # every write names who made it
        call_command("import_uvvis", batch.code, str(UVVIS / "ag_stable_day00.csv"))
    with pytest.raises(CommandError, match="No user is called 'nobody'"):
        call_command("import_uvvis", batch.code, str(UVVIS / "ag_stable_day00.csv"),
                     "--user", "nobody")
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


def _miepython_gold_file(path: Path, diameter_nm: float) -> Path:
    """A single-size gold colloid spectrum computed with miepython alone (its own copy of
    the Johnson & Christy 1972 gold table, water n = 1.333), peak absorbance 0.8."""
    import miepython
    import numpy as np

    blocks = (Path(miepython.__file__).parent / "data" / "Johnson.txt").read_text().split("wl")
    columns = [np.array([line.split() for line in b.splitlines()[1:] if line.strip()], float)
               for b in blocks[1:3]]
    wavelength = np.arange(300.0, 851.0, 1.0)
    n = np.interp(wavelength, columns[0][:, 0] * 1000, columns[0][:, 1])
    k = np.interp(wavelength, columns[1][:, 0] * 1000, columns[1][:, 1])
    q_ext = np.array([miepython.efficiencies(complex(a, -b), diameter_nm, lam, n_env=1.333)[0]
                      for a, b, lam in zip(n, k, wavelength, strict=True)])
    absorbance = 0.8 * q_ext / q_ext.max()
    path.write_text("wavelength_nm,absorbance\n" + "".join(
        f"{lam:.0f},{a:.5f}\n" for lam, a in zip(wavelength, absorbance, strict=True)))
    return path


def test_a_large_gold_colloid_is_kept_unsized_and_flagged(chain, capsys, tmp_path):
    # ~150 nm gold: a broad dipole band beyond the gold peak window with a quadrupole
    # shoulder. It must be recorded, say why no size method applies, and flag the batch.
    batch = chain.s.nanoparticle_batch_make(actor=chain.maker, metal="Au",
                                            synthesis_method="seeded_growth", volume_mL=50,
                                            made_on=chain.day(5))
    path = _miepython_gold_file(tmp_path / "gold_150nm.csv", 150.0)
    payload = json.loads(_run(capsys, batch.code, str(path), "--measured-on",
                              chain.day(1).isoformat(), "--json"))
    record = UvVisRecord.objects.get(code=payload["record"])
    assert record.peak_nm is None and payload["peak_nm"] is None
    assert "ratio and peak-position methods" in record.size_methods_note
    assert record.diameter_nm is None and record.absorbance_450_1cm is not None
    # The Mie fit ends at its 120 nm search bound: no size, the bound said instead.
    assert record.mie_median_diameter_nm is None and record.mie_diameter_bound_nm == 120.0
    assert "outside the fit range" in payload["mie_fit_note"]
    limits = {b["limit"] for b in payload["breaches"]}
    assert {"size_methods", "mie_fit_range"} <= limits
    open_flags = Flag.objects.filter(target_code=batch.code, state="open")
    assert open_flags.count() == len(payload["flags_raised"]) >= 2


def test_a_gold_size_carries_its_uncertainty_end_to_end(chain, capsys, tmp_path):
    # 50 nm gold from miepython, through the command to the stored number: the Haiss
    # peak-position size (above 35 nm) with its 18 % deviation combined with the peak error.
    batch = chain.s.nanoparticle_batch_make(actor=chain.maker, metal="Au",
                                            synthesis_method="citrate", volume_mL=50,
                                            made_on=chain.day(5))
    path = _miepython_gold_file(tmp_path / "gold_50nm.csv", 50.0)
    payload = json.loads(_run(capsys, batch.code, str(path), "--measured-on",
                              chain.day(1).isoformat(), "--json"))
    record = UvVisRecord.objects.get(code=payload["record"])
    assert record.peak_u_nm is not None and 0 < record.peak_u_nm < 2
    assert record.diameter_u_nm >= 0.18 * record.diameter_nm * 0.999
    assert "±" in payload["diameter_text"] and "±" in payload["mie_median_diameter_text"]
    # Mie fit to miepython's own spectrum of 50 nm spheres (bulk constants): within 8 %.
    assert record.mie_median_diameter_nm == pytest.approx(50.0, rel=0.08)
