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
next line (the "y check value"); the reader verifies and then drops it.  The records are
split in :mod:`~qc.analysis.jcamp_records`, the data lines decoded in
:mod:`~qc.analysis.jcamp_asdf`; this module reads the three tabular forms.  The product reads
JCAMP-DX and never writes it; the tests' writer (``tests/jcamp_writer.py``) makes the round
trips the reader is checked with.

References
----------
.. [1] McDonald, R. S.; Wilks, P. A., Jr. JCAMP-DX: A Standard Form for Exchange of
   Infrared Spectra in Computer Readable Form. *Appl. Spectrosc.* 1988, 42 (1), 151–162.
"""

from __future__ import annotations

import numpy as np

from .errors import AnalysisInputError
from .jcamp_asdf import data_tokens, decode_y_tokens
from .jcamp_records import (
    DATA_LABELS,
    Record,
    record_factor,
    record_npoints,
    record_number,
    single_block,
    split_records,
)
from .spectrum import Spectrum


def _read_xydata(record: Record, header: dict[str, Record]):
    variable_list = record.value.replace(" ", "").upper()
    if variable_list != "(X++(Y..Y))":
        raise AnalysisInputError(
            f"only ##XYDATA=(X++(Y..Y)) is supported, got '{record.value}'",
            line=record.line,
        )
    for label in ("FIRSTX", "LASTX", "NPOINTS"):
        if label not in header:
            raise AnalysisInputError(f"##XYDATA needs ##{label}=", line=record.line)
    first_x, last_x = record_number(header["FIRSTX"]), record_number(header["LASTX"])
    n_points = record_npoints(header["NPOINTS"])
    x_factor = record_factor(header, "XFACTOR")
    y_factor = record_factor(header, "YFACTOR")
    if first_x == last_x:
        raise AnalysisInputError(
            "##FIRSTX= and ##LASTX= are equal", line=header["LASTX"].line
        )
    spacing = (last_x - first_x) / (n_points - 1)
    if "DELTAX" in header:
        delta_x = record_number(header["DELTAX"])
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
        tokens = data_tokens(text, line)
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
        values, ended_in_difference = decode_y_tokens(tokens[1:], line, room)
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
    stated = record_number(header["FIRSTY"])
    # FIRSTY is often written with fewer digits than the data: allow one YFACTOR step or
    # 0.1 % of the largest |y|, whichever is larger.
    tolerance = max(abs(y_factor), 1e-3 * float(np.max(np.abs(y))))
    if abs(stated - first_y) > tolerance:
        raise AnalysisInputError(
            f"##FIRSTY={stated:g} but the first decoded y is {first_y:g}",
            line=header["FIRSTY"].line,
        )


def _read_xy_pairs(record: Record, header: dict[str, Record]):
    variable_list = record.value.replace(" ", "").upper()
    if variable_list != "(XY..XY)":
        raise AnalysisInputError(
            f"only the (XY..XY) variable list is supported here, got '{record.value}'",
            line=record.line,
        )
    numbers: list[float] = []
    lines: list[int] = []
    for line, text in record.body:
        for kind, value in data_tokens(text, line):
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
    if "NPOINTS" in header and record_npoints(header["NPOINTS"]) != pairs.shape[0]:
        raise AnalysisInputError(
            f"##NPOINTS={header['NPOINTS'].value} but the data hold {pairs.shape[0]} pairs",
            line=header["NPOINTS"].line,
        )
    x = pairs[:, 0] * record_factor(header, "XFACTOR")
    y = pairs[:, 1] * record_factor(header, "YFACTOR")
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
    block = single_block(split_records(text))
    header: dict[str, Record] = {}
    data: list[Record] = []
    for record in block:
        if record.label in DATA_LABELS:
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
            if r.label not in DATA_LABELS and r.label != "END"
        },
    }
    if "$LASERNM" in header:
        metadata["laser_nm"] = record_number(header["$LASERNM"])
    return metadata
