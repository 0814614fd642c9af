"""The columnar (Apache Arrow) wide-map reader agrees with numpy.loadtxt and defers on errors."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from qc.analysis.errors import AnalysisInputError
from qc.analysis.readers import read_map, read_spectrum_or_map

MAP = Path(__file__).resolve().parents[2] / "fixtures" / "raman" / "good_substrate_map.csv"


def test_columnar_map_equals_numpy_loadtxt_to_float32_precision():
    raw = MAP.read_bytes()
    fast = read_spectrum_or_map(raw, MAP.name)
    lines = [line for line in raw.decode().splitlines() if line and not line.startswith("#")]
    reference = np.loadtxt(lines[1:], delimiter=",")  # numpy's own parser, row by row
    assert fast.metadata["reader"].startswith("columnar") and fast.intensity.dtype == np.float32
    np.testing.assert_array_equal(fast.x_um, reference[:, 0])
    np.testing.assert_allclose(fast.intensity, reference[:, 2:], rtol=2 ** -23)


def test_a_bad_cell_still_names_its_line():
    lines = MAP.read_text().splitlines()
    header = next(i for i, line in enumerate(lines) if line and not line.startswith("#"))
    cells = lines[header + 3].split(",")
    cells[5] = "n/a"
    lines[header + 3] = ",".join(cells)
    with pytest.raises(AnalysisInputError) as refused:
        read_spectrum_or_map("\n".join(lines).encode(), MAP.name)
    assert refused.value.line == header + 4


def test_a_descending_header_is_made_ascending_like_the_text_reader():
    raw = MAP.read_bytes()
    lines = raw.decode().splitlines()
    header = next(i for i, line in enumerate(lines) if line and not line.startswith("#"))
    rows = [line.split(",") for line in lines[header:] if line]
    flipped = [row[:2] + row[2:][::-1] for row in rows]
    text = "\n".join(",".join(row) for row in flipped).encode()
    fast, slow = read_spectrum_or_map(text, MAP.name), read_map(text.decode())
    np.testing.assert_array_equal(fast.shift_cm1, slow.shift_cm1)
    np.testing.assert_allclose(fast.intensity, slow.intensity, rtol=2 ** -23)


def test_a_map_on_disk_is_read_by_columns_from_its_path_as_from_its_bytes(tmp_path):
    from_bytes = read_spectrum_or_map(MAP.read_bytes(), MAP.name)
    from_path = read_spectrum_or_map(MAP, MAP.name)
    assert from_path.metadata["reader"].startswith("columnar")
    np.testing.assert_array_equal(from_path.intensity, from_bytes.intensity)
    np.testing.assert_array_equal(from_path.shift_cm1, from_bytes.shift_cm1)
    # A bad cell on disk still names its line (the text reader takes over).
    lines = MAP.read_text().splitlines()
    cells = lines[5].split(",")
    cells[3] = "n/a"
    lines[5] = ",".join(cells)
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join(lines))
    with pytest.raises(AnalysisInputError) as refused:
        read_spectrum_or_map(bad, bad.name)
    assert refused.value.line == 6


@pytest.mark.parametrize("column, value", [(5, "5e13"), (5, "-2.5e12"), (0, "1e13")])
def test_a_cell_beyond_any_export_is_refused_on_every_path(tmp_path, column, value):
    # The text reader refuses a cell beyond MAX_ABS_VALUE (1e12; no detector counts that
    # high); the columnar paths (compiled and Arrow) must not accept what it refuses.
    lines = MAP.read_text().splitlines()
    header = next(i for i, line in enumerate(lines) if line and not line.startswith("#"))
    cells = lines[header + 2].split(",")
    cells[column] = value
    lines[header + 2] = ",".join(cells)
    text = "\n".join(lines) + "\n"
    on_disk = tmp_path / "huge.csv"
    on_disk.write_text(text)
    for source in (text.encode(), on_disk):
        with pytest.raises(AnalysisInputError) as refused:
            read_spectrum_or_map(source, MAP.name)
        assert refused.value.line == header + 3
        assert "at most 1e+12" in str(refused.value)
