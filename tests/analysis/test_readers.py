"""Two-column and map readers, the dispatcher, and the Spectrum/RamanMap containers.

Text layouts (delimiters, decimal commas, header and comment lines, wide and long maps)
are common practice for instrument exports; expected values are the numbers typed into
each test text or fixture file, or built from seeded arrays in the test.
"""

import io
import time
from pathlib import Path

import numpy as np
import pytest

from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import (
    decode_text,
    read_map,
    read_map_long,
    read_map_wide,
    read_spectrum,
    read_two_column,
)
from qc.analysis.spectrum import RamanMap, Spectrum, first_repeated_point, infer_grid_shape

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "spectra"


@pytest.mark.parametrize(
    "text, delimiter, decimal_comma",
    [
        ("100.5,7\n101.5,8\n102.5,9\n", "comma", False),
        ("100.5\t7\n101.5\t8\n102.5\t9\n", "tab", False),
        ("100.5;7\n101.5;8\n102.5;9\n", "semicolon", False),
        ("100.5   7\n101.5 8\n  102.5\t 9\n", "whitespace", False),
        ("100,5;7\n101,5;8\n102,5;9\n", "semicolon", True),
        ("100,5\t7\n101,5\t8\n102,5\t9\n", "tab", True),
        ("100,5 7\n101,5 8\n102,5 9\n", "whitespace", True),
        ("100.5, 7\n101.5, 8\n102.5, 9\n", "comma", False),
    ],
)
def test_delimiters_and_decimal_commas(text, delimiter, decimal_comma):
    spectrum = read_two_column(text)
    np.testing.assert_array_equal(spectrum.x, [100.5, 101.5, 102.5])
    np.testing.assert_array_equal(spectrum.y, [7, 8, 9])
    assert spectrum.metadata["delimiter"] == delimiter
    assert spectrum.metadata["decimal_comma"] is decimal_comma


def test_fixture_with_header_comments_and_descending_axis():
    spectrum = read_two_column((FIXTURES / "invented_polystyrene_785.csv").read_text())
    assert spectrum.metadata["comment_lines"] == 2
    assert spectrum.metadata["header_lines"] == 1
    assert spectrum.metadata["header"] == ["Raman shift (cm-1),Intensity (counts)"]
    # The file runs 1010 → 992; returned ascending with y following x.
    np.testing.assert_array_equal(spectrum.x[[0, -1]], [992.0, 1010.0])
    assert (
        spectrum.y[np.argmax(spectrum.y)] == 700.0
        and spectrum.x[np.argmax(spectrum.y)] == 1001.0
    )


def test_decimal_comma_fixture():
    spectrum = read_two_column((FIXTURES / "invented_decimal_comma.txt").read_bytes())
    np.testing.assert_allclose(spectrum.x, [1001.4, 1002.4, 1003.4, 1004.4])
    np.testing.assert_allclose(spectrum.y, [523.1, 530.7, 541.0, 498.2])


@pytest.mark.parametrize(
    "text, line, message",
    [
        ("", 1, "empty"),
        ("\n\n# only a comment\n", 3, "empty"),
        ("1,2\n2,abc\n", 2, "not a number"),
        ("1,2\n2,nan\n", 2, "finite"),
        ("1,2\n2,inf\n", 2, "finite"),
        ("# c\n1,2\n", 2, "at least 2"),
        ("1,2\n2,3\n2,4\n", 3, "repeats"),
        ("1,2\n2,3\n1.5,4\n", 3, "monotonic"),
        ("1,2\n2,3,4\n", 2, "columns"),
        ("1,2\n2,,3\n", 2, "columns"),
        ("1\n2\n", 1, "columns"),
        ("1,2\n2,\n", 2, "empty"),
        ("Shift,Counts\n", 1, "no numeric"),
    ],
)
def test_bad_two_column_input_names_the_line(text, line, message):
    with pytest.raises(AnalysisInputError, match=message) as caught:
        read_two_column(text)
    assert caught.value.line == line


def test_bytes_are_decoded_utf8_then_latin1():
    header = "Raman shift (cm⁻¹),I\n1,2\n3,4\n"
    assert read_two_column(header.encode("utf-8")).metadata["header"] == [
        "Raman shift (cm⁻¹),I"
    ]
    latin = "Verschiebung µ,I\n1,2\n3,4\n".encode(
        "latin-1"
    )  # 0xB5 is invalid UTF-8 here
    assert read_two_column(latin).metadata["header"] == ["Verschiebung µ,I"]
    assert (
        decode_text("\ufeffx".encode("utf-8")) == "x"
    )  # a UTF-8 byte-order mark is dropped
    assert decode_text("1,2".encode("utf-16")) == "1,2"
    with pytest.raises(AnalysisInputError):
        decode_text(12)


def test_read_spectrum_dispatches_on_contents_and_name():
    jcamp = (FIXTURES / "invented_difdup.jdx").read_bytes()
    assert read_spectrum(jcamp).metadata["data_record"] == "XYDATA"
    csv = (FIXTURES / "invented_polystyrene_785.csv").read_bytes()
    assert read_spectrum(csv).metadata["delimiter"] == "comma"
    # A name ending .jdx means JCAMP-DX even if the text is not: the JCAMP-DX error shows.
    with pytest.raises(AnalysisInputError, match="TITLE"):
        read_spectrum(b"1,2\n3,4\n", filename="spectrum.JDX")


# ---------------------------------------------------------------------------------------
# Maps
# ---------------------------------------------------------------------------------------


def test_wide_map_fixture():
    raman_map = read_map_wide((FIXTURES / "invented_map_wide.csv").read_text())
    assert raman_map.grid_shape == (2, 3)
    np.testing.assert_array_equal(raman_map.shift_cm1, [1000.0, 1001.0, 1002.0, 1003.0])
    np.testing.assert_array_equal(raman_map.intensity[4], [14, 24, 34, 24])
    # Image rows are y ascending, columns x ascending: the third column (1002 cm⁻¹)
    # laid out as written in the file.
    np.testing.assert_array_equal(
        raman_map.image(raman_map.intensity[:, 2]), [[30, 31, 32], [33, 34, 35]]
    )
    x_axis, y_axis = raman_map.grid_axes()
    np.testing.assert_array_equal(x_axis, [0.0, 1.5, 3.0])
    np.testing.assert_array_equal(y_axis, [0.0, 2.0])


def test_long_map_fixture_in_mixed_row_order():
    raman_map = read_map_long((FIXTURES / "invented_map_long.tsv").read_text())
    np.testing.assert_array_equal(raman_map.shift_cm1, [1000.0, 1001.0])
    np.testing.assert_array_equal(raman_map.x_um, [0, 2, 0, 2])
    np.testing.assert_array_equal(raman_map.y_um, [0, 0, 2, 2])
    np.testing.assert_array_equal(
        raman_map.intensity, [[4, 5], [6, 7], [8, 9], [10, 11]]
    )
    assert raman_map.grid_shape == (2, 2)


def test_read_map_detects_the_layout():
    assert (
        read_map((FIXTURES / "invented_map_wide.csv").read_bytes()).metadata["layout"]
        == "wide"
    )
    assert (
        read_map((FIXTURES / "invented_map_long.tsv").read_bytes()).metadata["layout"]
        == "long"
    )
    assert read_map("0,0,100,1\n0,0,200,2\n").metadata["layout"] == "long"  # no header
    with pytest.raises(AnalysisInputError, match="layout") as caught:
        read_map("# c\na,b,c\n1,2,3\n")
    assert caught.value.line == 2


def test_wide_map_with_descending_shifts_and_decimal_commas():
    text = "x;y;1002,0;1001,0;1000,0\n0;0;3;2;1\n1,5;0;6;5;4\n"
    raman_map = read_map(text)
    np.testing.assert_array_equal(raman_map.shift_cm1, [1000.0, 1001.0, 1002.0])
    np.testing.assert_array_equal(raman_map.intensity, [[1, 2, 3], [4, 5, 6]])
    np.testing.assert_array_equal(raman_map.x_um, [0.0, 1.5])
    assert raman_map.metadata["decimal_comma"] is True


@pytest.mark.parametrize(
    "text, line, message",
    [
        ("x,y,100,200\n0,0,1,2\n1,0,3\n", 3, "columns"),
        ("x,y,100,200\n0,0,1,2\n1,0,3,x\n", 3, "not a number"),
        ("x,y,100,200\n0,0,1,2\n0,0,3,4\n", 3, "twice"),
        ("x,y,100,100\n0,0,1,2\n", 1, "repeats"),
        ("x,y,100,200\n", 1, "no points"),
        ("x,y,100,200\n0,0,1,inf\n", 2, "finite"),
        ("0,0,100,1\n0,0,100,2\n1,0,100,3\n1,0,200,4\n", 2, "twice"),
        ("0,0,100,1\n0,0,200,2\n1,0,100,3\n1,0,300,4\n", 4, "shift axis"),
        ("0,0,100,1\n0,0,200,2\n1,0,100,3\n", 3, "shifts"),
        ("0,0,100,1\n1,0,100,2\n", 1, "at least 2"),
    ],
)
def test_bad_maps_name_the_line(text, line, message):
    with pytest.raises(AnalysisInputError, match=message) as caught:
        read_map(text)
    assert caught.value.line == line


def test_wide_reader_names_a_bad_header_cell():
    # read_map cannot call this a wide header; the wide reader says which cell is wrong.
    with pytest.raises(AnalysisInputError, match="header cell 4") as caught:
        read_map_wide("x,y,100,abc\n0,0,1,2\n")
    assert caught.value.line == 1


def _wide_map_text(n_side, n_shift, rng):
    shift = np.linspace(200.0, 3200.0, n_shift)
    yy, xx = np.meshgrid(
        np.arange(n_side) * 0.5, np.arange(n_side) * 0.5, indexing="ij"
    )
    intensity = np.round(rng.normal(1000.0, 30.0, (n_side * n_side, n_shift)), 1)
    buffer = io.StringIO()
    np.savetxt(
        buffer,
        np.column_stack([xx.ravel(), yy.ravel(), intensity]),
        delimiter=",",
        fmt="%.1f",
    )
    header = "x_um,y_um," + ",".join(f"{v:.4f}" for v in shift)
    return header + "\n" + buffer.getvalue(), shift, intensity


def test_wide_map_values_survive_and_a_100_by_100_map_reads_fast():
    rng = np.random.default_rng(42)
    text, shift, intensity = _wide_map_text(100, 1024, rng)  # ~10⁷ numbers, ~67 MB
    # CPU time, not wall time: the ceiling is about the reader, not about other processes
    # sharing the machine.
    started = time.process_time()
    raman_map = read_map(text)
    seconds = time.process_time() - started
    assert raman_map.grid_shape == (100, 100)
    np.testing.assert_allclose(
        raman_map.shift_cm1, shift, atol=5e-5
    )  # written to 4 decimals
    np.testing.assert_array_equal(
        raman_map.intensity, intensity
    )  # written to 1 decimal
    # Measured about 1.1 s on the development machine; generous ceiling against slow CI.
    assert seconds < 8.0, f"reading took {seconds:.2f} s"


def test_long_and_wide_layouts_agree():
    rng = np.random.default_rng(3)
    x, y = np.meshgrid([0.0, 1.0, 2.0], [0.0, 5.0])
    shift = np.array([100.0, 150.0, 200.0])
    intensity = rng.integers(0, 1000, (6, 3)).astype(float)
    rows = [
        f"{px},{py},{s},{intensity[p, j]}"
        for p, (px, py) in enumerate(zip(x.ravel(), y.ravel(), strict=True))
        for j, s in enumerate(shift)
    ]
    shuffled = [rows[i] for i in rng.permutation(len(rows))]
    long_map = read_map_long("x,y,shift,intensity\n" + "\n".join(shuffled))
    wide_text = "x,y,100,150,200\n" + "\n".join(
        f"{px},{py}," + ",".join(str(v) for v in intensity[p])
        for p, (px, py) in enumerate(zip(x.ravel(), y.ravel(), strict=True))
    )
    wide_map = read_map_wide(wide_text)
    for raman_map in (long_map, wide_map):
        picture = raman_map.image(raman_map.intensity[:, 1])
        np.testing.assert_array_equal(picture, intensity[:, 1].reshape(2, 3))


# ---------------------------------------------------------------------------------------
# Containers
# ---------------------------------------------------------------------------------------


def test_spectrum_checks_itself_and_is_read_only():
    spectrum = Spectrum([1.0, 2.0, 3.0], [4.0, 5.0, 6.0])
    with pytest.raises(ValueError):
        spectrum.y[0] = 9.0  # arrays are read-only copies
    with pytest.raises(AnalysisInputError):
        Spectrum([3.0, 2.0, 1.0], [1.0, 2.0, 3.0])  # must be ascending
    with pytest.raises(AnalysisInputError):
        Spectrum([1.0, 2.0], [1.0, 2.0, 3.0])
    with pytest.raises(AnalysisInputError):
        Spectrum([1.0, 2.0], [1.0, np.nan])
    assert spectrum == Spectrum([1.0, 2.0, 3.0], [4.0, 5.0, 6.0])
    assert spectrum != Spectrum([1.0, 2.0, 3.0], [4.0, 5.0, 7.0])


def test_grid_shape_inference_and_irregular_maps():
    # A full 2 × 3 grid in any order; dropping a point makes it irregular.
    x = np.array([2.0, 0.0, 1.0, 2.0, 0.0, 1.0])
    y = np.array([1.0, 1.0, 0.0, 0.0, 0.0, 1.0])
    assert infer_grid_shape(x, y) == (2, 3)
    assert infer_grid_shape(x[:-1], y[:-1]) is None
    irregular = RamanMap(x[:-1], y[:-1], [100.0, 200.0], np.ones((5, 2)))
    assert irregular.grid_shape is None
    with pytest.raises(AnalysisInputError, match="grid"):
        irregular.image(np.ones(5))
    with pytest.raises(AnalysisInputError):
        RamanMap(x, y, [100.0, 200.0], np.ones((6, 2)), grid_shape=(3, 2))
    with pytest.raises(AnalysisInputError, match="more than once"):
        RamanMap([0.0, 0.0], [1.0, 1.0], [100.0, 200.0], np.ones((2, 2)))
    point = RamanMap(x, y, [100.0, 200.0], np.arange(12.0).reshape(6, 2)).spectrum(3)
    np.testing.assert_array_equal(point.y, [6.0, 7.0])
    assert (point.metadata["x_um"], point.metadata["y_um"]) == (2.0, 0.0)


@pytest.mark.parametrize("seed", range(6))
def test_first_repeated_point_is_the_one_numpy_unique_finds(seed):
    # Reference: numpy's unique over rows (first index and count of each position); the
    # positions come from a few values, with −0.0 beside 0.0, so some repeat and some not.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 60))
    values = np.array([0.0, -0.0, 1.5, 2.0, -3.25])
    x = rng.choice(values, n)
    y = rng.choice(values, n) if seed % 2 else np.arange(n) * 0.5 + (seed == 4) * (n < 30)
    _, first, counts = np.unique(np.column_stack([x, y]), axis=0, return_index=True,
                                 return_counts=True)
    expected = int(np.sort(first[counts > 1])[0]) if (counts > 1).any() else None
    assert first_repeated_point(x, y) == expected
