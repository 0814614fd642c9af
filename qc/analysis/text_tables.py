"""Delimited text tables as instrument exports write them: layout, delimiter, numbers.

The shared ground of :mod:`qc.analysis.readers` (spectra) and :mod:`qc.analysis.map_readers`
(maps): which lines are comments, header and data, which delimiter and decimal mark a line
uses, and a whole block of lines parsed at once with :func:`numpy.loadtxt`, with a slow
line-by-line pass only to name the 1-based line and the cell at fault when that fails.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .errors import AnalysisInputError

COMMENT_PREFIXES = ("#", "%", "!", "//")
NUMERIC_START = re.compile(r"\s*[-+.\d]")
DECIMAL_COMMA_CELL = re.compile(r"[-+]?\d*,\d+(?:[eE][-+]?\d+)?")
DELIMITER_NAMES = {",": "comma", "\t": "tab", ";": "semicolon", None: "whitespace"}

# Sane sizes of an instrument export (common practice): a CCD row has a few thousand pixels,
# so even a stitched spectrum in a wide map row stays far below MAX_COLUMNS; a 16-bit
# detector reads at most 65 535 counts per pixel and readout, so a cell beyond
# MAX_ABS_VALUE (shifts, positions and summed counts alike) is not a measurement.
MAX_COLUMNS = 65_536
MAX_ABS_VALUE = 1e12


def refuse_wide_rows(texts: list[str], numbers: list[int], delimiter: str | None) -> None:
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
class TextLines:
    numbers: list[int]  # 1-based line number of each kept (non-blank, non-comment) line
    texts: list[str]
    comment_count: int
    total: int


def content_lines(text: str) -> TextLines:
    numbers, texts, comments = [], [], 0
    all_lines = text.splitlines()
    for number, line in enumerate(all_lines, start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith(COMMENT_PREFIXES):
            comments += 1
            continue
        numbers.append(number)
        texts.append(stripped)
    if not texts:
        raise AnalysisInputError(
            "the file is empty (no data lines)", line=max(len(all_lines), 1)
        )
    return TextLines(numbers, texts, comments, len(all_lines))


def detect_delimiter(line: str) -> str | None:
    """Delimiter of one line: tab, semicolon, comma, or ``None`` for blanks."""
    if "\t" in line:
        return "\t"
    if ";" in line:
        return ";"
    if "," in line:
        cells = line.split()
        with_comma = [c for c in cells if "," in c]
        if len(cells) >= 2 and all(
            DECIMAL_COMMA_CELL.fullmatch(c) for c in with_comma
        ):
            return None  # "1001,4 523,1": blanks separate, commas are decimal marks
        return ","
    return None


def split_cells(line: str, delimiter: str | None) -> list[str]:
    return (
        line.split()
        if delimiter is None
        else [c.strip() for c in line.split(delimiter)]
    )


def first_numeric(lines: TextLines) -> int:
    for index, text in enumerate(lines.texts):
        if NUMERIC_START.match(text):
            return index
    raise AnalysisInputError("no numeric data lines found", line=lines.numbers[-1])


# ---------------------------------------------------------------------------------------
# Block parsing: numpy on the whole block, a slow pass only to explain a failure
# ---------------------------------------------------------------------------------------


def parse_block(
    texts: list[str], numbers: list[int], delimiter: str | None, n_columns: int | None
) -> tuple[np.ndarray, bool]:
    """Parse data lines into a (rows, columns) float array; say if decimal commas were used."""
    refuse_wide_rows(texts, numbers, delimiter)
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
        cells = split_cells(text, delimiter)
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


def ascending_order(x: np.ndarray, numbers: list[int], what: str) -> np.ndarray:
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



def is_number(cell: str) -> bool:
    try:
        float(cell)
    except ValueError:
        return False
    return True

