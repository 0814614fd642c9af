"""JCAMP-DX 4.24 single spectra: reading (AFFN and every ASDF form).

A JCAMP-DX file is a sequence of labelled data records (LDRs), ``##LABEL=value``, from
``##TITLE=`` to ``##END=``.  The spectrum is in one of three tabular records:

* ``##XYDATA=(X++(Y..Y))`` — equally spaced x; each line starts with an x value
  (divided by XFACTOR) followed by as many y values (divided by YFACTOR) as fit;
* ``##XYPOINTS=(XY..XY)`` — explicit x, y pairs;
* ``##PEAK TABLE=(XY..XY)`` — explicit x, y pairs of peaks.

The y values of XYDATA may be written in ASCII Free Format Numeric (AFFN) or in the
ASCII Squeezed Difference Form (ASDF), whose leading "pseudo-digit" carries the sign and
the form of each number (McDonald & Wilks 1988, section 5 and Table VII):

========  ==============================  ==================================
form      pseudo-digits for 0..9          meaning
========  ==============================  ==================================
PAC       ``+`` / ``-`` then digits         signed absolute value, no blank
SQZ       ``@ A-I`` (0..9), ``a-i`` (−1..−9)  absolute value, sign in the digit
DIF       ``% J-R`` (0..9), ``j-r`` (−1..−9)  difference from the previous y
DUP       ``S-Z`` (1..8), ``s`` (9)         repeat count of the previous token
========  ==============================  ==================================

When differences are used, the last y of each line is repeated as the first y of the
next line (the "y check value"); the reader verifies and then drops it.  The product reads
JCAMP-DX and never writes it; the tests' writer (``tests/jcamp_writer.py``) makes the round
trips the reader is checked with.

References
----------
.. [1] McDonald, R. S.; Wilks, P. A., Jr. JCAMP-DX: A Standard Form for Exchange of
   Infrared Spectra in Computer Readable Form. *Appl. Spectrosc.* 1988, 42 (1), 151–162.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .errors import AnalysisInputError
from .spectrum import Spectrum

# ---------------------------------------------------------------------------------------
# Reading: labelled data records
# ---------------------------------------------------------------------------------------

_DATA_LABELS = {"XYDATA", "XYPOINTS", "PEAKTABLE"}
_UNSUPPORTED_LABELS = {"NTUPLES": "n-tuple", "BLOCKS": "compound (multi-block)"}
_MAX_LINE_CHARS = 80  # line length limit of the standard


@dataclass(frozen=True)
class _Record:
    label: str  # normalised: upper case, no blanks, dashes, slashes or underscores
    raw_label: str
    value: str  # text after "=" on the label line
    line: int  # 1-based line of the label
    body: tuple[tuple[int, str], ...]  # (line, text) of the continuation lines


def _normalise_label(raw: str) -> str:
    # The standard compares labels ignoring case, blanks, dashes, slashes, underscores.
    return re.sub(r"[\s\-/_]", "", raw).upper()


def _strip_comment(text: str) -> str:
    at = text.find("$$")
    return text if at < 0 else text[:at]


def _split_records(text: str) -> list[_Record]:
    records: list[_Record] = []
    label_line = None
    body: list[tuple[int, str]] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = _strip_comment(raw).strip()
        if line.startswith("##"):
            if label_line is not None:
                records.append(_make_record(*label_line, body))
            head, equals, value = line[2:].partition("=")
            if not equals:
                raise AnalysisInputError(
                    "a labelled data record needs '=' after its label", line=number
                )
            label_line = (head, value.strip(), number)
            body = []
        elif line:
            if label_line is None:
                raise AnalysisInputError(
                    "a JCAMP-DX file must start with the ##TITLE= record", line=number
                )
            body.append((number, line))
    if label_line is not None:
        records.append(_make_record(*label_line, body))
    if not records:
        raise AnalysisInputError(
            "no JCAMP-DX labelled data records found (##LABEL=value)", line=1
        )
    return records


def _make_record(head: str, value: str, number: int, body: list) -> _Record:
    return _Record(_normalise_label(head), head.strip(), value, number, tuple(body))


def _single_block(records: list[_Record]) -> list[_Record]:
    """Check TITLE first and END present, and refuse compound and n-tuple files."""
    if records[0].label != "TITLE":
        raise AnalysisInputError(
            "the first record of a JCAMP-DX file must be ##TITLE=", line=records[0].line
        )
    block: list[_Record] = []
    for record in records:
        if record.label in _UNSUPPORTED_LABELS:
            kind = _UNSUPPORTED_LABELS[record.label]
            raise AnalysisInputError(
                f"{kind} JCAMP-DX files are not supported; export a single spectrum",
                line=record.line,
            )
        if record.label == "TITLE" and block:
            raise AnalysisInputError(
                "a second ##TITLE= starts another block; only single-spectrum files are read",
                line=record.line,
            )
        block.append(record)
        if record.label == "END":
            break
    else:
        raise AnalysisInputError("the file ends without ##END=", line=records[-1].line)
    if block[-1].body:
        raise AnalysisInputError(
            "unexpected text after ##END=", line=block[-1].body[0][0]
        )
    later = records[len(block) :]
    if later:
        raise AnalysisInputError(
            "records after ##END= (multiple blocks) are not supported",
            line=later[0].line,
        )
    return block


def _number(record: _Record) -> float:
    text = record.value.replace(" ", "")
    try:
        value = float(text)
    except ValueError:
        raise AnalysisInputError(
            f"##{record.raw_label}= needs a number, got '{record.value}'",
            line=record.line,
        ) from None
    if not np.isfinite(value):
        raise AnalysisInputError(
            f"##{record.raw_label}= must be finite", line=record.line
        )
    return value


# ---------------------------------------------------------------------------------------
# Reading: ASDF/AFFN tokens
# ---------------------------------------------------------------------------------------

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


def _tokens(text: str, line: int) -> list[tuple[str, float]]:
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


def _decode_y_tokens(tokens, line: int, max_points: int):
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


# ---------------------------------------------------------------------------------------
# Reading: the three tabular forms
# ---------------------------------------------------------------------------------------


def _read_xydata(record: _Record, header: dict[str, _Record]):
    variable_list = record.value.replace(" ", "").upper()
    if variable_list != "(X++(Y..Y))":
        raise AnalysisInputError(
            f"only ##XYDATA=(X++(Y..Y)) is supported, got '{record.value}'",
            line=record.line,
        )
    for label in ("FIRSTX", "LASTX", "NPOINTS"):
        if label not in header:
            raise AnalysisInputError(f"##XYDATA needs ##{label}=", line=record.line)
    first_x, last_x = _number(header["FIRSTX"]), _number(header["LASTX"])
    n_points = _npoints(header["NPOINTS"])
    x_factor = _factor(header, "XFACTOR")
    y_factor = _factor(header, "YFACTOR")
    if first_x == last_x:
        raise AnalysisInputError(
            "##FIRSTX= and ##LASTX= are equal", line=header["LASTX"].line
        )
    spacing = (last_x - first_x) / (n_points - 1)
    if "DELTAX" in header:
        delta_x = _number(header["DELTAX"])
        if not np.isclose(delta_x, spacing, rtol=1e-3, atol=0.0):
            raise AnalysisInputError(
                f"##DELTAX={delta_x} disagrees with (LASTX − FIRSTX)/(NPOINTS − 1) = {spacing:.6g}",
                line=header["DELTAX"].line,
            )
    if not record.body:
        raise AnalysisInputError("##XYDATA= has no data lines", line=record.line)

    y_scaled: list[float] = []
    previous_ended_in_difference = False
    for line, text in record.body:
        tokens = _tokens(text, line)
        if not tokens:
            continue
        kind, x_value = tokens[0]
        if kind != "abs":
            raise AnalysisInputError(
                "each XYDATA line must start with an x value", line=line
            )
        room = (
            n_points + 1 - len(y_scaled)
        )  # +1: this line may start with a check value
        values, ended_in_difference = _decode_y_tokens(tokens[1:], line, room)
        index_of_line_x = len(y_scaled)
        if previous_ended_in_difference:
            if not values:
                raise AnalysisInputError("the y check value is missing", line=line)
            if values[0] != y_scaled[-1]:
                raise AnalysisInputError(
                    f"y check value {values[0]:g} does not repeat the last y of the line "
                    f"before ({y_scaled[-1]:g})",
                    line=line,
                )
            values = values[1:]
            index_of_line_x -= 1
        _check_line_x(
            x_value * x_factor, first_x + index_of_line_x * spacing, spacing, line
        )
        y_scaled.extend(values)
        if len(y_scaled) > n_points:
            raise AnalysisInputError(
                f"more points than ##NPOINTS={n_points} by this line", line=line
            )
        previous_ended_in_difference = ended_in_difference
    if len(y_scaled) != n_points:
        raise AnalysisInputError(
            f"##NPOINTS={n_points} but the data hold {len(y_scaled)} points",
            line=header["NPOINTS"].line,
        )
    y = np.asarray(y_scaled, dtype=float) * y_factor
    _check_first_y(header, y[0], y_factor, y)
    x = np.linspace(first_x, last_x, n_points)
    return x, y


def _check_line_x(x_read: float, x_expected: float, spacing: float, line: int) -> None:
    # Writers round the x at the start of a line; anything within one point spacing of
    # the point it labels is accepted, more means the line is out of step with FIRSTX.
    if abs(x_read - x_expected) > abs(spacing) * 1.0 + 1e-9 * abs(x_expected):
        raise AnalysisInputError(
            f"line starts at x = {x_read:g} but FIRSTX, LASTX and NPOINTS put that point "
            f"at x = {x_expected:g}",
            line=line,
        )


def _check_first_y(header, first_y: float, y_factor: float, y: np.ndarray) -> None:
    if "FIRSTY" not in header:
        return
    stated = _number(header["FIRSTY"])
    # FIRSTY is often written with fewer digits than the data: allow one YFACTOR step or
    # 0.1 % of the largest |y|, whichever is larger.
    tolerance = max(abs(y_factor), 1e-3 * float(np.max(np.abs(y))))
    if abs(stated - first_y) > tolerance:
        raise AnalysisInputError(
            f"##FIRSTY={stated:g} but the first decoded y is {first_y:g}",
            line=header["FIRSTY"].line,
        )


def _read_xy_pairs(record: _Record, header: dict[str, _Record]):
    variable_list = record.value.replace(" ", "").upper()
    if variable_list != "(XY..XY)":
        raise AnalysisInputError(
            f"only the (XY..XY) variable list is supported here, got '{record.value}'",
            line=record.line,
        )
    numbers: list[float] = []
    lines: list[int] = []
    for line, text in record.body:
        for kind, value in _tokens(text, line):
            if kind != "abs":
                raise AnalysisInputError(
                    "x, y pairs must be plain numbers (no difference or duplicate forms)",
                    line=line,
                )
            numbers.append(value)
            lines.append(line)
    if len(numbers) % 2:
        raise AnalysisInputError("an x value has no y value", line=lines[-1])
    pairs = np.asarray(numbers, dtype=float).reshape(-1, 2)
    pair_lines = np.asarray(lines[1::2])
    if pairs.shape[0] < 2:
        raise AnalysisInputError(
            "a spectrum needs at least 2 points",
            line=pair_lines[0] if pairs.size else record.line,
        )
    if "NPOINTS" in header and _npoints(header["NPOINTS"]) != pairs.shape[0]:
        raise AnalysisInputError(
            f"##NPOINTS={header['NPOINTS'].value} but the data hold {pairs.shape[0]} pairs",
            line=header["NPOINTS"].line,
        )
    x = pairs[:, 0] * _factor(header, "XFACTOR")
    y = pairs[:, 1] * _factor(header, "YFACTOR")
    order = np.argsort(x, kind="stable")
    repeated = np.flatnonzero(np.diff(x[order]) == 0)
    if repeated.size:
        line = int(
            max(pair_lines[order[repeated[0]]], pair_lines[order[repeated[0] + 1]])
        )
        raise AnalysisInputError(
            f"x value {x[order[repeated[0]]]:g} occurs twice", line=line
        )
    return x[order], y[order]


def _npoints(record: _Record) -> int:
    value = _number(record)
    if value != int(value) or value < 2:
        raise AnalysisInputError(
            f"##NPOINTS= must be a whole number of at least 2, got '{record.value}'",
            line=record.line,
        )
    return int(value)


def _factor(header: dict[str, _Record], label: str) -> float:
    if label not in header:
        return 1.0
    value = _number(header[label])
    if value == 0:
        raise AnalysisInputError(
            f"##{label}= must not be zero", line=header[label].line
        )
    return value


_X_UNITS = {"1/CM": "1/cm", "NANOMETERS": "nm", "NM": "nm", "MICROMETERS": "um"}


def read_jcamp(text: str) -> Spectrum:
    """Read a single-spectrum JCAMP-DX 4.24 file (text already decoded).

    Parameters
    ----------
    text : str
        The whole file.

    Returns
    -------
    Spectrum
        ``x`` ascending (a descending file is reversed), scaled by XFACTOR; ``y`` scaled
        by YFACTOR; ``x_unit`` "1/cm" for XUNITS=1/CM, "nm" for NANOMETERS, else the
        stated unit in lower case; ``y_unit`` YUNITS in lower case.  ``metadata`` holds
        ``title``, ``data_type``, ``origin``, ``owner``, ``jcamp_dx`` (version),
        ``data_record`` ("XYDATA", "XYPOINTS" or "PEAKTABLE"), ``laser_nm`` when a
        ``##$LASER_NM=`` record is present, and ``labels``: every record as
        ``{raw label: value}``, private ``##$`` records included.

    Raises
    ------
    AnalysisInputError
        On any malformed input, with the 1-based line: missing ##TITLE=/##END=, no or
        several data records, compound or n-tuple files, bad numbers or characters, a
        wrong y check value, NPOINTS/FIRSTX/LASTX/DELTAX/FIRSTY inconsistent with the data.

    Notes
    -----
    Departures from the letter of the standard, for files met in practice: XFACTOR and
    YFACTOR default to 1 when absent; a lower-case ``e`` is accepted in exponents
    (``1.5e-03``) as well as the standard ``E``; the x at the start of each XYDATA line is
    checked against FIRSTX + i·(LASTX − FIRSTX)/(NPOINTS − 1) to within one point
    spacing, and the axis returned is computed from FIRSTX, LASTX and NPOINTS, not
    from the rounded line x values.

    References
    ----------
    .. [1] McDonald, R. S.; Wilks, P. A., Jr. JCAMP-DX: A Standard Form for Exchange of
       Infrared Spectra in Computer Readable Form. *Appl. Spectrosc.* 1988, 42, 151–162.
    """
    block = _single_block(_split_records(text))
    header: dict[str, _Record] = {}
    data: list[_Record] = []
    for record in block:
        if record.label in _DATA_LABELS:
            data.append(record)
        elif record.label not in header:
            header[record.label] = record
        elif not record.label.startswith("$"):  # private records may repeat; first kept
            raise AnalysisInputError(
                f"##{record.raw_label}= appears twice", line=record.line
            )
    if "JCAMPDX" not in header:
        raise AnalysisInputError(
            "the ##JCAMP-DX= version record is missing", line=block[0].line
        )
    if len(data) != 1:
        raise AnalysisInputError(
            "expected exactly one ##XYDATA=, ##XYPOINTS= or ##PEAK TABLE= record, "
            f"found {len(data)}",
            line=data[1].line if len(data) > 1 else block[-1].line,
        )
    record = data[0]
    if record.label == "XYDATA":
        x, y = _read_xydata(record, header)
    else:
        x, y = _read_xy_pairs(record, header)
    if x[0] > x[-1]:
        x, y = x[::-1], y[::-1]
    metadata = _metadata(block, header, record)
    x_units = header["XUNITS"].value.strip().upper() if "XUNITS" in header else ""
    y_units = header["YUNITS"].value.strip() if "YUNITS" in header else ""
    x_unit = _X_UNITS.get(x_units, x_units.lower())
    try:
        return Spectrum(x, y, x_unit, y_units.lower(), metadata)
    except AnalysisInputError as error:  # e.g. a non-finite value after scaling
        raise AnalysisInputError(error.message, line=record.line) from None


def _metadata(block, header, data_record) -> dict:
    def value(label: str) -> str:
        return header[label].value if label in header else ""

    metadata = {
        "title": value("TITLE"),
        "jcamp_dx": value("JCAMPDX"),
        "data_type": value("DATATYPE"),
        "origin": value("ORIGIN"),
        "owner": value("OWNER"),
        "data_record": data_record.label,
        "labels": {
            r.raw_label: "\n".join([r.value, *(t for _, t in r.body)]).strip()
            for r in block
            if r.label not in _DATA_LABELS and r.label != "END"
        },
    }
    if "$LASERNM" in header:
        metadata["laser_nm"] = _number(header["$LASERNM"])
    return metadata
