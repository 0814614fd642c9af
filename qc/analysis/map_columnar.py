"""The common wide Raman map read by columns (Apache Arrow's CSV reader), into float32.

An optional fast path of :func:`qc.analysis.map_readers.read_map_wide`: it answers ``None``
for anything unusual, and the line-by-line reader then reads the file or names its fault.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ._validation import all_finite
from .map_fastparse import WideRows, read_wide_rows
from .spectrum import RamanMap, first_repeated_point
from .text_tables import (
    COMMENT_PREFIXES,
    DELIMITER_NAMES,
    MAX_ABS_VALUE,
    detect_delimiter,
    is_number,
    split_cells,
)

_COLUMNS_AT_ONCE = 64  # columnar reader: shifts gathered per pass into the row-major map
# Arrow's parse blocks: 2 MiB.  Streaming an 82 MB map, Arrow's buffers grew with the block
# (4 MiB: the parse peaked 15 MiB above the analysis; 1 MiB: a fifth more parse CPU for
# nothing, the analysis then sets the peak).  Parsed in this thread: on the few shared
# cores of a lab's worker the thread pool bought little time for more parse memory
# (benchmarks/REPORT.md, 2026-12-03).
_BLOCK_BYTES = 2 << 20
_ARROW_THREADS = False
# The start of a file on disk searched for the header: 1,000 comment lines and a header of
# MAX_COLUMNS shifts fit easily; a header beyond it sends the file to the text reader.
_HEAD_BYTES = 4 << 20


def _head_of(source: bytes | Path) -> tuple[bytes, bool]:
    """The start of the file and whether it is the whole file."""
    if isinstance(source, Path):
        with source.open("rb") as handle:
            head = handle.read(_HEAD_BYTES + 1)
        return head[:_HEAD_BYTES], len(head) <= _HEAD_BYTES
    return source, True


def _header_of(raw: bytes, whole: bool = True) -> tuple[int, str] | None:
    """0-based index and text of the first line that is neither blank nor a comment."""
    start = 0
    for index in range(1000):
        end = raw.find(b"\n", start)
        if end < 0 and not whole:
            return None  # the line runs past the part read
        line = raw[start:] if end < 0 else raw[start:end]
        text = line.decode("utf-8-sig" if index == 0 else "utf-8", errors="replace").strip()
        if text and not text.startswith(COMMENT_PREFIXES):
            return index, text
        if end < 0:
            return None
        start = end + 1
    return None


def _column_into(column, out: np.ndarray) -> None:
    """Copy a null-free float Arrow array into ``out`` from its data buffer.

    (``to_numpy`` would import pandas, 20 MiB and a quarter of a second, into the worker.)
    """
    out[:] = np.frombuffer(column.buffers()[1], dtype=out.dtype, count=len(column),
                           offset=column.offset * out.itemsize)


def _line_count(source: bytes | Path) -> int:
    """Lines in the file (a last line without its newline counted), read a block at a time."""
    if isinstance(source, Path):
        count, last = 0, b"\n"
        with source.open("rb") as handle:
            while block := handle.read(_BLOCK_BYTES):
                count, last = count + block.count(b"\n"), block[-1:]
        return count + (last != b"\n")
    return source.count(b"\n") + (not source.endswith(b"\n"))


def _batch_into(batch, intensity: np.ndarray, positions: np.ndarray, ascending: bool) -> None:
    """One parsed block of rows into its rows of the map (shifts made ascending)."""
    for index in range(2):
        _column_into(batch.column(index), positions[:, index])
    columns = batch.columns[2:] if ascending else batch.columns[:1:-1]
    for first in range(0, len(columns), _COLUMNS_AT_ONCE):
        group = columns[first:first + _COLUMNS_AT_ONCE]
        by_shift = np.empty((len(group), batch.num_rows), dtype=np.float32)
        for row, column in enumerate(group):
            _column_into(column, by_shift[row])
        intensity[:, first:first + len(group)] = by_shift.T


def _data_start(head: bytes, header_index: int) -> int | None:
    """Byte offset of the line after the header, when the compiled parser may start there.

    Arrow's reader skips ``header_index + 1`` lines; a quote or a bare carriage return
    before the data could make it count them otherwise, so such a file goes to Arrow.
    """
    start = 0
    for _ in range(header_index + 1):
        start = head.find(b"\n", start) + 1
        if start == 0:
            return None
    prefix = head[:start]
    if b'"' in prefix or prefix.count(b"\r") != prefix.count(b"\r\n"):
        return None
    return start


def _wide_header(source: bytes | Path) -> tuple[int, str, np.ndarray, int | None] | None:
    """Header line index, delimiter, shifts (as written) and data start of a plain wide map."""
    head, whole = _head_of(source)
    found = _header_of(head, whole)
    if found is None or head.startswith((b"\xff\xfe", b"\xfe\xff")):
        return None
    header_index, header_text = found
    delimiter = detect_delimiter(header_text)
    if delimiter is None or (delimiter != "," and "," in header_text):
        return None
    cells = split_cells(header_text, delimiter)
    if len(cells) < 4 or not all(is_number(c) for c in cells[2:]):
        return None
    shift = np.array([float(c) for c in cells[2:]])
    if not np.all(np.isfinite(shift)) or np.any(np.diff(shift) == 0) or not (
            np.all(np.diff(shift) > 0) or np.all(np.diff(shift) < 0)):
        return None
    return header_index, delimiter, shift, _data_start(head, header_index)


def _arrow_rows(source: bytes | Path, header_index: int, delimiter: str,
                shift: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """Positions and float32 intensities by Arrow's streaming CSV reader, or ``None``."""
    try:
        import pyarrow as arrow  # optional speed-up; the numpy path always works
        from pyarrow import csv as arrow_csv
    except ImportError:
        return None
    names = [f"c{i}" for i in range(shift.size + 2)]
    types = {name: arrow.float64() if i < 2 else arrow.float32() for i, name in enumerate(names)}
    options = dict(
        read_options=arrow_csv.ReadOptions(skip_rows=header_index + 1, column_names=names,
                                           block_size=_BLOCK_BYTES, use_threads=_ARROW_THREADS),
        parse_options=arrow_csv.ParseOptions(delimiter=delimiter),
        convert_options=arrow_csv.ConvertOptions(column_types=types, strings_can_be_null=False,
                                                 quoted_strings_can_be_null=False))
    # Streamed a block at a time (a file on disk is never read whole) into the one row-major
    # map, sized by the lines left after the header; no whole Arrow table is ever held.
    rows_at_most = max(_line_count(source) - header_index, 1)
    intensity = np.empty((rows_at_most, shift.size), dtype=np.float32)
    positions = np.empty((rows_at_most, 2))
    ascending = shift[1] > shift[0]
    stream = arrow.OSFile(str(source)) if isinstance(source, Path) else arrow.BufferReader(source)
    rows = 0
    try:
        with stream:
            for batch in arrow_csv.open_csv(stream, **options):
                if any(column.null_count for column in batch.columns):
                    return None
                end = rows + batch.num_rows
                if end > rows_at_most:
                    return None
                _batch_into(batch, intensity[rows:end], positions[rows:end], ascending)
                rows = end
    except (arrow.ArrowInvalid, arrow.ArrowNotImplementedError, ValueError):
        return None
    finally:
        # Arrow's allocator keeps freed pages for reuse; give them back, so the analysis
        # that follows does not stack its arrays on top of the parse's.
        arrow.default_memory_pool().release_unused()
    intensity.resize((rows, shift.size), refcheck=False)  # shrinks in place, no copy
    return positions[:rows], intensity


def _beyond_export_range(intensity: np.ndarray, positions: np.ndarray) -> bool:
    """Any cell beyond MAX_ABS_VALUE (min and max: no temporary the size of the map)."""
    return bool(max(-intensity.min(), intensity.max(), np.abs(positions).max())
                > MAX_ABS_VALUE)


def read_map_wide_columnar(source: bytes | Path) -> RamanMap | None:
    """The common wide map (one header, comma/tab/semicolon, decimal points) read by columns.

    The compiled parser (:mod:`qc.analysis.map_fastparse`) reads the plain decimal cells of
    almost every export straight into the float32 map; a file it declines goes to Apache
    Arrow's CSV reader, which parses into float32 intensities (7 significant digits, finer
    than any detector's counts) without building Python rows, about ten times faster than
    :func:`numpy.loadtxt` on a 50 MB map and with a fraction of its memory.  Both stream a
    block at a time into the map, so neither the raw file (a ``Path`` is read from disk)
    nor a whole Arrow table is ever held beside it.  Anything unusual (decimal commas,
    blanks as separator, comments after the header, a bad cell) returns ``None`` so the
    line-by-line reader names the line at fault.
    """
    header = _wide_header(source)
    if header is None:
        return None
    header_index, delimiter, shift, data_start = header
    ascending = bool(shift[1] > shift[0])
    fast = (None if data_start is None
            else read_wide_rows(source, data_start, delimiter, shift.size, ascending))
    if isinstance(fast, WideRows):
        positions, intensity, reader = fast.positions, fast.intensity, "compiled"
    else:
        parsed = _arrow_rows(source, header_index, delimiter, shift)
        if parsed is None:
            return None
        (positions, intensity), reader = parsed, "Apache Arrow"
    rows = positions.shape[0]
    # The compiled parser makes finite numbers only (mantissa < 2⁵³, power within ±22).
    if rows == 0 or (reader != "compiled"
                     and not (all_finite(intensity) and np.isfinite(positions).all())):
        return None
    if _beyond_export_range(intensity, positions):
        return None  # the text reader refuses such a cell and names its line
    intensity.setflags(write=False)  # handed to the map as it is, not copied
    if first_repeated_point(positions[:, 0], positions[:, 1]) is not None:
        return None
    metadata = {"layout": "wide", "header_lines": 1, "comment_lines": header_index,
                "delimiter": DELIMITER_NAMES[delimiter], "decimal_comma": False,
                "intensity_unit": "counts", "reader": f"columnar ({reader}), float32"}
    return RamanMap(positions[:, 0].copy(), positions[:, 1].copy(), np.sort(shift), intensity,
                    None, metadata)
