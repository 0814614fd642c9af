"""A JCAMP-DX 4.24 writer for the tests: builds files that ``qc.analysis.jcamp`` must read.

The product reads JCAMP-DX and never writes it, so the writer lives with the tests.  Its
pseudo-digit tables are spelled out here from the standard (McDonald & Wilks 1988, Table
VII) rather than taken from the reader, so a wrong table in one cannot hide in the other.
"""

from __future__ import annotations

import numpy as np

from qc.analysis.errors import AnalysisInputError
from qc.analysis.spectrum import Spectrum

_MAX_LINE_CHARS = 80  # line length limit of the standard
_SQZ = {c: v for v, c in enumerate("@ABCDEFGHI")} | {
    c: -v for v, c in enumerate("abcdefghi", 1)
}
_DIF = {c: v for v, c in enumerate("%JKLMNOPQR")} | {
    c: -v for v, c in enumerate("jklmnopqr", 1)
}
_DUP = {c: v for v, c in enumerate("STUVWXYZs", 1)}

_COMPRESSIONS = ("AFFN", "PAC", "SQZ", "DIF", "DIFDUP")
_SQZ_CHAR = {v: c for c, v in _SQZ.items()}
_DIF_CHAR = {v: c for c, v in _DIF.items()}
_DUP_CHAR = {v: c for c, v in _DUP.items()}


def _pseudo(number: int, table: dict[int, str]) -> str:
    digits = str(abs(number))
    lead = int(digits[0]) * (-1 if number < 0 else 1)
    return table[lead] + digits[1:]


def _dup_count(count: int) -> str:
    digits = str(count)
    return _DUP_CHAR[int(digits[0])] + digits[1:]


def _x_text(value: float) -> str:
    return repr(
        float(value)
    ).upper()  # shortest exact form; E exponent as the standard has


def _value_tokens(y_values: np.ndarray, compression: str) -> list[str]:
    if compression == "AFFN":
        return [" " + _x_text(v) for v in y_values]
    if compression == "PAC":
        return [f"{int(v):+d}" for v in y_values]
    return [_pseudo(int(v), _SQZ_CHAR) for v in y_values]


def _plain_lines(x, y_scaled, compression: str) -> list[str]:
    """AFFN, PAC or SQZ lines: each line stands alone, no check value."""
    tokens = _value_tokens(y_scaled, compression)
    lines: list[str] = []
    start = 0
    while start < len(tokens):
        text = _x_text(x[start]) + tokens[start]
        stop = start + 1
        while stop < len(tokens) and len(text) + len(tokens[stop]) <= _MAX_LINE_CHARS:
            text += tokens[stop]
            stop += 1
        lines.append(text)
        start = stop
    return lines


def _difference_token(step: int, count: int) -> str:
    return _pseudo(step, _DIF_CHAR) + (_dup_count(count) if count > 1 else "")


def _difference_lines(x, y_int: np.ndarray, use_dup: bool) -> list[str]:
    """DIF or DIFDUP lines; each line repeats the previous line's last y as its first."""
    lines: list[str] = []
    n = y_int.size
    steps = np.diff(y_int).tolist()
    start = 0
    while True:
        done = _x_text(x[start]) + _pseudo(int(y_int[start]), _SQZ_CHAR)
        last: tuple[int, int] | None = None  # (difference, count) not yet rendered
        stop = start
        while stop + 1 < n:
            step = steps[stop]
            if use_dup and last is not None and last[0] == step:
                candidate_done, candidate_last = done, (step, last[1] + 1)
            else:
                candidate_done = done + (_difference_token(*last) if last else "")
                candidate_last = (step, 1)
            width = len(candidate_done) + len(_difference_token(*candidate_last))
            if width > _MAX_LINE_CHARS and last is not None:
                break
            done, last = candidate_done, candidate_last
            stop += 1
        lines.append(done + (_difference_token(*last) if last else ""))
        if stop + 1 >= n:
            break
        start = stop
    # A closing line holding only the last x and the y check value, as the standard asks.
    lines.append(_x_text(x[n - 1]) + _pseudo(int(y_int[n - 1]), _SQZ_CHAR))
    return lines


def _single_line(value: str, field: str) -> str:
    text = str(value)
    if "\n" in text or "\r" in text or "$$" in text or "##" in text:
        raise AnalysisInputError("must be one line without '$$' or '##'", field=field)
    return text.strip()


def _is_equally_spaced(x: np.ndarray) -> bool:
    steps = np.diff(x)
    return bool(
        np.allclose(steps, steps.mean(), rtol=1e-9, atol=1e-12 * np.abs(x).max())
    )


def _auto_y_factor(y: np.ndarray) -> float:
    if np.all(y == np.round(y)) and np.max(np.abs(y)) < 2**53:
        return 1.0
    largest = float(np.max(np.abs(y)))
    # Nine significant digits in the largest value, so integers stay below 10^10.
    return 10.0 ** (np.floor(np.log10(largest)) - 8) if largest > 0 else 1.0


_UNIT_LABELS = {"1/cm": "1/CM", "nm": "NANOMETERS", "um": "MICROMETERS"}


def write_jcamp(
    spectrum: Spectrum,
    *,
    title: str,
    origin: str,
    owner: str,
    data_type: str = "RAMAN SPECTRUM",
    compression: str = "DIFDUP",
    y_factor: float | None = None,
) -> str:
    """Write a spectrum as a JCAMP-DX 4.24 file that :func:`read_jcamp` reads back.

    Parameters
    ----------
    spectrum : Spectrum
        The spectrum; ``x`` in its ``x_unit`` (cm⁻¹ → XUNITS=1/CM, nm → NANOMETERS).
    title, origin, owner : str
        ##TITLE=, ##ORIGIN= and ##OWNER= (required by the standard), one line each.
    data_type : str
        ##DATA TYPE=, "RAMAN SPECTRUM" by default.
    compression : {"DIFDUP", "DIF", "SQZ", "PAC", "AFFN"}
        Form of the y values in ##XYDATA=(X++(Y..Y)).
    y_factor : float, optional
        ##YFACTOR=: stored integers are round(y / y_factor).  By default 1 for
        integer-valued y, else a power of ten keeping nine significant digits.  AFFN
        with no ``y_factor`` writes the exact decimal y with YFACTOR=1.

    Returns
    -------
    str
        The file text, lines of at most 80 characters, ending with ``##END=``.

    Notes
    -----
    An equally spaced axis is written as ##XYDATA=(X++(Y..Y)) with FIRSTX/LASTX in
    their shortest exact decimal form, so the reader rebuilds the same axis for an axis
    made with ``numpy.linspace``.  An unevenly spaced axis cannot use (X++(Y..Y)); it is
    written as ##XYPOINTS=(XY..XY) pairs in exact AFFN and ``compression`` is ignored.
    The compressed forms store integers: y values that are not whole multiples of
    ``y_factor`` are rounded (error at most y_factor/2).  The laser wavelength, when in
    ``metadata["laser_nm"]``, goes in the private record ##$LASER_NM=.

    References
    ----------
    .. [1] McDonald, R. S.; Wilks, P. A., Jr. JCAMP-DX: A Standard Form for Exchange of
       Infrared Spectra in Computer Readable Form. *Appl. Spectrosc.* 1988, 42, 151–162.
    """
    form = str(compression).upper()
    if form not in _COMPRESSIONS:
        raise AnalysisInputError(
            f"compression must be one of {', '.join(_COMPRESSIONS)}, got '{compression}'",
            field="compression",
        )
    x, y = spectrum.x, spectrum.y
    exact_affn = form == "AFFN" and y_factor is None
    factor = (
        1.0
        if exact_affn
        else (_auto_y_factor(y) if y_factor is None else float(y_factor))
    )
    if not np.isfinite(factor) or factor == 0:
        raise AnalysisInputError(
            f"must be finite and non-zero, got {y_factor}", field="y_factor"
        )
    y_scaled = y if exact_affn else np.round(y / factor)
    if not np.all(np.abs(y_scaled) < 2**53):
        raise AnalysisInputError(
            "y / y_factor is too large to store as an integer", field="y_factor"
        )

    header = [
        f"##TITLE={_single_line(title, 'title')}",
        "##JCAMP-DX=4.24",
        f"##DATA TYPE={_single_line(data_type, 'data_type')}",
        f"##ORIGIN={_single_line(origin, 'origin')}",
        f"##OWNER={_single_line(owner, 'owner')}",
    ]
    if "laser_nm" in spectrum.metadata:
        header.append(f"##$LASER_NM={_x_text(spectrum.metadata['laser_nm'])}")
    header += [
        f"##XUNITS={_UNIT_LABELS.get(spectrum.x_unit, spectrum.x_unit.upper())}",
        f"##YUNITS={spectrum.y_unit.upper()}",
        "##XFACTOR=1.0",
        f"##YFACTOR={_x_text(factor)}",
        f"##FIRSTX={_x_text(x[0])}",
        f"##LASTX={_x_text(x[-1])}",
        f"##NPOINTS={x.size}",
        f"##FIRSTY={_x_text(y_scaled[0] * factor)}",
    ]
    if not _is_equally_spaced(x):
        body = ["##XYPOINTS=(XY..XY)"] + [
            f"{_x_text(a)}, {_x_text(b)}" for a, b in zip(x, y_scaled, strict=True)
        ]
    else:
        header.insert(-2, f"##DELTAX={_x_text((x[-1] - x[0]) / (x.size - 1))}")
        if form in ("DIF", "DIFDUP"):
            lines = _difference_lines(
                x, y_scaled.astype(np.int64), use_dup=form == "DIFDUP"
            )
        else:
            lines = _plain_lines(x, y_scaled, form)
        body = ["##XYDATA=(X++(Y..Y))", *lines]
    return "\n".join([*header, *body, "##END="]) + "\n"
