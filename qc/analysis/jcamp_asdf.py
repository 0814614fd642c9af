"""JCAMP-DX data lines: AFFN numbers and the ASDF compressed forms (SQZ, DIF, DUP).

Each y value's leading "pseudo-digit" carries its sign and form (McDonald & Wilks 1988,
section 5 and Table VII; the table is in :mod:`qc.analysis.jcamp`).

References
----------
.. [1] McDonald, R. S.; Wilks, P. A., Jr. JCAMP-DX: A Standard Form for Exchange of
   Infrared Spectra in Computer Readable Form. *Appl. Spectrosc.* 1988, 42 (1), 151–162.
"""

from __future__ import annotations

import re

import numpy as np

from .errors import AnalysisInputError

_SQZ = {c: v for v, c in enumerate("@ABCDEFGHI")} | {
    c: -v for v, c in enumerate("abcdefghi", 1)
}
_DIF = {c: v for v, c in enumerate("%JKLMNOPQR")} | {
    c: -v for v, c in enumerate("jklmnopqr", 1)
}
_DUP = {c: v for v, c in enumerate("STUVWXYZs", 1)}

_TOKEN = re.compile(
    r"(?P<affn>[+-]?(?:\d+\.?\d*|\.\d+)(?:[Ee][+-]\d{1,3})?)"
    # Outer groups close last, so match.lastgroup names the form.
    r"|(?P<sqz>(?P<sqz_lead>[@A-Ia-i])(?P<sqz_digits>\d*(?:\.\d*)?))"
    r"|(?P<dif>(?P<dif_lead>[%J-Rj-r])(?P<dif_digits>\d*(?:\.\d*)?))"
    r"|(?P<dup>(?P<dup_lead>[S-Zs])(?P<dup_digits>\d*))"
    r"|(?P<gap>[\s,;]+)"
    r"|(?P<bad>.)"
)


def _pseudo_value(lead: int, digits: str) -> float:
    # The pseudo-digit is the leading digit with its sign; the rest are plain digits.
    magnitude = (
        float(f"{abs(lead)}{digits}") if digits not in ("", ".") else float(abs(lead))
    )
    return -magnitude if lead < 0 else magnitude


def data_tokens(text: str, line: int) -> list[tuple[str, float]]:
    """Split one data line into ("abs" | "dif" | "dup", value) tokens, in order."""
    tokens: list[tuple[str, float]] = []
    for match in _TOKEN.finditer(text):
        kind = match.lastgroup
        if kind == "affn":
            tokens.append(("abs", float(match.group("affn"))))
        elif kind == "sqz":
            tokens.append(
                (
                    "abs",
                    _pseudo_value(
                        _SQZ[match.group("sqz_lead")], match.group("sqz_digits")
                    ),
                )
            )
        elif kind == "dif":
            tokens.append(
                (
                    "dif",
                    _pseudo_value(
                        _DIF[match.group("dif_lead")], match.group("dif_digits")
                    ),
                )
            )
        elif kind == "dup":
            count = int(f"{_DUP[match.group('dup_lead')]}{match.group('dup_digits')}")
            tokens.append(("dup", float(count)))
        elif kind == "bad":
            char = match.group("bad")
            what = "a missing value '?'" if char == "?" else f"the character {char!r}"
            raise AnalysisInputError(
                f"{what} is not allowed in JCAMP-DX data", line=line
            )
    return tokens


def decode_y_tokens(tokens, line: int, max_points: int):
    """Expand the y tokens of one line (after its x) to values.

    Returns the values and whether the line ended in a difference, which is what makes
    the first y of the next line a check value.
    """
    values: list[float] = []
    last_kind = None  # "abs" or "dif": the form of the latest value written
    step = 0.0  # what a duplicate count repeats: 0 for a value, the difference for DIF
    can_repeat = False
    for kind, value in tokens:
        if kind == "abs":
            values.append(value)
            last_kind, step, can_repeat = "abs", 0.0, True
        elif kind == "dif":
            if not values:
                raise AnalysisInputError(
                    "a line's first y must be an absolute value (the check value), "
                    "not a difference",
                    line=line,
                )
            values.append(values[-1] + value)
            last_kind, step, can_repeat = "dif", value, True
        else:  # DUP: the previous token occurs `value` times in all
            if not can_repeat:
                raise AnalysisInputError(
                    "a duplicate count must follow a value or a difference", line=line
                )
            if len(values) + value - 1 > max_points:
                raise AnalysisInputError(
                    f"duplicate count {int(value)} gives more points than ##NPOINTS=",
                    line=line,
                )
            values.extend(values[-1] + step * np.arange(1, int(value)))
            can_repeat = False
    return values, last_kind == "dif"
