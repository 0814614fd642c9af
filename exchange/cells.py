"""Turn one spreadsheet cell into a typed value (number in the column's unit, date, choice).

Hand-written because no library covers the three things a lab sheet needs together: a unit
written in the header *or* beside the number in a cell ("0.6 µm" in a nm column), the
ASCII spellings sheets use ("uL", "cm2"), and a refusal that names the reason.  The units
are the dozen a SERS lab's sheets carry; an unknown one is refused, never guessed.
"""

from __future__ import annotations

import math
import re
from datetime import date, datetime

# symbol -> (dimension, factor to the dimension's base unit)
UNITS: dict[str, tuple[str, float]] = {
    "nm": ("length", 1e-9), "µm": ("length", 1e-6), "um": ("length", 1e-6),
    "mm": ("length", 1e-3), "cm": ("length", 1e-2),
    "ml": ("volume", 1e-3), "µl": ("volume", 1e-6), "ul": ("volume", 1e-6), "l": ("volume", 1.0),
    "cm2": ("area", 1e-4), "cm²": ("area", 1e-4), "mm2": ("area", 1e-6), "mm²": ("area", 1e-6),
    "mm_conc": ("concentration", 1e-3), "µm_conc": ("concentration", 1e-6),
    "m_conc": ("concentration", 1.0),
    "h": ("time", 3600.0), "min": ("time", 60.0), "s": ("time", 1.0),
    "v": ("potential", 1.0), "mv": ("potential", 1e-3),
    "ma": ("current", 1e-3), "a": ("current", 1.0), "µa": ("current", 1e-6),
    "ua": ("current", 1e-6),
    "%": ("percent", 1.0), "c": ("charge", 1.0), "mc": ("charge", 1e-3),
}
# Concentration symbols clash with lengths (mM vs mm, µM vs µm) only in lower case.
_CONCENTRATION = {"mM": "mm_conc", "µM": "µm_conc", "uM": "µm_conc", "M": "m_conc",
                  "mol/L": "m_conc", "mmol/L": "mm_conc"}

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
_HEADER_UNIT = re.compile(r"^(.*?)\s*[\(\[]\s*([^\)\]]+?)\s*[\)\]]\s*$")


class CellError(ValueError):
    """A cell that cannot be read; ``code`` is stable (``unit_unknown``, ``not_a_number``…)."""

    def __init__(self, message: str, code: str):
        super().__init__(message)
        self.message, self.code = message, code


def unit_key(symbol: str) -> str | None:
    symbol = symbol.strip().replace("μ", "µ")
    if symbol in _CONCENTRATION:
        return _CONCENTRATION[symbol]
    key = symbol.lower().replace(" ", "").replace("^2", "2")
    return key if key in UNITS else None


def split_header(header: str) -> tuple[str, str | None]:
    """'Nominal diameter (nm)' -> ('Nominal diameter', 'nm')."""
    match = _HEADER_UNIT.match(header.strip())
    if match:
        return match.group(1), match.group(2)
    return header.strip(), None


def conversion(from_symbol: str, to_symbol: str) -> float:
    """Factor taking a value in ``from_symbol`` to ``to_symbol``; CellError if impossible."""
    source, target = unit_key(from_symbol), unit_key(to_symbol)
    if source is None:
        raise CellError(f"unit '{from_symbol}' is unknown here (expected {to_symbol})",
                        "unit_unknown")
    if target is None or UNITS[source][0] != UNITS[target][0]:
        raise CellError(f"unit '{from_symbol}' is not a unit of the same quantity as "
                        f"{to_symbol}", "unit_mismatch")
    return UNITS[source][1] / UNITS[target][1]


def read_number(value, *, unit: str | None, header_factor: float = 1.0,
                integer: bool = False) -> float | int:
    """A finite number in ``unit``; a cell may carry its own unit ('0.6 µm')."""
    if isinstance(value, bool):
        raise CellError(f"'{value}' is not a number", "not_a_number")
    if isinstance(value, (int, float)):
        number = float(value) * header_factor
    else:
        match = _NUMBER.match(str(value))
        if not match:
            raise CellError(f"'{value}' is not a number", "not_a_number")
        number = float(match.group(1))
        cell_unit = match.group(2)
        if cell_unit:
            if unit is None:
                raise CellError(f"'{value}': this column takes a plain number", "unit_unknown")
            number *= conversion(cell_unit, unit)
        else:
            number *= header_factor
    if not math.isfinite(number):
        raise CellError(f"'{value}' is not a finite number", "not_finite")
    if integer:
        if abs(number - round(number)) > 1e-9:
            raise CellError(f"'{value}' is not a whole number", "not_a_whole_number")
        return int(round(number))
    return number


def read_date(value) -> date:
    """A date cell, or text in ISO 8601 (YYYY-MM-DD); any other text is refused."""
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    text = str(value).strip()
    try:
        return date.fromisoformat(text[:10]) if len(text) >= 10 else date.fromisoformat(text)
    except ValueError:
        raise CellError(f"'{text}' is a date written as text in an unclear form; write it as "
                        "YYYY-MM-DD (ISO 8601) or format the cell as a date",
                        "date_as_text") from None


def read_choice(value, choices) -> str:
    """A choice given by its stored value or its label, in any case."""
    text = str(value).strip().lower()
    for stored, label in choices:
        if text in (str(stored).lower(), str(label).lower()):
            return stored
    allowed = ", ".join(str(stored) for stored, _label in choices)
    raise CellError(f"'{value}' is not one of {allowed}", "unknown_choice")


def read_text(value) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, datetime):
        return value.date().isoformat()
    return str(value).strip()
