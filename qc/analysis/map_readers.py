"""Readers for Raman maps exported as delimited text: the wide and the long layout.

* wide: a header row ``x, y, shift₁, shift₂, …`` then one row per point (the common form;
  :func:`~qc.analysis.map_columnar.read_map_wide_columnar` reads it by columns first);
* long: rows ``x, y, shift, intensity`` (optionally after a header row), every point
  carrying the same set of shifts, in any row order.

Faults are :class:`~qc.analysis.errors.AnalysisInputError` naming the 1-based line.
"""

from __future__ import annotations

import numpy as np

from .errors import AnalysisInputError
from .map_columnar import read_map_wide_columnar
from .spectrum import RamanMap
from .text_tables import (
    DELIMITER_NAMES,
    TextLines,
    ascending_order,
    content_lines,
    decode_text,
    detect_delimiter,
    first_numeric,
    is_number,
    parse_block,
    refuse_wide_rows,
    split_cells,
)


def _map_metadata(
    lines: TextLines, header_lines: int, delimiter, decimal_comma, layout
) -> dict:
    return {
        "layout": layout,
        "header_lines": header_lines,
        "comment_lines": lines.comment_count,
        "delimiter": DELIMITER_NAMES[delimiter],
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
        fast = read_map_wide_columnar(bytes(data))
        if fast is not None:
            return fast
    lines = content_lines(decode_text(data))
    header_text, header_line = lines.texts[0], lines.numbers[0]
    delimiter = detect_delimiter(header_text)
    refuse_wide_rows([header_text], [header_line], delimiter)
    decimal_comma = delimiter != "," and "," in header_text
    cells = split_cells(
        header_text.replace(",", ".") if decimal_comma else header_text, delimiter
    )
    if len(cells) < 4:
        raise AnalysisInputError(
            "a wide map header needs x, y and at least two shifts", line=header_line
        )
    try:
        shift = np.array([float(c) for c in cells[2:]])
    except ValueError:
        bad = next(i for i, c in enumerate(cells[2:], start=3) if not is_number(c))
        raise AnalysisInputError(
            f"header cell {bad} should be a Raman shift, got '{cells[bad - 1][:40]}'",
            line=header_line,
        ) from None
    if not np.all(np.isfinite(shift)):
        raise AnalysisInputError(
            "a shift in the header is not finite", line=header_line
        )
    order = ascending_order(shift, [header_line] * shift.size, "shift")
    texts, numbers = lines.texts[1:], lines.numbers[1:]
    if not texts:
        raise AnalysisInputError("the map has a header but no points", line=header_line)
    block, comma_in_rows = parse_block(
        texts, numbers, delimiter, n_columns=2 + shift.size
    )
    _refuse_repeated_positions(block[:, 0], block[:, 1], numbers)
    metadata = _map_metadata(
        lines, 1, delimiter, decimal_comma or comma_in_rows, "wide"
    )
    return RamanMap(
        block[:, 0], block[:, 1], shift[order], block[:, 2:][:, order], None, metadata
    )



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
    lines = content_lines(decode_text(data))
    start = first_numeric(lines)
    delimiter = detect_delimiter(lines.texts[start])
    texts, numbers = lines.texts[start:], np.asarray(lines.numbers[start:])
    block, decimal_comma = parse_block(texts, list(numbers), delimiter, n_columns=4)
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



def read_map(data: str | bytes) -> RamanMap:
    """Read a map in the wide or the long layout, telling them apart by the first row.

    A first row whose cells after the second are all numbers (x, y, then shifts) is a
    wide header; a first row of four cells that is a text header or is itself numeric
    starts a long layout.  Anything else is refused.
    """
    text = decode_text(data)
    lines = content_lines(text)
    first, number = lines.texts[0], lines.numbers[0]
    delimiter = detect_delimiter(first)
    decimal_comma = delimiter != "," and "," in first
    cells = split_cells(first.replace(",", ".") if decimal_comma else first, delimiter)
    all_numeric = all(is_number(c) for c in cells)
    if (
        len(cells) >= 4
        and not is_number(cells[0])
        and all(is_number(c) for c in cells[2:])
    ):
        return read_map_wide(text)
    if len(cells) == 4 and (all_numeric or not any(is_number(c) for c in cells)):
        return read_map_long(text)
    raise AnalysisInputError(
        "cannot tell the map layout: expected a header 'x, y, shift…' (wide) or four "
        "columns x, y, shift, intensity (long)",
        line=number,
    )

