"""Deposition runs compute their film height from the chronoamperogram, and flag off-target runs.

The fixture files are invented (fixtures/chronoamperograms/README.md): made for h/D = 0.50 and
0.30 with Au(I), 600 nm spheres, 1.00 cm², cathodic negative.  Their generator works the
charge out from the geometry without the project's code, so it is an outside check here.
"""

from __future__ import annotations

import hashlib
import io
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import periodictable
import pytest
from django.apps import apps
from django.core.exceptions import ValidationError
from django.core.management import CommandError, call_command
from scipy import constants

from inventory.models import DepositionRun, Flag, Substrate
from inventory.physics.chronoamperogram import parse_chronoamperogram
from inventory.physics.electrodeposition import analyse_deposition
from inventory.readiness import substrate_check_readiness

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "chronoamperograms"
#: Gold at 20 °C, CRC Handbook of Chemistry and Physics.
GOLD_DENSITY_CRC_G_CM3 = 19.32
ON_TARGET = FIXTURES / "au_600nm_hd050.csv"
OFF_TARGET = FIXTURES / "au_600nm_hd030.txt"
FARADAY_C_MOL = constants.value("Faraday constant")  # CODATA via scipy.constants


def _counts() -> dict[str, int]:
    """Rows of every inventory model, to prove a refused import saved nothing."""
    return {model.__name__: model.objects.count()
            for model in apps.get_app_config("inventory").get_models()}


def _spheres_600(chain):
    lot = chain.s.sphere_lot_receive(actor=chain.maker, material="polystyrene",
                                     nominal_diameter_nm=600, solids_percent_w_v=10,
                                     received_on=chain.day(30))
    return chain.release(lot)


def _run_kwargs(chain, **extra):
    kwargs = {"actor": chain.maker, "template": chain.template(spheres=_spheres_600(chain)),
              "bath_lot": chain.lot("plating_bath"), "metal": "Au", "electrons_per_atom": 1,
              "mode": "potentiostatic", "electrode_area_cm2": 1.0, "made_on": chain.day(9),
              "pieces": 2, "target_height_over_diameter": 0.5}
    kwargs.update(extra)
    return kwargs


@pytest.fixture
def run(chain):
    run, _ = chain.s.deposition_run_record(**_run_kwargs(chain))
    return run


def _attach(chain, run, path=ON_TARGET, **options):
    return chain.s.deposition_run_attach_chronoamperogram(
        actor=chain.maker, run=run, filename=path.name, content=path.read_bytes(), **options)


def _csv(rows, header="time/s,current/mA") -> bytes:
    return (header + "\n" + "\n".join(f"{t},{i}" for t, i in rows) + "\n").encode()


# ------------------------------------------------------------------ stored numbers


def test_stored_numbers_are_the_analysis_of_the_stored_file(chain, run):
    result = _attach(chain, run)
    run.refresh_from_db()
    content = ON_TARGET.read_bytes()
    # The file is kept as uploaded, with its SHA-256 (hashlib, FIPS 180-4).
    assert run.chronoamperogram.read() == content
    assert run.chronoamperogram_sha256 == hashlib.sha256(content).hexdigest()
    assert run.chronoamperogram_name == ON_TARGET.name
    # Same numbers as the pure functions on the same file.
    parsed = parse_chronoamperogram(content.decode())
    expected = analyse_deposition(time_s=parsed.time_s, current_A=parsed.current_A,
                                  electrode_area_cm2=1.0, metal="Au", electrons_per_atom=1,
                                  sphere_diameter_nm=600.0)
    assert run.charge_C == expected.charge_C
    assert run.metal_volume_cm3 == expected.metal_volume_cm3
    assert run.equivalent_thickness_nm == expected.equivalent_thickness_nm
    assert run.film_height_nm == expected.film_height_nm
    assert run.height_over_diameter == expected.height_over_diameter
    assert (run.sphere_diameter_nm, run.cathodic_sign) == (600.0, "negative")
    assert (run.charge_start_s, run.charge_end_s) == (0.0, 300.0)  # the file's 0–300 s
    assert (run.time_unit, run.current_unit) == ("s", "mA")
    # The file was made for h/D = 0.50 (generate.py, independent geometry); rounding of the
    # exported digits moves it by far less than 1e-3.
    assert run.height_over_diameter == pytest.approx(0.50, abs=1e-3)
    assert result.flags == () and not Flag.objects.exists()


def test_faraday_hand_check_on_a_constant_current(chain):
    """Flat film, −1 mA for 10 s: Q = I·t = 0.01 C; V = Q·M/(z·F·ρ) (Faraday's law)."""
    run, _ = chain.s.deposition_run_record(
        actor=chain.maker, base_slide_lot=chain.lot("base_slide"),
        bath_lot=chain.lot("plating_bath"), metal="Au", electrons_per_atom=1,
        mode="galvanostatic", electrode_area_cm2=2.0, made_on=chain.day(1), pieces=1,
        chronoamperogram=("flat.csv", _csv([(t, -1.0) for t in range(11)])))
    # Molar mass from periodictable; density 19.32 g/cm³ at 20 °C (CRC Handbook of Chemistry
    # and Physics; periodictable rounds it to 19.3).
    volume_cm3 = 0.01 * periodictable.Au.mass / (1 * FARADAY_C_MOL * GOLD_DENSITY_CRC_G_CM3)
    assert run.charge_C == pytest.approx(0.01, rel=1e-12)
    assert run.metal_volume_cm3 == pytest.approx(volume_cm3, rel=1e-12)
    # A flat film: height is the volume over the area (1 cm = 1e7 nm), and there is no h/D.
    assert run.film_height_nm == pytest.approx(volume_cm3 / 2.0 * 1e7, rel=1e-12)
    assert run.height_over_diameter is None and run.sphere_diameter_nm is None


def test_time_window_and_sign_convention_are_used_and_stored(chain, run):
    content = _csv([(t, 1.0 if t < 5 else 3.0) for t in range(11)])  # cathodic positive
    chain.s.deposition_run_attach_chronoamperogram(
        actor=chain.maker, run=run, filename="window.csv", content=content,
        cathodic_sign="positive", start_s=2.0, end_s=8.0)
    run.refresh_from_db()
    # Trapezoids by hand: 2–4 s at 1 mA = 2 mC, 4–5 s ramp 1→3 mA = 2 mC, 5–8 s at 3 mA = 9 mC.
    assert run.charge_C == pytest.approx(13e-3, rel=1e-12)
    assert (run.charge_start_s, run.charge_end_s, run.cathodic_sign) == (2.0, 8.0, "positive")


def test_units_the_header_lacks_can_be_given(chain, run):
    content = _csv([(t, -500.0) for t in range(11)], header="t,I")
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_run_attach_chronoamperogram(actor=chain.maker, run=run,
                                                       filename="bare.csv", content=content)
    assert set(error.value.error_dict) == {"chronoamperogram"}
    assert "line 1" in str(error.value) and "time_unit" in str(error.value)
    chain.s.deposition_run_attach_chronoamperogram(
        actor=chain.maker, run=run, filename="bare.csv", content=content, time_unit="min",
        current_unit="uA")
    run.refresh_from_db()
    assert run.charge_C == pytest.approx(500e-6 * 600, rel=1e-12)  # 500 µA for 10 min


# ------------------------------------------------------------------ flags and tolerance


def test_off_target_run_flags_the_run_and_every_piece_and_readiness_reports_it(chain):
    run, pieces = chain.s.deposition_run_record(**_run_kwargs(chain, pieces=3))
    piece = chain.release(pieces[0])
    result = _attach(chain, run, OFF_TARGET)
    assert result.tolerance.is_default  # no tolerance recorded: the built-in default, said so
    assert "built-in default" in result.tolerance.source
    # The file was made for h/D = 0.30 against a target of 0.50 (README).
    assert result.deviation_height_over_diameter == pytest.approx(-0.20, abs=1e-3)
    flags = Flag.objects.filter(category="deposition", state="open")
    assert sorted(flags.values_list("target_code", flat=True)) == sorted(
        [run.code, *(p.code for p in pieces)])
    assert {f.code for f in result.flags} == set(flags.values_list("code", flat=True))
    readiness = substrate_check_readiness(piece.code)
    piece_flag = flags.get(target_code=piece.code)
    assert not readiness.ready
    assert any(r.code == "open_flag" and r.record_code == piece_flag.code
               for r in readiness.reasons)


def test_tolerance_edits_change_the_outcome(chain):
    chain.s.deposition_tolerance_set(actor=None, max_abs_deviation_height_over_diameter=0.25)
    wide, _ = chain.s.deposition_run_record(**_run_kwargs(chain))
    result = _attach(chain, wide, OFF_TARGET)
    assert result.flags == () and not result.tolerance.is_default
    assert result.tolerance.max_abs_deviation_height_over_diameter == 0.25
    # A gold-specific tolerance wins over the general one.
    chain.s.deposition_tolerance_set(actor=None, metal="Au",
                                     max_abs_deviation_height_over_diameter=0.1)
    narrow, _ = chain.s.deposition_run_record(**_run_kwargs(chain))
    result = _attach(chain, narrow, OFF_TARGET)
    assert len(result.flags) == 3 and "for Au" in result.tolerance.source
    # The target check follows the tolerance in force now.
    wide.refresh_from_db()
    assert chain.s.deposition_run_check_target(wide).within_tolerance is False
    chain.s.deposition_tolerance_set(actor=None, metal="Au",
                                     max_abs_deviation_height_over_diameter=0.3)
    assert chain.s.deposition_run_check_target(wide).within_tolerance is True


def test_tolerance_must_be_positive_and_for_a_known_metal(chain):
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_tolerance_set(actor=None,
                                         max_abs_deviation_height_over_diameter=0)
    assert set(error.value.error_dict) == {"max_abs_deviation_height_over_diameter"}
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_tolerance_set(actor=None, metal="Xx",
                                         max_abs_deviation_height_over_diameter=0.1)
    assert set(error.value.error_dict) == {"metal"}


def test_target_charge_matches_the_geometry_worked_out_by_hand(chain, run):
    """Q = t·A·ρ·z·F/M, t = h − n·πh²(3R − h)/3, n = 2/(√3·D²) (slab minus spherical caps)."""
    diameter, radius, height = 600.0, 300.0, 300.0
    thickness_nm = height - 2 / (math.sqrt(3) * diameter**2) * math.pi * height**2 \
        * (3 * radius - height) / 3
    expected_C = thickness_nm * 1e-7 * 1.0 * GOLD_DENSITY_CRC_G_CM3 / periodictable.Au.mass \
        * FARADAY_C_MOL
    assert chain.s.deposition_run_target_charge_C(run) == pytest.approx(expected_C, rel=1e-9)
    _attach(chain, run)
    run.refresh_from_db()
    check = chain.s.deposition_run_check_target(run)
    assert check.target_charge_C == pytest.approx(expected_C, rel=1e-9)
    assert check.charge_C == pytest.approx(expected_C, rel=2e-3)  # file made for this charge
    assert check.within_tolerance is True and check.open_flag_codes == ()


def test_flat_run_and_run_without_target_are_not_compared(chain):
    run, _ = chain.s.deposition_run_record(**_run_kwargs(chain, target_height_over_diameter=None))
    result = _attach(chain, run, OFF_TARGET)
    assert result.flags == () and result.tolerance is None
    assert "no target" in result.notes[0]
    assert chain.s.deposition_run_target_charge_C(run) is None


# ------------------------------------------------------------------ re-upload


def test_the_same_file_again_changes_nothing_and_another_file_is_refused(chain, run):
    _attach(chain, run, OFF_TARGET)
    before = _counts()
    run.refresh_from_db()
    again = _attach(chain, run, OFF_TARGET)
    assert again.unchanged and again.flags == () and "nothing changed" in again.notes[0]
    assert _counts() == before
    with pytest.raises(ValidationError) as error:
        _attach(chain, run, ON_TARGET)
    assert set(error.value.error_dict) == {"chronoamperogram"}
    run.refresh_from_db()
    assert run.chronoamperogram_name == OFF_TARGET.name and _counts() == before


# ------------------------------------------------------------------ bad input saves nothing

BAD_FILES = [
    # (what, content, field, words in the message)
    ("time turns back", _csv([(0, -1), (1, -1), (2, -1), (1.5, -1), (4, -1), (5, -1)]),
     "chronoamperogram", ["line 5", "back in time"]),
    ("too few points", _csv([(0, -1), (1, -1), (2, -1)]), "chronoamperogram",
     ["line 4", "at least 5"]),
    ("anodic current", _csv([(t, 1.0) for t in range(6)]), "chronoamperogram", ["anodic"]),
    ("not a number", _csv([(0, -1), (1, -1), (2, "n/a"), (3, -1), (4, -1)]),
     "chronoamperogram", ["line 4", "not a number"]),
    ("empty file", b"", "chronoamperogram", ["empty"]),
]


@pytest.mark.parametrize("what,content,field,words", BAD_FILES, ids=[b[0] for b in BAD_FILES])
def test_a_bad_file_at_recording_saves_no_run_no_piece_and_keeps_the_template(
        chain, what, content, field, words):
    kwargs = _run_kwargs(chain, chronoamperogram=("bad.csv", content))
    before = _counts()
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_run_record(**kwargs)
    assert set(error.value.error_dict) == {field}
    for word in words:
        assert word in str(error.value)
    assert _counts() == before
    kwargs["template"].refresh_from_db()
    assert kwargs["template"].status == "released"  # not consumed


@pytest.mark.parametrize("change,field", [
    ({"electrode_area_cm2": 0}, "electrode_area_cm2"),
    ({"metal": "Zz"}, "metal"),
    ({"cathodic_sign": "sideways"}, "cathodic_sign"),
    ({"start_s": 500.0}, "start_s"),
], ids=["zero area", "unknown metal", "unknown sign", "window outside the record"])
def test_a_bad_value_at_recording_is_named_and_saves_nothing(chain, change, field):
    kwargs = _run_kwargs(chain, chronoamperogram=(ON_TARGET.name, ON_TARGET.read_bytes()),
                         **change)
    before = _counts()
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_run_record(**kwargs)
    assert set(error.value.error_dict) == {field}
    assert _counts() == before


def test_a_bad_file_on_an_existing_run_leaves_it_as_it_was(chain, run):
    before = _counts()
    with pytest.raises(ValidationError) as error:
        chain.s.deposition_run_attach_chronoamperogram(
            actor=chain.maker, run=run, filename="anodic.csv",
            content=_csv([(t, 1.0) for t in range(6)]))
    assert set(error.value.error_dict) == {"chronoamperogram"}
    run.refresh_from_db()
    assert (run.chronoamperogram_sha256, run.charge_C, run.film_height_nm) == ("", None, None)
    assert not run.chronoamperogram and _counts() == before


def test_a_file_with_the_run_is_stored_and_flagged_in_one_step(chain):
    content = OFF_TARGET.read_bytes()
    run, pieces = chain.s.deposition_run_record(
        **_run_kwargs(chain, chronoamperogram=(OFF_TARGET.name, content)))
    stored = DepositionRun.objects.get(pk=run.pk)
    assert stored.chronoamperogram_sha256 == hashlib.sha256(content).hexdigest()
    assert stored.height_over_diameter == pytest.approx(0.30, abs=1e-3)  # README: made for 0.30
    flagged = set(Flag.objects.filter(category="deposition").values_list("target_code", flat=True))
    assert flagged == {run.code, *(p.code for p in pieces)}


# ------------------------------------------------------------------ command


def test_command_prints_one_json_object(chain, run):
    out = io.StringIO()
    call_command("import_chronoamperogram", run.code, str(OFF_TARGET), "--json",
                 "--user", chain.maker.username, stdout=out)
    payload = json.loads(out.getvalue())  # the whole output is exactly one object
    run.refresh_from_db()
    assert payload["run"] == run.code and payload["charge_C"] == run.charge_C
    assert payload["film_height_nm"] == run.film_height_nm
    assert payload["height_over_diameter"] == run.height_over_diameter
    assert payload["target"] == 0.5
    assert payload["deviation"] == pytest.approx(run.height_over_diameter - 0.5, abs=1e-15)
    assert {f["target"] for f in payload["flags"]} == {
        run.code, *Substrate.objects.filter(deposition_run=run).values_list("code", flat=True)}


def test_command_refuses_an_unknown_run_and_a_bad_file(chain, run, tmp_path):
    with pytest.raises(CommandError, match="No deposition run has the ID 'DEP-99999'"):
        call_command("import_chronoamperogram", "DEP-99999", str(ON_TARGET), "--user", "maker")
    bad = tmp_path / "bad.csv"
    bad.write_bytes(_csv([(0, -1), (1, -1), (2, -1), (1.5, -1), (4, -1), (5, -1)]))
    with pytest.raises(CommandError, match="line 5"):
        call_command("import_chronoamperogram", run.code, str(bad), "--user", "maker")
    with pytest.raises(CommandError, match="No such file"):
        call_command("import_chronoamperogram", run.code, str(tmp_path / "missing.csv"),
                     "--user", "maker")


def test_command_exits_non_zero_from_the_shell(chain, run, capsys):
    from django.core.management import execute_from_command_line

    with pytest.raises(SystemExit) as exit_info:
        execute_from_command_line(["manage.py", "import_chronoamperogram", "DEP-99999",
                                   str(ON_TARGET), "--user", chain.maker.username])
    assert exit_info.value.code != 0
    assert "No deposition run" in capsys.readouterr().err


# ------------------------------------------------------------------ demo and migrations


def test_demo_keeps_ready_a_ready_and_flags_the_older_run(db, today):
    from inventory.demo import load_inventory_demo
    from inventory.demo_deposition import load_deposition_demo

    scenario = load_inventory_demo()
    load_deposition_demo(scenario)
    fresh = DepositionRun.objects.get(pk=scenario.runs["fresh"].pk)
    older = DepositionRun.objects.get(pk=scenario.runs["older"].pk)
    assert fresh.height_over_diameter == pytest.approx(0.50, abs=1e-3)  # README
    assert older.height_over_diameter == pytest.approx(0.30, abs=1e-3)  # README
    assert substrate_check_readiness(scenario.substrates["ready_a"].code).ready
    flagged = set(Flag.objects.filter(category="deposition").values_list("target_code", flat=True))
    assert flagged == {older.code, *older.substrates.values_list("code", flat=True)}
    reasons = substrate_check_readiness(scenario.substrates["old_linker"].code).reasons
    assert any("Cut from " + older.code in r.message for r in reasons)


def test_inventory_migrations_match_the_models():
    # A fresh process: the test run itself may disable migrations (--nomigrations).
    root = Path(__file__).resolve().parents[2]
    completed = subprocess.run(
        [sys.executable, "manage.py", "makemigrations", "inventory", "--check", "--dry-run"],
        check=False, cwd=root, capture_output=True, text=True, timeout=120,
        env={**os.environ, "DJANGO_SETTINGS_MODULE": "sersledger.settings.test"})
    assert completed.returncode == 0, completed.stdout + completed.stderr


def test_a_failure_after_the_file_is_written_removes_the_file(chain, run, monkeypatch):
    from inventory.services import deposition_target

    def refuse(*args, **kwargs):
        raise ValidationError({"message": "refused for the test"})

    monkeypatch.setattr(deposition_target, "flag_check", refuse)  # the flag comes after
    storage = DepositionRun._meta.get_field("chronoamperogram").storage
    before = _counts()
    name = f"orphan-check-{run.code}.txt"  # a name no other test stores
    with pytest.raises(ValidationError):
        chain.s.deposition_run_attach_chronoamperogram(
            actor=chain.maker, run=run, filename=name, content=OFF_TARGET.read_bytes())
    assert _counts() == before
    assert not storage.exists(f"chronoamperograms/{name}")


def test_a_unit_suffix_header_imports_through_the_command(chain, run, tmp_path):
    # The same invented trace with its header written as unit suffixes ("time_s,current_mA",
    # common in potentiostat exports) gives the same stored film height as "time/s,current/mA".
    text = ON_TARGET.read_text(encoding="utf-8").replace("time/s,current/mA", "time_s,current_mA")
    suffixed = tmp_path / "suffixed.csv"
    suffixed.write_text(text, encoding="utf-8")
    out = io.StringIO()
    call_command("import_chronoamperogram", run.code, str(suffixed), "--json", "--user", "maker",
                 stdout=out)
    payload = json.loads(out.getvalue())
    run.refresh_from_db()
    assert (run.time_unit, run.current_unit) == ("s", "mA")
    # The fixture was made for h/D = 0.50 on 600 nm spheres by its own Faraday arithmetic
    # (fixtures/chronoamperograms/generate.py, CRC gold density 19.32 g/cm³).
    assert payload["height_over_diameter"] == pytest.approx(0.50, abs=1e-4)
    assert run.film_height_nm == pytest.approx(300.0, abs=0.06)


def test_an_unknown_unit_suffix_is_refused_by_name(chain, run, tmp_path):
    text = ON_TARGET.read_text(encoding="utf-8").replace("time/s,current/mA", "time_s,current_pA")
    bad = tmp_path / "picoamps.csv"
    bad.write_text(text, encoding="utf-8")
    with pytest.raises(CommandError, match="unknown unit 'pA'"):
        call_command("import_chronoamperogram", run.code, str(bad), "--user", "maker")
    run.refresh_from_db()
    assert run.charge_C is None
