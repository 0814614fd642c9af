"""Tests for inventory.physics.chronoamperogram: units, delimiters, headers and refusals."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest

from inventory.physics.chronoamperogram import parse_chronoamperogram
from inventory.physics.errors import AnalysisInputError

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "chronoamperograms"

# Five rows written by hand; the expected SI values are the same numbers times the SI
# prefix (unit identities: 1 ms = 1e-3 s, 1 min = 60 s, 1 mA = 1e-3 A, 1 µA = 1e-6 A,
# 1 nA = 1e-9 A).
TIMES = [0.0, 1.0, 2.0, 3.0, 4.0]
CURRENTS = [-5.0, -4.0, -3.5, -3.25, -3.0]


def _table(header: str, separator: str, times=TIMES, currents=CURRENTS) -> str:
    rows = [f"{t}{separator}{i}" for t, i in zip(times, currents, strict=True)]
    return "\n".join([header, *rows]) + "\n"


@pytest.mark.parametrize(
    "header, time_scale, current_scale",
    [
        ("time/s,current/mA", 1.0, 1e-3),
        ("Time (ms),Current (uA)", 1e-3, 1e-6),
        ("t [min],I [nA]", 60.0, 1e-9),
        ("time/s,current/A", 1.0, 1.0),
        ("Time (s),Current (\u00b5A)", 1.0, 1e-6),  # micro sign
        ("Time (s),Current (\u03bcA)", 1.0, 1e-6),  # Greek mu
        # Unit suffixes after an underscore, as many exports write them.
        ("time_s,current_A", 1.0, 1.0),
        ("t_s,I_mA", 1.0, 1e-3),
        ("time_ms,current_uA", 1e-3, 1e-6),
        ("t_min,I_nA", 60.0, 1e-9),
        ("t/s,I [mA]", 1.0, 1e-3),
        ("t (s),I (\u00b5A)", 1.0, 1e-6),
    ],
)
def test_units_from_header_convert_to_si(header, time_scale, current_scale):
    record = parse_chronoamperogram(_table(header, ","))
    np.testing.assert_allclose(record.time_s, np.array(TIMES) * time_scale, rtol=1e-15)
    np.testing.assert_allclose(record.current_A, np.array(CURRENTS) * current_scale, rtol=1e-15)


@pytest.mark.parametrize(
    "separator, name", [(",", "comma"), ("\t", "tab"), (";", "semicolon"), ("   ", "whitespace")]
)
def test_delimiters_are_detected(separator, name):
    header = separator.join(["Time (s)", "Current (mA)"])
    record = parse_chronoamperogram(_table(header, separator))
    assert record.delimiter == name
    np.testing.assert_allclose(record.current_A, np.array(CURRENTS) * 1e-3)


def test_decimal_comma_with_semicolon_delimiter():
    # Common practice in European-locale exports: ';' between cells, ',' as decimal mark.
    text = "time/s;current/mA\n" + "\n".join(f"{k},5;-0,{k + 1}25" for k in range(5)) + "\n"
    record = parse_chronoamperogram(text)
    np.testing.assert_allclose(record.time_s, [0.5, 1.5, 2.5, 3.5, 4.5])
    expected_mA = [-0.125, -0.225, -0.325, -0.425, -0.525]
    np.testing.assert_allclose(record.current_A, np.array(expected_mA) * 1e-3)


def test_keyword_units_override_header():
    text = _table("time/s,current/mA", ",")
    record = parse_chronoamperogram(text, time_unit="ms", current_unit="nA")
    np.testing.assert_allclose(record.time_s, np.array(TIMES) * 1e-3)
    np.testing.assert_allclose(record.current_A, np.array(CURRENTS) * 1e-9)
    assert (record.time_unit, record.current_unit) == ("ms", "nA")


def test_keyword_units_allow_a_file_without_header():
    record = parse_chronoamperogram(_table("", ",").lstrip(), time_unit="s", current_unit="uA")
    np.testing.assert_allclose(record.current_A, np.array(CURRENTS) * 1e-6)
    assert record.first_data_line == 1


def test_columns_found_by_name_among_others():
    text = "Potential (V)\tTime (s)\tCurrent (mA)\n" + "".join(
        f"-0.7\t{t}\t{i}\n" for t, i in zip(TIMES, CURRENTS, strict=True)
    )
    record = parse_chronoamperogram(text)
    np.testing.assert_allclose(record.time_s, TIMES)
    np.testing.assert_allclose(record.current_A, np.array(CURRENTS) * 1e-3)


def test_metadata_lines_are_header_and_line_numbers_count_them():
    text = "Run\tdemo\nArea (cm2)\t1.00\nTime (s)\tCurrent (mA)\n" + "".join(
        f"{t}\t{i}\n" for t, i in zip(TIMES, CURRENTS, strict=True)
    )
    record = parse_chronoamperogram(text)
    assert record.header_lines == ("Run\tdemo", "Area (cm2)\t1.00", "Time (s)\tCurrent (mA)")
    assert record.first_data_line == 4


def test_commented_column_header_is_read():
    record = parse_chronoamperogram(_table("# time/ms, current/uA", ","))
    np.testing.assert_allclose(record.time_s, np.array(TIMES) * 1e-3)
    np.testing.assert_allclose(record.current_A, np.array(CURRENTS) * 1e-6)


def test_arrays_are_read_only():
    record = parse_chronoamperogram(_table("time/s,current/mA", ","))
    with pytest.raises(ValueError):
        record.current_A[0] = 0.0


# ------------------------------------------------------------------ refusals


def _refusal(text: str, **options) -> AnalysisInputError:
    with pytest.raises(AnalysisInputError) as caught:
        parse_chronoamperogram(text, **options)
    return caught.value


@pytest.mark.parametrize("text", ["", "   \n\n\t\n"])
def test_empty_file_refused(text):
    assert "empty" in _refusal(text).message


def test_header_only_refused():
    assert "no data rows" in _refusal("time/s,current/mA\n").message


def test_non_numeric_cell_names_line():
    text = _table("time/s,current/mA", ",").replace("-3.5", "overload")
    error = _refusal(text)
    assert (error.line, error.field) == (4, "current")  # header is line 1, rows start at 2


@pytest.mark.parametrize("bad", ["nan", "NaN", "inf"])
def test_nan_and_infinity_name_line(bad):
    text = _table("time/s,current/mA", ",").replace("-3.25", bad)
    error = _refusal(text)
    assert (error.line, error.field) == (5, "current")


def test_missing_cell_names_line():
    lines = _table("time/s,current/mA", ",").splitlines()
    lines[3] = "2.0"
    assert _refusal("\n".join(lines)).line == 4


def test_too_few_points_refused():
    text = _table("time/s,current/mA", ",", TIMES[:4], CURRENTS[:4])
    error = _refusal(text)
    assert "at least 5" in error.message
    assert error.line == 5


def test_duplicate_time_names_line():
    text = _table("time/s,current/mA", ",", [0.0, 1.0, 1.0, 2.0, 3.0])
    error = _refusal(text)
    assert (error.line, error.field) == (4, "time")
    assert "repeats" in error.message


def test_time_going_back_names_line():
    text = _table("time/s,current/mA", ",", [0.0, 1.0, 2.0, 1.5, 3.0])
    error = _refusal(text)
    assert (error.line, error.field) == (5, "time")
    assert "back" in error.message


@pytest.mark.parametrize(
    "header, field, unit", [("time/h,current/mA", "time_unit", "h"),
                            ("time/s,current/kA", "current_unit", "kA"),
                            ("time_h,current_mA", "time_unit", "h"),
                            ("t_s,I_pA", "current_unit", "pA")]
)
def test_unknown_unit_in_header_names_line_and_field(header, field, unit):
    error = _refusal(_table(header, ","))
    assert (error.line, error.field) == (1, field)
    assert f"unknown unit '{unit}'" in error.message


def test_unknown_unit_option_refused():
    assert _refusal(_table("time/s,current/mA", ","), current_unit="amps").field == "current_unit"


def test_missing_unit_refused():
    error = _refusal(_table("time,current", ","))
    assert (error.line, error.field) == (1, "time_unit")


def test_unknown_delimiter_refused():
    assert _refusal(_table("time/s,current/mA", ","), delimiter="pipe").field == "delimiter"


# ------------------------------------------------------------------ the invented fixtures


def test_csv_fixture_reads_in_si():
    record = parse_chronoamperogram((FIXTURES / "au_600nm_hd050.csv").read_text(encoding="utf-8"))
    assert (record.time_unit, record.current_unit, record.delimiter) == ("s", "mA", "comma")
    # The generator writes 0.1 s steps over 300 s: 3001 rows (generate.py docstring).
    assert record.time_s.size == 3001
    assert record.time_s[-1] == pytest.approx(300.0)
    assert np.all(record.current_A < 0)  # IUPAC: cathodic negative
    assert 1e-4 < -np.median(record.current_A) < 1e-3  # a few hundred µA growth current


def test_tab_fixture_reads_metadata_and_microamps():
    record = parse_chronoamperogram((FIXTURES / "au_600nm_hd030.txt").read_text(encoding="utf-8"))
    assert (record.current_unit, record.delimiter) == ("\u00b5A", "tab")
    assert record.first_data_line == 8
    assert "Current sign\tcathodic negative" in record.header_lines
    assert 1e-4 < -np.median(record.current_A) < 1e-3


def test_fixture_generator_is_deterministic(tmp_path):
    spec = importlib.util.spec_from_file_location("generate", FIXTURES / "generate.py")
    generator = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(generator)
    for written in generator.write_all(tmp_path):
        assert written.read_bytes() == (FIXTURES / written.name).read_bytes()
