"""JCAMP-DX 4.24 reader and writer.

Source for every encoding rule checked here: McDonald, R. S.; Wilks, P. A., Jr.,
"JCAMP-DX: A Standard Form for Exchange of Infrared Spectra in Computer Readable Form",
Appl. Spectrosc. 1988, 42, 151–162 (section 5, Table VII of pseudo-digits):
SQZ @=0, A..I = 1..9, a..i = −1..−9; DIF %=0, J..R = 1..9, j..r = −1..−9;
DUP S..Z = 1..8, s = 9; with differences, each line's first y repeats the last y of the
line before (the y check value).
"""

import io
from pathlib import Path

import numpy as np
import pytest

from qc.analysis.errors import AnalysisInputError
from qc.analysis.jcamp import read_jcamp
from qc.analysis.spectrum import Spectrum
from tests.jcamp_writer import write_jcamp

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "spectra"

# The worked example of the paper's section on data compression, the ten ordinates
# 1 2 3 3 2 1 0 −1 −2 −3, in its five forms. The exact characters are recalled from the
# paper (from memory), and every one is re-derived here from the rules above. Second-hand
# support for the DIFDUP form: the test suite of an independent open-source JavaScript
# JCAMP-DX encoder names this sequence its "publication example" and expects the lines
# "0AJT%jX" and "9c" (x from 0; the second line is the y check value), as our writer gives.
# The paper's own table was not found in any public text searched.
PAPER_SEQUENCE = [1, 2, 3, 3, 2, 1, 0, -1, -2, -3]
PAPER_FORMS = {
    # AFFN: free-format numbers separated by blanks.
    "AFFN": "1 2 3 3 2 1 0 -1 -2 -3",
    # PAC: every value carries its sign (or starts the line), no blanks needed.
    "PAC": "1+2+3+3+2+1+0-1-2-3",
    # SQZ: A=1 B=2 C=3 C=3 B=2 A=1 @=0 a=-1 b=-2 c=-3.
    "SQZ": "ABCCBA@abc",
    # DIF: A=1 absolute, then differences J=+1 J=+1 %=0 j=-1 (six times).
    "DIF": "AJJ%jjjjjj",
    # DIFDUP: A=1, J=+1 with T (count 2), %=0, j=-1 with X (count 6).
    "DIFDUP": "AJT%jX",
}


def _file(data_lines, *, first_x=1, last_x=10, npoints=10, extra="", y_factor=1):
    header = (
        "##TITLE=test\n##JCAMP-DX=4.24\n##DATA TYPE=RAMAN SPECTRUM\n"
        "##XUNITS=1/CM\n##YUNITS=ARBITRARY UNITS\n##XFACTOR=1\n"
        f"##YFACTOR={y_factor}\n##FIRSTX={first_x}\n##LASTX={last_x}\n"
        f"##NPOINTS={npoints}\n{extra}##XYDATA=(X++(Y..Y))\n"
    )
    return header + "\n".join(data_lines) + "\n##END=\n"


@pytest.mark.parametrize("form", sorted(PAPER_FORMS))
def test_paper_example_decodes_to_the_same_ordinates_in_every_form(form):
    # McDonald & Wilks 1988, section 5: all forms encode the same data. X = 1 starts the
    # line; the AFFN and PAC strings open with an unsigned value, so a blank must part it
    # from x, while a SQZ or DIF pseudo-digit is its own delimiter.
    separator = " " if form in ("AFFN", "PAC") else ""
    spectrum = read_jcamp(_file([f"1{separator}{PAPER_FORMS[form]}"]))
    np.testing.assert_array_equal(spectrum.y, PAPER_SEQUENCE)
    np.testing.assert_array_equal(spectrum.x, np.arange(1, 11))  # FIRSTX..LASTX, step 1


@pytest.mark.parametrize("form", ["DIF", "DIFDUP"])
def test_paper_example_with_closing_check_line(form):
    # A closing line "10c": x of the last point and its y (c = -3) as the check value.
    spectrum = read_jcamp(_file([f"1{PAPER_FORMS[form]}", "10c"]))
    np.testing.assert_array_equal(spectrum.y, PAPER_SEQUENCE)


def test_y_check_value_across_lines_is_verified_and_dropped():
    # Line 1 holds 1 2 3 3 2 (A J J % j); line 2 starts at x = 5 with B = 2, the check
    # value repeating the last y of line 1, then j×5 gives 1 0 -1 -2 -3.
    spectrum = read_jcamp(_file(["1AJJ%j", "5Bjjjjj"]))
    np.testing.assert_array_equal(spectrum.y, PAPER_SEQUENCE)


def test_wrong_y_check_value_is_refused_with_its_line():
    # C = 3 does not repeat the last y (2) of the line before; data line 2 is file line 13.
    with pytest.raises(AnalysisInputError, match="check value") as caught:
        read_jcamp(_file(["1AJJ%j", "5Cjjjjj"]))
    assert caught.value.line == 13


def test_hand_encoded_fixture_file():
    # fixtures/spectra/invented_difdup.jdx, encoded by hand (comments in the file):
    # y = 10 12 14 14 14 11 8 5 5 0 -10 -20, YFACTOR 0.5, x = 500, 505, ..., 555.
    spectrum = read_jcamp((FIXTURES / "invented_difdup.jdx").read_text())
    expected_y = 0.5 * np.array([10, 12, 14, 14, 14, 11, 8, 5, 5, 0, -10, -20])
    np.testing.assert_array_equal(spectrum.y, expected_y)
    np.testing.assert_array_equal(spectrum.x, 500 + 5 * np.arange(12))
    assert spectrum.x_unit == "1/cm"
    assert spectrum.y_unit == "arbitrary units"
    assert spectrum.metadata["laser_nm"] == 785.0
    assert spectrum.metadata["labels"]["$LASER_NM"] == "785"
    assert spectrum.metadata["data_type"] == "RAMAN SPECTRUM"


def test_descending_axis_is_returned_ascending_with_factors_applied():
    # FIRSTX 20 → LASTX 2 (XFACTOR 2 on the line x), YFACTOR 0.1: y = 0.1 × (5 6 7 8 9 … ).
    text = _file(
        ["10 5 6 7 8 9", "5 10 11 12 13 14"],
        first_x=20,
        last_x=2,
        npoints=10,
        y_factor=0.1,
        extra="##DELTAX=-2\n",
    ).replace("##XFACTOR=1", "##XFACTOR=2")
    spectrum = read_jcamp(text)
    np.testing.assert_allclose(spectrum.x, np.arange(2, 21, 2))
    np.testing.assert_allclose(spectrum.y, 0.1 * np.arange(14, 4, -1))


def test_xypoints_and_peak_table():
    # (XY..XY): x, y pairs; separators blank, comma or semicolon (McDonald & Wilks 1988).
    xypoints = (
        "##TITLE=t\n##JCAMP-DX=4.24\n##XUNITS=NANOMETERS\n##YUNITS=COUNTS\n"
        "##NPOINTS=3\n##XYPOINTS=(XY..XY)\n800.5, 10; 801.0, 12\n802.25,11\n##END=\n"
    )
    spectrum = read_jcamp(xypoints)
    np.testing.assert_array_equal(spectrum.x, [800.5, 801.0, 802.25])
    np.testing.assert_array_equal(spectrum.y, [10, 12, 11])
    assert spectrum.x_unit == "nm"
    peaks = "##TITLE=p\n##JCAMP-DX=4.24\n##PEAK TABLE=(XY..XY)\n1602.3,40 1001.4,100\n##END=\n"
    table = read_jcamp(peaks)
    np.testing.assert_array_equal(table.x, [1001.4, 1602.3])  # sorted ascending
    np.testing.assert_array_equal(table.y, [100, 40])
    assert table.metadata["data_record"] == "PEAKTABLE"


@pytest.mark.parametrize(
    "lines, kwargs, line, message",
    [
        (["1 1 2 3"], {}, 10, "NPOINTS"),  # 3 points for NPOINTS=10; NPOINTS is line 10
        (
            ["1ABCCBA@abc", "20A"],
            {"npoints": 11, "last_x": 11},
            13,
            "x =",
        ),  # x out of step
        (["1AJJ?jjjjj"], {}, 12, "missing value"),  # '?' is not a value
        (["1jABC"], {}, 12, "absolute"),  # a difference cannot open a line
        (["1TABC"], {}, 12, "duplicate"),  # a DUP count needs something to repeat
        (["XA"], {}, 12, "x value"),  # a line must start with x
    ],
)
def test_malformed_data_is_refused_with_the_line(lines, kwargs, line, message):
    with pytest.raises(AnalysisInputError, match=message) as caught:
        read_jcamp(_file(lines, **kwargs))
    assert caught.value.line == line


def test_header_inconsistencies_are_refused():
    with pytest.raises(AnalysisInputError, match="DELTAX") as caught:
        read_jcamp(_file(["1ABCCBA@abc"], extra="##DELTAX=2\n"))
    assert caught.value.line == 11
    with pytest.raises(AnalysisInputError, match="FIRSTY") as caught:
        read_jcamp(_file(["1ABCCBA@abc"], extra="##FIRSTY=7\n"))
    assert caught.value.line == 11


def test_structure_errors():
    good = _file(["1ABCCBA@abc"])
    with pytest.raises(AnalysisInputError, match="END"):
        read_jcamp(good.replace("##END=\n", ""))
    with pytest.raises(AnalysisInputError, match="TITLE") as caught:
        read_jcamp("##JCAMP-DX=4.24\n" + good)
    assert caught.value.line == 1
    with pytest.raises(AnalysisInputError, match="not supported") as caught:
        read_jcamp(good.replace("##XUNITS", "##NTUPLES=x\n##XUNITS"))
    assert caught.value.line == 4
    with pytest.raises(AnalysisInputError, match="after ##END"):
        read_jcamp(good + good)
    with pytest.raises(AnalysisInputError, match="exactly one"):
        read_jcamp(good.replace("##END=", "##XYDATA=(X++(Y..Y))\n1ABC\n##END="))


def test_labels_are_compared_ignoring_case_blanks_dashes_and_comments():
    # McDonald & Wilks 1988: labels ignore case, blanks, dashes, slashes and underscores;
    # "$$" starts a comment anywhere.
    text = _file(["1ABCCBA@abc  $$ a comment"]).replace("##NPOINTS", "##n points")
    assert read_jcamp(text).x.size == 10


# ---------------------------------------------------------------------------------------
# Writer
# ---------------------------------------------------------------------------------------


def _data_lines(text):
    lines = text.splitlines()
    start = next(
        i for i, line in enumerate(lines) if line.startswith(("##XYDATA", "##XYPOINTS"))
    )
    return lines[start + 1 : -1]


def test_writer_encodes_the_paper_sequence_as_derived_by_hand():
    spectrum = Spectrum(np.arange(1.0, 11.0), np.array(PAPER_SEQUENCE, dtype=float))
    difdup = write_jcamp(
        spectrum, title="t", origin="o", owner="w", compression="DIFDUP", y_factor=1
    )
    # x "1.0", then the DIFDUP characters of the paper; closing check line x=10, y=c (−3).
    assert _data_lines(difdup) == ["1.0" + PAPER_FORMS["DIFDUP"], "10.0c"]
    sqz = write_jcamp(
        spectrum, title="t", origin="o", owner="w", compression="SQZ", y_factor=1
    )
    assert _data_lines(sqz) == ["1.0" + PAPER_FORMS["SQZ"]]
    pac = write_jcamp(
        spectrum, title="t", origin="o", owner="w", compression="PAC", y_factor=1
    )
    assert _data_lines(pac) == ["1.0+1+2+3+3+2+1+0-1-2-3"]  # PAC: every value signed


@pytest.mark.parametrize("compression", ["AFFN", "PAC", "SQZ", "DIF", "DIFDUP"])
def test_round_trip_is_exact_for_integer_scaled_data(compression):
    # Seeded synthetic Raman-like data on integer counts × YFACTOR 0.25 (exact in binary),
    # with a flat run so DUP has something to compress.
    rng = np.random.default_rng(2024)
    counts = np.round(rng.normal(4000, 300, 700)) + np.round(
        5e4 * np.exp(-0.5 * ((np.arange(700) - 350) / 6.0) ** 2)
    )
    counts[10:40] = counts[10]
    shift = np.linspace(200.0, 1800.0, 700)
    spectrum = Spectrum(shift, counts * 0.25, "1/cm", "counts", {"laser_nm": 785.0})
    text = write_jcamp(
        spectrum,
        title="round trip",
        origin="seeded synthetic",
        owner="test",
        compression=compression,
        y_factor=0.25,
    )
    assert (
        max(len(line) for line in text.splitlines()) <= 80
    )  # the standard's line limit
    back = read_jcamp(text)
    np.testing.assert_array_equal(back.x, spectrum.x)
    np.testing.assert_array_equal(back.y, spectrum.y)
    assert back.metadata["laser_nm"] == 785.0
    assert back.metadata["title"] == "round trip"


def test_difdup_is_smaller_than_affn():
    # The purpose of ASDF (McDonald & Wilks 1988, section 5.2) is compression.
    rng = np.random.default_rng(5)
    spectrum = Spectrum(
        np.linspace(100, 3000, 2000), np.round(rng.normal(1000, 5, 2000))
    )
    sizes = {
        c: len(write_jcamp(spectrum, title="t", origin="o", owner="w", compression=c))
        for c in ("AFFN", "DIFDUP")
    }
    assert sizes["DIFDUP"] < 0.6 * sizes["AFFN"]


def test_affn_without_factor_keeps_arbitrary_floats_exactly():
    rng = np.random.default_rng(11)
    spectrum = Spectrum(
        np.linspace(-50.0, 3000.0, 301),
        rng.normal(0.0, 1e-4, 301),
        "1/cm",
        "absorbance",
    )
    back = read_jcamp(
        write_jcamp(spectrum, title="t", origin="o", owner="w", compression="AFFN")
    )
    np.testing.assert_array_equal(back.y, spectrum.y)
    assert back.y_unit == "absorbance"


def test_unevenly_spaced_axis_is_written_as_xy_pairs():
    x = np.array([100.0, 100.7, 101.9, 103.6, 105.0])
    spectrum = Spectrum(x, np.array([3.0, 4.0, 9.0, 4.0, 3.0]))
    text = write_jcamp(spectrum, title="t", origin="o", owner="w")
    assert "##XYPOINTS=(XY..XY)" in text
    back = read_jcamp(text)
    np.testing.assert_array_equal(back.x, x)
    np.testing.assert_array_equal(back.y, spectrum.y)


def test_writer_refuses_bad_arguments():
    spectrum = Spectrum([1.0, 2.0], [1.0, 2.0])
    with pytest.raises(AnalysisInputError) as caught:
        write_jcamp(spectrum, title="t", origin="o", owner="w", compression="ZIP")
    assert caught.value.field == "compression"
    with pytest.raises(AnalysisInputError) as caught:
        write_jcamp(spectrum, title="two\nlines", origin="o", owner="w")
    assert caught.value.field == "title"
    with pytest.raises(AnalysisInputError) as caught:
        write_jcamp(spectrum, title="t", origin="o", owner="w", y_factor=0.0)
    assert caught.value.field == "y_factor"


# ---------------------------------------------------------------------------------------
# One synthetic spectrum in AFFN, PAC, SQZ and DIFDUP form (fixtures/spectra/
# synthetic_polystyrene_*.jdx), written by fixtures/spectra/encode_forms.py: a second,
# minimal encoder of McDonald & Wilks 1988 that shares no code with qc.analysis.jcamp.
# ---------------------------------------------------------------------------------------

SYNTHETIC_FORMS = ("affn", "pac", "sqz", "difdup")


def _synthetic_text(form):
    return (FIXTURES / f"synthetic_polystyrene_{form}.jdx").read_text()


@pytest.mark.parametrize("form", ["pac", "sqz", "difdup"])
def test_compressed_forms_decode_to_the_affn_ordinates(form):
    # All four files hold the same 560 integers (the encoder's intent); AFFN is plain numbers.
    affn, packed = read_jcamp(_synthetic_text("affn")), read_jcamp(_synthetic_text(form))
    assert packed.y.size == affn.y.size == 560
    np.testing.assert_array_equal(packed.y, affn.y)
    np.testing.assert_array_equal(packed.x, affn.x)
    assert affn.x[0] == 560 and affn.x[-1] == 1678  # ##FIRSTX= and ##LASTX=


def test_difdup_file_hand_decoded():
    # Lines "560A000%s%Y" and "592A000%YJMK4Q5...", decoded by hand from the rules above:
    # A000 = SQZ 1000; % = DIF 0, s = DUP 9 and Y = DUP 7 (16 zero steps); the next line
    # repeats y = 1000 at x = 592 (the y check value), % Y = seven more zero steps (to
    # x = 606), then J = +1, M = +4, K4 = +24, Q5 = +85.
    spectrum = read_jcamp(_synthetic_text("difdup"))
    by_x = dict(zip(spectrum.x.tolist(), spectrum.y.tolist(), strict=False))
    assert all(by_x[x] == 1000 for x in range(560, 608, 2))
    assert [by_x[x] for x in (608, 610, 612, 614)] == [1001, 1005, 1029, 1114]


# ---------------------------------------------------------------------------------------
# Cross-check against an independent reader from the registry: the `jcamp` package
# (N. Hagen, MIT licence), a test dependency only.
# ---------------------------------------------------------------------------------------


def _other_reader(text):
    jcamp = pytest.importorskip("jcamp")
    data = jcamp.read(io.StringIO(text))
    x, y = np.asarray(data["x"], dtype=float), np.asarray(data["y"], dtype=float)
    order = np.argsort(x)
    return x[order], y[order]


@pytest.mark.parametrize("form", SYNTHETIC_FORMS)
def test_independent_reader_agrees_on_the_four_forms(form):
    text = _synthetic_text(form)
    ours = read_jcamp(text)
    x, y = _other_reader(text)
    np.testing.assert_array_equal(ours.y, y)
    np.testing.assert_allclose(ours.x, x, rtol=0, atol=1e-9)


@pytest.mark.parametrize("compression", ["AFFN", "PAC", "SQZ", "DIF", "DIFDUP"])
def test_independent_reader_reads_our_writer_output(compression):
    rng = np.random.default_rng(12)
    x = np.linspace(200.0, 1800.0, 801)
    y = np.round(1000 + 500 * np.exp(-(((x - 1000) / 30) ** 2)) + rng.normal(0, 20, x.size))
    y[100:110] = y[100]  # a run, so DUP counts appear
    text = write_jcamp(
        Spectrum(x=x, y=y), title="cross-check", origin="sersledger tests", owner="public domain",
        compression=compression,
    )
    other_x, other_y = _other_reader(text)
    np.testing.assert_array_equal(other_y, y)
    np.testing.assert_allclose(other_x, x, rtol=0, atol=1e-9)


def test_independent_reader_agrees_on_the_hand_encoded_fixture():
    # The other reader does not accept "$$" comments inside data lines (the standard
    # allows them), so those are cut before handing it the text.
    text = (FIXTURES / "invented_difdup.jdx").read_text()
    ours = read_jcamp(text)
    plain = "\n".join(line.split("$$")[0].rstrip() for line in text.splitlines()) + "\n"
    x, y = _other_reader(plain)
    np.testing.assert_array_equal(ours.y, y)
    np.testing.assert_allclose(ours.x, x, rtol=0, atol=1e-9)
