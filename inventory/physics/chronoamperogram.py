"""Reader for chronoamperogram text exports (time and current columns).

Potentiostats export a deposition record as delimited text: optional metadata lines, a line
of column names, then one row per sample.  :func:`parse_chronoamperogram` takes the file
contents as ``str`` and returns SI arrays (s, A), refusing anything it cannot read with the
1-based line number at fault.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .errors import AnalysisInputError

#: Fewest samples accepted; below this a charge integral is not a measurement.
MIN_POINTS = 5

#: Seconds per unit of time.
TIME_UNITS_S = {"s": 1.0, "sec": 1.0, "secs": 1.0, "seconds": 1.0, "ms": 1e-3, "min": 60.0}

#: Amperes per unit of current.  "u", "µ" (micro sign) and "μ" (Greek mu) all mean micro.
CURRENT_UNITS_A = {"A": 1.0, "mA": 1e-3, "uA": 1e-6, "\u00b5A": 1e-6, "\u03bcA": 1e-6, "nA": 1e-9}

_DELIMITERS = {"comma": ",", "tab": "\t", "semicolon": ";", "whitespace": None}
_NUMBER_START = re.compile(r"^\s*[+-]?(\d|\.\d)")
# A unit written after a column name: "time/s", "Time (s)", "I [mA]", or as a suffix after
# an underscore, "time_s", "t_s", "I_mA", "current_uA" (all common practice in exports).
_UNIT_IN_NAME = re.compile(
    r"(?:(?:/|\(|\[)\s*([^\s/()\[\]]+)\s*[)\]]?|_([^\s_/()\[\]]+))\s*$"
)
_DECIMAL_COMMA = re.compile(r"^[+-]?\d*,\d+(?:[eE][+-]?\d+)?$")


@dataclass(frozen=True, eq=False)
class Chronoamperogram:
    """A current-time record in SI units.

    Attributes
    ----------
    time_s : numpy.ndarray
        Sample times, s, strictly increasing (read-only).
    current_A : numpy.ndarray
        Current, A, with the sign exactly as exported (read-only).
    time_unit, current_unit : str
        Units the file (or the caller) gave, before conversion.
    header_lines : tuple of str
        Non-blank lines before the first data row, as written.
    delimiter : str
        ``"comma"``, ``"tab"``, ``"semicolon"`` or ``"whitespace"``.
    first_data_line : int
        1-based line number of the first data row.
    """

    time_s: np.ndarray
    current_A: np.ndarray
    time_unit: str
    current_unit: str
    header_lines: tuple[str, ...]
    delimiter: str
    first_data_line: int


def parse_chronoamperogram(
    text: str,
    *,
    time_unit: str | None = None,
    current_unit: str | None = None,
    delimiter: str | None = None,
    time_column: int | None = None,
    current_column: int | None = None,
) -> Chronoamperogram:
    """Read a chronoamperogram text export into time (s) and current (A) arrays.

    The first line whose time and current cells are both numbers starts the data; every
    non-blank line before it is header.  The last header line is read as column names:
    columns are found by name (a name starting with "time" or "t", and with "current",
    "i" or "j") and units from the name (``time/s``, ``Current (µA)``, ``I [mA]``, or an
    underscore suffix: ``time_s``, ``I_mA``, ``current_uA``).

    Parameters
    ----------
    text : str
        File contents.
    time_unit, current_unit : str, optional
        Override the header's units: time in s, sec, ms or min; current in A, mA, µA (or uA),
        nA.  Required when the header names no unit.
    delimiter : str, optional
        ``"comma"``, ``"tab"``, ``"semicolon"`` or ``"whitespace"``; detected from the first
        data row when omitted (tab, then semicolon, then comma, else whitespace).  With a
        tab, semicolon or whitespace delimiter a decimal comma (``0,125``) is accepted.
    time_column, current_column : int, optional
        0-based column indices; override the columns found by name (default 0 and 1).

    Returns
    -------
    Chronoamperogram
        SI arrays plus what was read from the header.

    Raises
    ------
    AnalysisInputError
        Empty file, no data rows, missing or non-numeric cells, NaN or infinite values,
        fewer than :data:`MIN_POINTS` rows, duplicate or decreasing time, unknown or
        missing unit — with the 1-based line number where one applies.

    Notes
    -----
    The current sign is kept as exported; which sign is cathodic is decided by the charge
    calculation (:func:`inventory.physics.electrodeposition.deposition_charge_C`).
    """
    lines = text.splitlines()
    if not any(line.strip() for line in lines):
        raise AnalysisInputError("the file is empty")
    if delimiter is not None and delimiter not in _DELIMITERS:
        raise AnalysisInputError(
            f"unknown delimiter {delimiter!r}; use one of {sorted(_DELIMITERS)}", field="delimiter"
        )

    start, delimiter_name = _find_data_start(lines, delimiter, time_column, current_column)
    header_lines = tuple(line for line in lines[:start] if line.strip())
    names, names_line = _column_names(lines, start, delimiter_name)
    time_index = _pick_column(time_column, names, ("time", "t"), default=0, field="time_column")
    current_index = _pick_column(
        current_column, names, ("current", "i", "j"), default=1, field="current_column"
    )
    if time_index == current_index:
        raise AnalysisInputError(
            "time and current cannot be the same column", field="current_column"
        )

    time_unit_used, time_scale = _unit(
        time_unit, names, time_index, TIME_UNITS_S, names_line, field="time_unit"
    )
    current_unit_used, current_scale = _unit(
        current_unit, names, current_index, CURRENT_UNITS_A, names_line, field="current_unit"
    )

    line_numbers, time_raw, current_raw = _read_rows(
        lines, start, delimiter_name, time_index, current_index
    )
    if time_raw.size < MIN_POINTS:
        raise AnalysisInputError(
            f"needs at least {MIN_POINTS} data rows, found {time_raw.size}",
            line=int(line_numbers[-1]),
        )
    _check_time_increases(time_raw, line_numbers)

    time_s = time_raw * time_scale
    current_A = current_raw * current_scale
    time_s.setflags(write=False)
    current_A.setflags(write=False)
    return Chronoamperogram(
        time_s=time_s,
        current_A=current_A,
        time_unit=time_unit_used,
        current_unit=current_unit_used,
        header_lines=header_lines,
        delimiter=delimiter_name,
        first_data_line=start + 1,
    )


def _split(line: str, delimiter_name: str) -> list[str]:
    cells = line.strip().split(_DELIMITERS[delimiter_name])
    return [cell.strip() for cell in cells]


def _detect_delimiter(line: str) -> str:
    for name in ("tab", "semicolon", "comma"):
        delimiter = _DELIMITERS[name]
        if delimiter is not None and delimiter in line:
            return name
    return "whitespace"


def _to_number(cell: str, delimiter_name: str) -> float:
    """Parse one cell; raise ValueError when it is not a number."""
    if delimiter_name != "comma" and _DECIMAL_COMMA.match(cell):
        cell = cell.replace(",", ".")
    return float(cell)


def _find_data_start(lines, delimiter, time_column, current_column) -> tuple[int, str]:
    """Index of the first row whose time and current cells parse, and its delimiter."""
    for index, line in enumerate(lines):
        if not _NUMBER_START.match(line):
            continue
        name = delimiter or _detect_delimiter(line.strip())
        cells = _split(line, name)
        wanted = (time_column or 0, 1 if current_column is None else current_column)
        if max(wanted) >= len(cells):
            continue
        try:
            for column in wanted:
                _to_number(cells[column], name)
        except ValueError:
            continue
        return index, name
    raise AnalysisInputError("no data rows: no line holds a number in both columns")


def _column_names(lines, start, delimiter_name) -> tuple[list[str] | None, int | None]:
    """Column names from the last non-blank header line (a leading "#" dropped), and its line."""
    for index in range(start - 1, -1, -1):
        stripped = lines[index].strip().lstrip("#").strip()
        if not stripped:
            continue
        if delimiter_name == "whitespace":
            return _split_whitespace_names(stripped), index + 1
        return _split(stripped, delimiter_name), index + 1
    return None, None


def _split_whitespace_names(line: str) -> list[str]:
    """Split a space-separated header, keeping "Time (s)" or "I [mA]" as one name."""
    names: list[str] = []
    for token in line.split():
        if names and token[0] in "([/":
            names[-1] = f"{names[-1]} {token}"
        else:
            names.append(token)
    return names


def _pick_column(explicit, names, prefixes, *, default, field) -> int:
    if explicit is not None:
        if explicit < 0:
            raise AnalysisInputError(f"column index must be >= 0, got {explicit}", field=field)
        return explicit
    if names:
        for index, name in enumerate(names):
            word = re.split(r"[^a-z]", name.lower(), maxsplit=1)[0]
            if word in prefixes:
                return index
    return default


def _unit(explicit, names, column, table, names_line, *, field) -> tuple[str, float]:
    """The unit to use for one column: the caller's, else the one in its header name."""
    if explicit is not None:
        if explicit not in table:
            raise AnalysisInputError(
                f"unknown unit {explicit!r}; known: {', '.join(table)}", field=field
            )
        return explicit, table[explicit]
    name = names[column] if names and column < len(names) else None
    match = _UNIT_IN_NAME.search(name) if name else None
    if match is None:
        raise AnalysisInputError(
            "the header gives no unit for this column; pass it explicitly",
            line=names_line, field=field,
        )
    unit = match.group(1) or match.group(2)
    if unit not in table:
        raise AnalysisInputError(
            f"unknown unit {unit!r} in column {name!r}; known: {', '.join(table)}",
            line=names_line, field=field,
        )
    return unit, table[unit]


def _read_rows(lines, start, delimiter_name, time_index, current_index):
    """Parse every non-blank line from ``start``; refuse the first bad cell with its line."""
    numbers, times, currents = [], [], []
    needed = max(time_index, current_index) + 1
    for index in range(start, len(lines)):
        if not lines[index].strip():
            continue
        line_number = index + 1
        cells = _split(lines[index], delimiter_name)
        if len(cells) < needed:
            raise AnalysisInputError(
                f"expected at least {needed} columns, found {len(cells)}", line=line_number
            )
        row = []
        for column, field in ((time_index, "time"), (current_index, "current")):
            try:
                value = _to_number(cells[column], delimiter_name)
            except ValueError:
                raise AnalysisInputError(
                    f"{field} cell {cells[column]!r} is not a number", line=line_number, field=field
                ) from None
            if not np.isfinite(value):
                raise AnalysisInputError(
                    f"{field} cell {cells[column]!r} is not a finite number",
                    line=line_number, field=field,
                )
            row.append(value)
        numbers.append(line_number)
        times.append(row[0])
        currents.append(row[1])
    return np.array(numbers), np.array(times, dtype=float), np.array(currents, dtype=float)


def _check_time_increases(time_raw: np.ndarray, line_numbers: np.ndarray) -> None:
    steps = np.diff(time_raw)
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        row = bad[0] + 1
        what = "repeats the previous time" if steps[bad[0]] == 0 else "goes back in time"
        raise AnalysisInputError(
            f"time {time_raw[row]} {what} ({time_raw[row - 1]})",
            line=int(line_numbers[row]), field="time",
        )
