"""The compiled wide-map parser reads exactly what Apache Arrow's reader reads, or declines.

Each accepted map is compared bit for bit with the Arrow path of the same file (the parse
this replaces); single values with the correctly rounded decimal-to-binary conversion
computed in exact rational arithmetic (Python's :class:`fractions.Fraction`, an outside
reference: IEEE 754-2008 §5.12.2 round-to-nearest-even of the exact decimal value).  A file
it declines is read by the existing readers, which name the same fault as before.
"""

from __future__ import annotations

from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from qc.analysis import map_columnar, map_fastparse
from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import read_spectrum_or_map
from qc.analysis.text_tables import MAX_ABS_VALUE

FUZZ = settings(max_examples=120, derandomize=True, deadline=None,
                suppress_health_check=[HealthCheck.too_slow])
HEADER = "x,y,100.5,200,300.25,400\n"


def _arrow_only(monkeypatch, source):
    """The same file through the Arrow path alone (the compiled parser switched off)."""
    with monkeypatch.context() as patch:
        patch.setattr(map_columnar, "read_wide_rows", lambda *args: None)
        return map_columnar.read_map_wide_columnar(source)


def _outcome(source):
    """A map's arrays and metadata, or the refusal's text and line, through the public reader."""
    try:
        found = read_spectrum_or_map(source, "map.csv")
    except AnalysisInputError as refusal:
        return ("refused", str(refusal), refusal.line)
    return ("read", found.x_um.tobytes(), found.y_um.tobytes(), found.shift_cm1.tobytes(),
            found.intensity.dtype, found.intensity.tobytes())


def _nearest_float32(text: str) -> np.float32:
    """Correctly rounded float32 of a decimal string, ties to even, by exact fractions."""
    exact = Fraction(text)
    guess = np.float32(float(text))
    candidates = [np.nextafter(guess, np.float32(-np.inf)), guess,
                  np.nextafter(guess, np.float32(np.inf))]
    candidates = [c for c in candidates if np.isfinite(c)]  # next to float32's largest
    if not candidates:
        return guess  # beyond float32: infinite, as the reader would read it
    distances = [abs(Fraction(float(c)) - exact) for c in candidates]
    best = min(distances)
    ties = [c for c, d in zip(candidates, distances, strict=True) if d == best]
    return min(ties, key=lambda c: int(np.array(c).view(np.uint32)) & 1)


def _generated_map(rng, rows, delimiter=",", newline="\n", style="decimals") -> str:
    shifts = np.linspace(300.0, 1800.0, 24)
    lines = ["# exported map", "% operator: test", ""]
    lines.append(delimiter.join(["x", "y", *(f"{s:.3f}" for s in shifts)]))
    for row in range(rows):
        values = rng.normal(0, 5000, shifts.size) * rng.choice([1e-6, 1e-2, 1.0, 1e3], shifts.size)
        if style == "decimals":
            cells = [f"{v:.{rng.integers(0, 7)}f}" for v in values]
        elif style == "exponents":
            cells = [f"{v:.{rng.integers(1, 9)}{rng.choice(['e', 'E'])}}" for v in values]
        elif style == "integers":
            cells = [str(int(v)) for v in values]
        else:  # mixed, as hand-edited files are: signs, bare points, padding
            cells = [rng.choice([f"{v:+.4f}", f"{v:.2e}", f" {v:.1f} ", f"{abs(v):.0f}.",
                                 f"{v:.3f}".replace("0.", ".", 1), f"{v:.15g}"]) for v in values]
        position = [f"{row % 7 * 0.5 - 1:.2f}", f"{row // 7 * 1.25:.6g}"]
        lines.append(delimiter.join(position + list(cells)))
    return newline.join(lines) + newline


@pytest.mark.parametrize("style", ["decimals", "exponents", "integers", "mixed"])
@pytest.mark.parametrize("delimiter,newline", [(",", "\n"), (",", "\r\n"), ("\t", "\n"),
                                               (";", "\r\n")])
def test_generated_maps_are_bit_identical_to_the_arrow_path(monkeypatch, style, delimiter,
                                                             newline):
    raw = _generated_map(np.random.default_rng(22), 60, delimiter, newline, style).encode()
    fast, arrow = map_columnar.read_map_wide_columnar(raw), _arrow_only(monkeypatch, raw)
    assert fast.metadata["reader"] == "columnar (compiled), float32"
    assert arrow.metadata["reader"] == "columnar (Apache Arrow), float32"
    assert fast.intensity.dtype == arrow.intensity.dtype == np.float32
    assert fast.intensity.tobytes() == arrow.intensity.tobytes()
    assert fast.x_um.tobytes() == arrow.x_um.tobytes()
    assert fast.y_um.tobytes() == arrow.y_um.tobytes()
    np.testing.assert_array_equal(fast.shift_cm1, arrow.shift_cm1)
    assert {k: v for k, v in fast.metadata.items() if k != "reader"} == {
        k: v for k, v in arrow.metadata.items() if k != "reader"}


def test_descending_shifts_blank_lines_and_no_last_newline_match_arrow(monkeypatch):
    raw = (b"\xef\xbb\xbfx,y,4,3,2,1\r\n\r\n0,0,1,2,3,4\n\n1,0,-5,6e2,7.,.8\r\n"
           b"2,0,0,-0,1E-3,2.5e+1")
    fast, arrow = map_columnar.read_map_wide_columnar(raw), _arrow_only(monkeypatch, raw)
    assert fast.metadata["reader"].endswith("(compiled), float32")
    assert fast.intensity.tobytes() == arrow.intensity.tobytes()
    np.testing.assert_array_equal(fast.intensity[1], np.float32([0.8, 7, 600, -5]))


def test_a_map_on_disk_read_in_small_blocks_equals_the_bytes(monkeypatch, tmp_path):
    raw = _generated_map(np.random.default_rng(5), 40, ",", "\r\n", "mixed").encode()
    path = tmp_path / "map.csv"
    path.write_bytes(raw)
    whole = map_columnar.read_map_wide_columnar(raw)
    monkeypatch.setattr(map_fastparse, "_BLOCK_BYTES", 97)  # lines longer than a block
    in_blocks = map_columnar.read_map_wide_columnar(path)
    assert in_blocks.metadata["reader"].endswith("(compiled), float32")
    assert in_blocks.intensity.tobytes() == whole.intensity.tobytes()
    assert in_blocks.x_um.tobytes() == whole.x_um.tobytes()


_digits = st.text(alphabet="0123456789", min_size=0, max_size=12)
_decimal = st.builds(
    lambda sign, whole, fraction, point, exponent: (
        sign + (whole or ("" if fraction and point else "0")) + ("." + fraction if point else "")
        + exponent),
    st.sampled_from(["", "-", "+"]), _digits, _digits, st.booleans(),
    st.one_of(st.just(""), st.builds(lambda e, k: f"{e}{k:+d}" if k % 2 else f"{e}{k}",
                                     st.sampled_from("eE"), st.integers(-30, 30))))


@FUZZ
@given(cells=st.lists(_decimal, min_size=4, max_size=4))
def test_random_decimals_read_as_the_correctly_rounded_float32(cells):
    raw = (HEADER + "0,0," + ",".join(cells) + "\n").encode()
    found = map_columnar.read_map_wide_columnar(raw)  # compiled or, declined, Arrow
    expected = [_nearest_float32(cell) for cell in cells]
    if not all(np.isfinite(expected)) or max(map(abs, expected)) > MAX_ABS_VALUE:
        assert found is None  # left to the text reader, which refuses it naming the line
        return
    assert found.intensity[0].tobytes() == np.array(expected, np.float32).tobytes()


@FUZZ
@given(cells=st.lists(st.builds(lambda v, d: f"{v:.{d}f}", st.floats(-1e6, 1e6),
                                st.integers(0, 6)), min_size=6, max_size=6))
def test_short_decimals_are_read_by_the_compiled_parser_as_cpython_floats(cells):
    raw = (HEADER + ",".join(cells) + "\n").encode()
    rows = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    assert isinstance(rows, map_fastparse.WideRows)  # the common case is never declined
    np.testing.assert_array_equal(rows.positions[0], [float(c) for c in cells[:2]])
    assert rows.intensity[0].tobytes() == np.array(
        [_nearest_float32(c) for c in cells[2:]], np.float32).tobytes()


MALFORMED = {
    "not a number": "1,2,n/a,4,5,6", "nan": "1,2,nan,4,5,6", "inf": "1,2,3,-inf,5,6",
    "empty cell": "1,2,,4,5,6", "quoted": '1,2,"3",4,5,6', "trailing delimiter": "1,2,3,4,5,6,",
    "too few cells": "1,2,3,4,5", "too many cells": "1,2,3,4,5,6,7", "bad exponent": "1,2,3e,4,5,6",
    "two points": "1,2,3.4.5,4,5,6", "bare carriage return": "1,2,3,4,5,6\r1,3,3,4,5,6",
    "comment after header": "# note", "blank with spaces": "   ", "hex": "1,2,0x1f,4,5,6",
    "too many digits": "1,2,3.14159265358979323846,4,5,6", "huge exponent": "1,2,3e39,4,5,6",
    "tiny exponent": "1,2,3e-50,4,5,6", "repeated position": "0,0,1,2,3,4",
    "tab inside": "1,2,\t3,4,5,6", "decimal comma": "1,2,3;4,5,6", "huge value": "1,2,5e13,4,5,6",
}


@pytest.mark.parametrize("name", sorted(MALFORMED))
def test_a_malformed_row_gives_the_same_outcome_as_before(monkeypatch, tmp_path, name):
    raw = (HEADER + "0,0,1,2,3,4\n" + MALFORMED[name] + "\n").encode()
    path = tmp_path / "map.csv"
    path.write_bytes(raw)
    now = _outcome(path)
    with monkeypatch.context() as patch:
        patch.setattr(map_columnar, "read_wide_rows", lambda *args: None)
        before = _outcome(path)
    assert now == before
    rows = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    if name not in ("repeated position", "huge value"):  # cells fine, judged after the parse
        assert isinstance(rows, map_fastparse.Declined)
        assert len(HEADER) + len("0,0,1,2,3,4\n") <= rows.offset <= len(raw)


def test_a_declined_cell_is_reported_at_its_byte_offset():
    raw = (HEADER + "0,0,1,2,3,4\n1,0,5,6,x7,8\n").encode()
    declined = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    assert isinstance(declined, map_fastparse.Declined)
    assert raw[declined.offset:declined.offset + 2] == b"x7"


def test_a_bad_cell_on_disk_still_names_its_file_line(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("# comment\n" + HEADER + "0,0,1,2,3,4\n1,0,5,6,7,8\n2,0,1,2,oops,4\n")
    with pytest.raises(AnalysisInputError) as refused:
        read_spectrum_or_map(Path(bad), bad.name)
    assert refused.value.line == 5 and "oops" in str(refused.value)


def test_a_double_halfway_between_float32_values_is_declined_unless_exact(monkeypatch):
    # 89.88386917114258 rounds to the double exactly halfway between two float32 values,
    # which rounds to even (89.883865); the decimal itself lies above, at 89.88387.
    tricky = "89.88386917114258"
    raw = (HEADER + f"0,0,{tricky},10753808.5,16777217,-0.75\n").encode()
    declined = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    assert declined == map_fastparse.Declined(map_fastparse.HALFWAY, len(HEADER) + 4)
    found = map_columnar.read_map_wide_columnar(raw)
    assert found.metadata["reader"] == "columnar (Apache Arrow), float32"
    assert found.intensity[0, 0] == _nearest_float32(tricky) == np.float32(89.88387)
    assert np.float32(float(tricky)) != found.intensity[0, 0]  # what double rounding gives
    exact_halfway = (HEADER + "0,0,1,10753808.5,16777217,-0.75\n").encode()
    rows = map_fastparse.read_wide_rows(exact_halfway, len(HEADER), ",", 4, True)
    assert rows.intensity.tolist() == [[1.0, 10753808.0, 16777216.0, -0.75]]  # ties to even


def test_rows_shorter_than_the_first_grow_the_map(monkeypatch):
    # The map is sized from the first row's length: a long first row, then 300 short ones.
    long_row = "0,0," + ",".join(["1234567.1234567"] * 4)
    short = [f"{k},1,{k % 7},2,3,{k % 5}" for k in range(1, 301)]
    raw = (HEADER + "\n".join([long_row, *short]) + "\n").encode()
    rows = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    assert rows.intensity.shape == (301, 4) and rows.positions.shape == (301, 2)
    arrow = _arrow_only(monkeypatch, raw)
    assert rows.intensity.tobytes() == arrow.intensity.tobytes()
    np.testing.assert_array_equal(rows.positions[:, 0], arrow.x_um)


_NOISE = st.text(alphabet="0123456789+-.eE \t;\"#x", min_size=0, max_size=6)
_PLAIN = st.builds(lambda v, d, pad: pad + f"{v:.{d}f}" + pad, st.floats(-1e5, 1e5),
                   st.integers(0, 5), st.sampled_from(["", "", " "]))
_ENDINGS = ["\n"] * 6 + ["\r\n"] * 3 + ["\r", "\n\n", ",\n", ""]


def _noisy_row(cells, which, other, ending):
    """Six plain cells, one of them (``which`` < 6) replaced, one dropped (6) or added (7)."""
    cells = (cells[:which] + [other] + cells[which + 1:] if which < 6
             else cells[:5] if which == 6 else [*cells, other] if which == 7 else cells)
    return ",".join(cells) + _ENDINGS[ending % len(_ENDINGS)]


_ROW = st.builds(_noisy_row, st.lists(_PLAIN, min_size=6, max_size=6), st.integers(0, 24),
                 st.one_of(_decimal, _NOISE), st.integers(0, 40))


@FUZZ
@given(rows=st.lists(_ROW, min_size=1, max_size=3))
def test_noisy_rows_are_accepted_only_as_arrow_reads_them(rows):
    raw = (HEADER + "0,0,1,2,3,4\n" + "".join(rows)).encode()
    found = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    if isinstance(found, map_fastparse.Declined):
        return
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(map_columnar, "read_wide_rows", lambda *args: None)
        arrow = map_columnar.read_map_wide_columnar(raw)
    compiled = map_columnar.read_map_wide_columnar(raw)
    if arrow is None:  # Arrow read the cells too, then refused the map (repeated positions)
        assert compiled is None
        return
    assert compiled.intensity.tobytes() == arrow.intensity.tobytes()
    assert compiled.x_um.tobytes() == arrow.x_um.tobytes()


def _one_thread(monkeypatch, raw):
    """The same parse with every block on the calling thread."""
    with monkeypatch.context() as patch:
        patch.setattr(map_fastparse, "_SPLIT_BYTES", 1 << 62)
        return map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)


@pytest.mark.parametrize("block_bytes", [97, 150, 1000, 4096])
def test_two_threads_read_bit_for_bit_what_one_thread_reads(monkeypatch, block_bytes):
    # Blank lines ("", "\r": the second half's rows then move up to close the gap) and
    # both line ends land on every side of the split of each block (its middle) and of the
    # blocks, and the rows are shorter than the first, so the map grows while both halves
    # are parsed; the one-thread parse itself equals Arrow's reading bit for bit (above).
    rng = np.random.default_rng(7)
    lines = ["0,0," + ",".join(["1234567.1234567"] * 4)]
    for k in range(1, 400):
        ending = rng.choice(["\n", "\r\n", "\n\n", "\r\n\r\n", "\n\r\n"])
        cells = [f"{v:.{rng.integers(0, 4)}f}" for v in rng.normal(0, 1e4, 4)]
        lines.append(f"{k},1," + ",".join(cells) + ending)
    raw = (HEADER + lines[0] + "\n" + "".join(lines[1:])).encode()
    monkeypatch.setattr(map_fastparse, "_BLOCK_BYTES", block_bytes)
    single = _one_thread(monkeypatch, raw)
    calls = {"_second_run": 0, "grow": 0}
    for name in calls:
        method = getattr(map_fastparse._Rows, name)

        def counted(self, *args, method=method, name=name):
            calls[name] += 1
            return method(self, *args)

        monkeypatch.setattr(map_fastparse._Rows, name, counted)
    monkeypatch.setattr(map_fastparse, "_SPLIT_BYTES", 1)
    threaded = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    assert calls["_second_run"] > 1 and calls["grow"] > 0  # both paths were taken
    assert isinstance(single, map_fastparse.WideRows) and single.intensity.shape == (400, 4)
    assert threaded.intensity.tobytes() == single.intensity.tobytes()
    assert threaded.positions.tobytes() == single.positions.tobytes()
    assert threaded.intensity.tobytes() == _arrow_only(monkeypatch, raw).intensity.tobytes()


@pytest.mark.parametrize("bad_rows", [(30,), (170,), (30, 170), (199,)])
def test_two_threads_report_the_first_fault_in_the_file_as_one_thread_does(monkeypatch,
                                                                             bad_rows):
    # One block of 200 rows split in its middle (about row 100): a fault before the split,
    # after it, on both sides (the first is reported), and on the last row.
    rows = [f"{k},0,{k},2,3,4" for k in range(200)]
    for bad in bad_rows:
        rows[bad] = f"{bad},0,{bad},x2,3,4"
    raw = (HEADER + "\n".join(rows) + "\n").encode()
    single = _one_thread(monkeypatch, raw)
    monkeypatch.setattr(map_fastparse, "_SPLIT_BYTES", 1)
    threaded = map_fastparse.read_wide_rows(raw, len(HEADER), ",", 4, True)
    assert isinstance(single, map_fastparse.Declined)
    assert threaded == single
    assert raw[threaded.offset:threaded.offset + 2] == b"x2"
