"""Readers for spectra and Raman maps exported as delimited text, and a dispatcher.

All readers take the file *contents* (``str``, or ``bytes`` decoded as UTF-8 with a
latin-1 fallback), never a path.  Numbers are parsed a whole block at a time with
:func:`numpy.loadtxt`; only when that fails does a line-by-line pass run, to name the
1-based line and the cell at fault in the :class:`~qc.analysis.errors.AnalysisInputError`.

Layouts understood (common practice for instrument text exports; no single standard):

* two columns, x then y, separated by comma, tab, semicolon or blanks, with a decimal
  point or, when the separator is not a comma, a decimal comma (``1001,4;523,1``);
* comment lines starting with ``#``, ``%``, ``!`` or ``//`` anywhere, and free-text header
  lines before the first numeric line;
* maps "wide": a header row ``x, y, shift₁, shift₂, …`` then one row per point;
* maps "long": rows ``x, y, shift, intensity`` (optionally after a header row), every
  point carrying the same set of shifts, in any row order.

:func:`read_spectrum_or_map` tells a map from a spectrum by its first data row.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .errors import AnalysisInputError
from .jcamp import read_jcamp
from .spectrum import RamanMap, Spectrum

_COMMENT_PREFIXES = ("#", "%", "!", "//")
_NUMERIC_START = re.compile(r"\s*[-+.\d]")
_DECIMAL_COMMA_CELL = re.compile(r"[-+]?\d*,\d+(?:[eE][-+]?\d+)?")
_DELIMITER_NAMES = {",": "comma", "\t": "tab", ";": "semicolon", None: "whitespace"}
_JCAMP_SUFFIXES = (".jdx", ".dx", ".jcamp", ".jcm")

# Sane sizes of an instrument export (common practice): a CCD row has a few thousand pixels,
# so even a stitched spectrum in a wide map row stays far below MAX_COLUMNS; a 16-bit
# detector reads at most 65 535 counts per pixel and readout, so a cell beyond
# MAX_ABS_VALUE (shifts, positions and summed counts alike) is not a measurement.
MAX_COLUMNS = 65_536
MAX_ABS_VALUE = 1e12


def _refuse_wide_rows(texts: list[str], numbers: list[int], delimiter: str | None) -> None:
    """Refuse a row of more than ``MAX_COLUMNS`` cells before anything parses it."""
    for text, number in zip(texts, numbers, strict=True):
        cells = (text.count(delimiter) + 1) if delimiter else len(text.split())
        if cells > MAX_COLUMNS:
            raise AnalysisInputError(
                f"{cells} columns; an export row has at most {MAX_COLUMNS}", line=number
            )


def decode_text(data: str | bytes) -> str:
    """Return file contents as text: UTF-16 with its byte-order mark, else UTF-8, else latin-1."""
    if isinstance(data, str):
        return data
    if not isinstance(data, (bytes, bytearray, memoryview)):
        raise AnalysisInputError(
            f"expected file contents as str or bytes, got {type(data).__name__}",
            field="data",
        )
    raw = bytes(data)
    if raw.startswith(
        (b"\xff\xfe", b"\xfe\xff")
    ):  # some instrument software writes UTF-16
        try:
            return raw.decode("utf-16")
        except UnicodeDecodeError:
            pass
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return raw.decode("latin-1")  # every byte sequence is valid latin-1


# ---------------------------------------------------------------------------------------
# Layout: which lines are comments, header and data; delimiter; decimal comma
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Lines:
    numbers: list[int]  # 1-based line number of each kept (non-blank, non-comment) line
    texts: list[str]
    comment_count: int
    total: int


def _content_lines(text: str) -> _Lines:
    numbers, texts, comments = [], [], 0
    all_lines = text.splitlines()
    for number, line in enumerate(all_lines, start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith(_COMMENT_PREFIXES):
            comments += 1
            continue
        numbers.append(number)
        texts.append(stripped)
    if not texts:
        raise AnalysisInputError(
            "the file is empty (no data lines)", line=max(len(all_lines), 1)
        )
    return _Lines(numbers, texts, comments, len(all_lines))


def _detect_delimiter(line: str) -> str | None:
    """Delimiter of one line: tab, semicolon, comma, or ``None`` for blanks."""
    if "\t" in line:
        return "\t"
    if ";" in line:
        return ";"
    if "," in line:
        cells = line.split()
        with_comma = [c for c in cells if "," in c]
        if len(cells) >= 2 and all(
            _DECIMAL_COMMA_CELL.fullmatch(c) for c in with_comma
        ):
            return None  # "1001,4 523,1": blanks separate, commas are decimal marks
        return ","
    return None


def _split(line: str, delimiter: str | None) -> list[str]:
    return (
        line.split()
        if delimiter is None
        else [c.strip() for c in line.split(delimiter)]
    )


def _first_numeric(lines: _Lines) -> int:
    for index, text in enumerate(lines.texts):
        if _NUMERIC_START.match(text):
            return index
    raise AnalysisInputError("no numeric data lines found", line=lines.numbers[-1])


# ---------------------------------------------------------------------------------------
# Block parsing: numpy on the whole block, a slow pass only to explain a failure
# ---------------------------------------------------------------------------------------


def _parse_block(
    texts: list[str], numbers: list[int], delimiter: str | None, n_columns: int | None
) -> tuple[np.ndarray, bool]:
    """Parse data lines into a (rows, columns) float array; say if decimal commas were used."""
    _refuse_wide_rows(texts, numbers, delimiter)
    decimal_comma = delimiter != "," and any("," in t for t in texts)
    rows = [t.replace(",", ".") for t in texts] if decimal_comma else texts
    try:
        block = np.loadtxt(
            rows, delimiter=delimiter, comments=None, ndmin=2, dtype=float
        )
    except ValueError as error:
        _explain_parse_failure(rows, numbers, delimiter, n_columns)
        raise AnalysisInputError(
            "the data could not be read as numbers", line=numbers[0]
        ) from error
    if n_columns is not None and block.shape[1] != n_columns:
        _explain_parse_failure(rows, numbers, delimiter, n_columns)
    bad = ~np.isfinite(block)
    if bad.any():
        row, column = np.argwhere(bad)[0]
        raise AnalysisInputError(
            f"cell {column + 1} is not a finite number ({block[row, column]})",
            line=numbers[row],
        )
    huge = np.abs(block) > MAX_ABS_VALUE
    if huge.any():
        row, column = np.argwhere(huge)[0]
        raise AnalysisInputError(
            f"cell {column + 1} is {block[row, column]:g}; a value in an instrument export "
            f"is at most {MAX_ABS_VALUE:g} in size",
            line=numbers[row],
        )
    return block, decimal_comma


def _explain_parse_failure(rows, numbers, delimiter, n_columns) -> None:
    """Find the first line that breaks the block and raise an error naming it."""
    expected = n_columns
    for text, number in zip(rows, numbers, strict=True):
        cells = _split(text, delimiter)
        if expected is None:
            expected = len(cells)
        if len(cells) != expected:
            raise AnalysisInputError(
                f"expected {expected} columns, found {len(cells)}", line=number
            )
        for position, cell in enumerate(cells, start=1):
            try:
                float(cell)
            except ValueError:
                shown = cell if cell else "(empty)"
                raise AnalysisInputError(
                    f"cell {position} is not a number: '{shown[:40]}'", line=number
                ) from None


def _ascending(x: np.ndarray, numbers: list[int], what: str) -> np.ndarray:
    """Index order that makes ``x`` ascending; refuse repeats and axes that turn back."""
    steps = np.diff(x)
    if np.any(steps == 0):
        index = int(np.flatnonzero(steps == 0)[0]) + 1
        raise AnalysisInputError(
            f"{what} {x[index]:g} repeats the line before", line=numbers[index]
        )
    if x.size > 1 and not (np.all(steps > 0) or np.all(steps < 0)):
        index = int(np.flatnonzero(np.sign(steps) != np.sign(steps[0]))[0]) + 1
        raise AnalysisInputError(
            f"{what} is not monotonic: {x[index]:g} turns back", line=numbers[index]
        )
    return np.arange(x.size) if x.size < 2 or steps[0] > 0 else np.arange(x.size)[::-1]


# ---------------------------------------------------------------------------------------
# Spectra
# ---------------------------------------------------------------------------------------


def read_two_column(
    data: str | bytes, *, x_unit: str = "1/cm", y_unit: str = "counts"
) -> Spectrum:
    """Read a two-column (x, y) text spectrum.

    Parameters
    ----------
    data : str or bytes
        File contents.
    x_unit, y_unit : str
        Units to attach (a text export rarely states them reliably): Raman shift in
        cm⁻¹ and detector counts by default.

    Returns
    -------
    Spectrum
        ``x`` ascending (a descending file is reversed).  ``metadata`` records
        ``header_lines`` (free-text lines before the data, and their text in
        ``header``), ``comment_lines``, ``delimiter`` ("comma", "tab", "semicolon" or
        "whitespace") and ``decimal_comma``.

    Raises
    ------
    AnalysisInputError
        Naming the 1-based line: empty input, a non-numeric cell, NaN or infinity, a
        single point, a repeated or non-monotonic x, a wrong number of columns.
    """
    lines = _content_lines(decode_text(data))
    start = _first_numeric(lines)
    delimiter = _detect_delimiter(lines.texts[start])
    texts, numbers = lines.texts[start:], lines.numbers[start:]
    block, decimal_comma = _parse_block(texts, numbers, delimiter, n_columns=2)
    if block.shape[0] < 2:
        raise AnalysisInputError(
            "a spectrum needs at least 2 points, found 1", line=numbers[0]
        )
    order = _ascending(block[:, 0], numbers, "x value")
    metadata = {
        "header_lines": start,
        "header": lines.texts[:start],
        "comment_lines": lines.comment_count,
        "delimiter": _DELIMITER_NAMES[delimiter],
        "decimal_comma": decimal_comma,
    }
    return Spectrum(block[order, 0], block[order, 1], x_unit, y_unit, metadata)


def read_spectrum(data: str | bytes, filename: str | None = None) -> Spectrum:
    """Read one spectrum from JCAMP-DX or two-column text, whichever the contents are.

    A file whose first non-blank line starts with ``##`` is JCAMP-DX
    (:func:`~qc.analysis.jcamp.read_jcamp`), as is any file named ``*.jdx``, ``*.dx``,
    ``*.jcamp`` or ``*.jcm``; anything else is read by :func:`read_two_column`.  Bytes
    are decoded as UTF-8, falling back to latin-1.
    """
    text = decode_text(data)
    first = next((line.strip() for line in text.splitlines() if line.strip()), "")
    named_jcamp = bool(filename) and str(filename).lower().endswith(_JCAMP_SUFFIXES)
    if first.startswith("##") or named_jcamp:
        return read_jcamp(text)
    return read_two_column(text)


# ---------------------------------------------------------------------------------------
# Maps
# ---------------------------------------------------------------------------------------


def _map_metadata(
    lines: _Lines, header_lines: int, delimiter, decimal_comma, layout
) -> dict:
    return {
        "layout": layout,
        "header_lines": header_lines,
        "comment_lines": lines.comment_count,
        "delimiter": _DELIMITER_NAMES[delimiter],
        "decimal_comma": decimal_comma,
        "intensity_unit": "counts",
    }


def _refuse_repeated_positions(x_um, y_um, numbers) -> None:
    positions = np.column_stack([x_um, y_um])
    _, first = np.unique(positions, axis=0, return_index=True)
    if first.size != positions.shape[0]:
        seen = np.zeros(positions.shape[0], dtype=bool)
        seen[first] = True
        row = int(np.flatnonzero(~seen)[0])
        raise AnalysisInputError(
            f"position ({x_um[row]:g}, {y_um[row]:g}) µm occurs twice",
            line=numbers[row],
        )


def read_map_wide(data: str | bytes) -> RamanMap:
    """Read a map with a header row ``x, y, shift₁, shift₂, …`` and one row per point.

    Returns
    -------
    RamanMap
        Positions in µm as written, shifts in cm⁻¹ made ascending (columns reordered
        with them), ``grid_shape`` inferred.

    Raises
    ------
    AnalysisInputError
        Naming the 1-based line: no header, a non-numeric shift in the header, repeated
        or non-monotonic shifts, rows of a different length, non-numeric or non-finite
        cells, a position given twice.
    """
    if isinstance(data, (bytes, bytearray, memoryview)):
        fast = _read_map_wide_columnar(bytes(data))
        if fast is not None:
            return fast
    lines = _content_lines(decode_text(data))
    header_text, header_line = lines.texts[0], lines.numbers[0]
    delimiter = _detect_delimiter(header_text)
    _refuse_wide_rows([header_text], [header_line], delimiter)
    decimal_comma = delimiter != "," and "," in header_text
    cells = _split(
        header_text.replace(",", ".") if decimal_comma else header_text, delimiter
    )
    if len(cells) < 4:
        raise AnalysisInputError(
            "a wide map header needs x, y and at least two shifts", line=header_line
        )
    try:
        shift = np.array([float(c) for c in cells[2:]])
    except ValueError:
        bad = next(i for i, c in enumerate(cells[2:], start=3) if not _is_number(c))
        raise AnalysisInputError(
            f"header cell {bad} should be a Raman shift, got '{cells[bad - 1][:40]}'",
            line=header_line,
        ) from None
    if not np.all(np.isfinite(shift)):
        raise AnalysisInputError(
            "a shift in the header is not finite", line=header_line
        )
    order = _ascending(shift, [header_line] * shift.size, "shift")
    texts, numbers = lines.texts[1:], lines.numbers[1:]
    if not texts:
        raise AnalysisInputError("the map has a header but no points", line=header_line)
    block, comma_in_rows = _parse_block(
        texts, numbers, delimiter, n_columns=2 + shift.size
    )
    _refuse_repeated_positions(block[:, 0], block[:, 1], numbers)
    metadata = _map_metadata(
        lines, 1, delimiter, decimal_comma or comma_in_rows, "wide"
    )
    return RamanMap(
        block[:, 0], block[:, 1], shift[order], block[:, 2:][:, order], None, metadata
    )


def _header_of(raw: bytes) -> tuple[int, str] | None:
    """0-based index and text of the first line that is neither blank nor a comment."""
    start = 0
    for index in range(1000):
        end = raw.find(b"\n", start)
        line = raw[start:] if end < 0 else raw[start:end]
        text = line.decode("utf-8-sig" if index == 0 else "utf-8", errors="replace").strip()
        if text and not text.startswith(_COMMENT_PREFIXES):
            return index, text
        if end < 0:
            return None
        start = end + 1
    return None


def _read_map_wide_columnar(raw: bytes) -> RamanMap | None:
    """The common wide map (one header, comma/tab/semicolon, decimal points) read by columns.

    Apache Arrow's multithreaded CSV reader parses straight into float32 intensities (7
    significant digits, finer than any detector's counts) without building Python rows,
    about ten times faster than :func:`numpy.loadtxt` on a 50 MB map and with a fraction of
    its memory.  Anything unusual (decimal commas, blanks as separator, comments after the
    header, a bad cell) returns ``None`` so the line-by-line reader names the line at fault.
    """
    try:
        import pyarrow as arrow  # optional speed-up; the numpy path always works
        from pyarrow import csv as arrow_csv
    except ImportError:
        return None
    found = _header_of(raw)
    if found is None or raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return None
    header_index, header_text = found
    delimiter = _detect_delimiter(header_text)
    if delimiter is None or (delimiter != "," and "," in header_text):
        return None
    cells = _split(header_text, delimiter)
    if len(cells) < 4 or not all(_is_number(c) for c in cells[2:]):
        return None
    names = [f"c{i}" for i in range(len(cells))]
    types = {name: arrow.float64() if i < 2 else arrow.float32() for i, name in enumerate(names)}
    try:
        table = arrow_csv.read_csv(
            arrow.py_buffer(raw),
            read_options=arrow_csv.ReadOptions(skip_rows=header_index + 1, column_names=names,
                                               block_size=1 << 24),
            parse_options=arrow_csv.ParseOptions(delimiter=delimiter),
            convert_options=arrow_csv.ConvertOptions(column_types=types, strings_can_be_null=False,
                                                     quoted_strings_can_be_null=False))
    except (arrow.ArrowInvalid, arrow.ArrowNotImplementedError, ValueError):
        return None
    if table.num_rows == 0 or any(column.null_count for column in table.columns):
        return None
    shift = np.array([float(c) for c in cells[2:]])
    if not np.all(np.isfinite(shift)) or np.any(np.diff(shift) == 0) or not (
            np.all(np.diff(shift) > 0) or np.all(np.diff(shift) < 0)):
        return None
    order = np.arange(shift.size) if shift[1] > shift[0] else np.arange(shift.size)[::-1]
    # Columns are filled whole (contiguous writes), then turned into one row per point.
    by_shift = np.empty((shift.size, table.num_rows), dtype=np.float32)
    for row, source in enumerate(order):
        by_shift[row] = table.column(2 + int(source)).to_numpy()
    intensity = np.ascontiguousarray(by_shift.T)
    del by_shift
    x_um, y_um = table.column(0).to_numpy(), table.column(1).to_numpy()
    del table
    if not (np.isfinite(intensity).all() and np.isfinite(x_um).all() and np.isfinite(y_um).all()):
        return None
    positions = np.column_stack([x_um, y_um])
    if np.unique(positions, axis=0).shape[0] != positions.shape[0]:
        return None
    metadata = {"layout": "wide", "header_lines": 1, "comment_lines": header_index,
                "delimiter": _DELIMITER_NAMES[delimiter], "decimal_comma": False,
                "intensity_unit": "counts", "reader": "columnar (Apache Arrow), float32"}
    return RamanMap(x_um, y_um, shift[order], intensity, None, metadata)


def read_map_long(data: str | bytes) -> RamanMap:
    """Read a map written one row per (position, shift): ``x, y, shift, intensity``.

    Points keep the order in which their positions first appear; within a point the
    rows may come in any order.  An optional free-text header row is skipped.

    Raises
    ------
    AnalysisInputError
        Naming the 1-based line: wrong column count, non-numeric or non-finite cells, a
        point whose set of shifts differs from the first point's, a shift repeated at
        one position (which is how a repeated position shows in this layout).
    """
    lines = _content_lines(decode_text(data))
    start = _first_numeric(lines)
    delimiter = _detect_delimiter(lines.texts[start])
    texts, numbers = lines.texts[start:], np.asarray(lines.numbers[start:])
    block, decimal_comma = _parse_block(texts, list(numbers), delimiter, n_columns=4)
    positions = block[:, :2]
    _, first_row, inverse = np.unique(
        positions, axis=0, return_index=True, return_inverse=True
    )
    inverse = inverse.ravel()
    rank = np.empty(first_row.size, dtype=np.intp)
    rank[np.argsort(first_row)] = np.arange(first_row.size)
    point = rank[inverse]  # point index in order of first appearance
    order = np.lexsort((block[:, 2], point))
    sorted_point, sorted_shift = point[order], block[order, 2]
    counts = np.bincount(point)
    n_shift = int(counts[0])
    if np.any(counts != n_shift):
        odd = int(np.flatnonzero(counts != n_shift)[0])
        raise AnalysisInputError(
            f"the point at this position has {counts[odd]} shifts, the first point has {n_shift}",
            line=int(numbers[first_row[np.argsort(first_row)][odd]]),
        )
    same_point = sorted_point[1:] == sorted_point[:-1]
    repeated = np.flatnonzero(same_point & (sorted_shift[1:] == sorted_shift[:-1]))
    if repeated.size:
        row = order[repeated[0] + 1]
        raise AnalysisInputError(
            f"shift {block[row, 2]:g} is given twice for position "
            f"({block[row, 0]:g}, {block[row, 1]:g}) µm",
            line=int(numbers[row]),
        )
    shift_grid = sorted_shift.reshape(-1, n_shift)
    mismatch = np.flatnonzero(np.any(shift_grid != shift_grid[0], axis=1))
    if mismatch.size:
        column = int(np.flatnonzero(shift_grid[mismatch[0]] != shift_grid[0])[0])
        row = order[mismatch[0] * n_shift + column]
        raise AnalysisInputError(
            f"shift {block[row, 2]:g} does not match the first point's shift axis",
            line=int(numbers[row]),
        )
    if n_shift < 2:
        raise AnalysisInputError(
            "each point needs at least 2 shifts", line=int(numbers[0])
        )
    point_rows = order.reshape(-1, n_shift)[:, 0]
    metadata = _map_metadata(lines, start, delimiter, decimal_comma, "long")
    return RamanMap(
        block[point_rows, 0],
        block[point_rows, 1],
        shift_grid[0],
        block[order, 3].reshape(-1, n_shift),
        None,
        metadata,
    )


def _is_number(cell: str) -> bool:
    try:
        float(cell)
    except ValueError:
        return False
    return True


def read_map(data: str | bytes) -> RamanMap:
    """Read a map in the wide or the long layout, telling them apart by the first row.

    A first row whose cells after the second are all numbers (x, y, then shifts) is a
    wide header; a first row of four cells that is a text header or is itself numeric
    starts a long layout.  Anything else is refused.
    """
    text = decode_text(data)
    lines = _content_lines(text)
    first, number = lines.texts[0], lines.numbers[0]
    delimiter = _detect_delimiter(first)
    decimal_comma = delimiter != "," and "," in first
    cells = _split(first.replace(",", ".") if decimal_comma else first, delimiter)
    all_numeric = all(_is_number(c) for c in cells)
    if (
        len(cells) >= 4
        and not _is_number(cells[0])
        and all(_is_number(c) for c in cells[2:])
    ):
        return read_map_wide(text)
    if len(cells) == 4 and (all_numeric or not any(_is_number(c) for c in cells)):
        return read_map_long(text)
    raise AnalysisInputError(
        "cannot tell the map layout: expected a header 'x, y, shift…' (wide) or four "
        "columns x, y, shift, intensity (long)",
        line=number,
    )


def looks_like_map(text: str, filename: str | None = None) -> bool:
    """Whether text holds a map: x, y and at least two more columns on its first data row.

    JCAMP-DX (by its ``##`` labels or its file name) and two-column text are spectra.
    """
    first = next((line.strip() for line in text.splitlines()
                  if line.strip() and not line.lstrip().startswith("#")), "")
    if first.startswith("##") or str(filename or "").lower().endswith(_JCAMP_SUFFIXES):
        return False
    return len([c for c in re.split(r"[,;\t]|\s+", first) if c]) >= 4


def read_spectrum_or_map(data: str | bytes, filename: str | None = None) -> Spectrum | RamanMap:
    """Read a Raman file that may be one spectrum or a map (:func:`looks_like_map`)."""
    if isinstance(data, (bytes, bytearray, memoryview)):
        fast = _read_map_wide_columnar(bytes(data))
        if fast is not None:
            return fast
    text = decode_text(data)
    if looks_like_map(text, filename):
        return read_map(text)
    return read_spectrum(text, filename)
