"""Readers for spectra and Raman maps exported as delimited text, and a dispatcher.

All readers take the file *contents* (``str``, or ``bytes`` decoded as UTF-8 with a
latin-1 fallback); :func:`read_spectrum_or_map` also takes a :class:`pathlib.Path`, so a big
wide map is parsed from disk by columns without the raw file ever being held in memory.
Numbers are parsed a whole block at a time with :func:`numpy.loadtxt`; only when that
fails does a line-by-line pass run, to name the 1-based line and the cell at fault in the
:class:`~qc.analysis.errors.AnalysisInputError`.

Layouts understood (common practice for instrument text exports; no single standard):

* two columns, x then y, separated by comma, tab, semicolon or blanks, with a decimal
  point or, when the separator is not a comma, a decimal comma (``1001,4;523,1``);
* comment lines starting with ``#``, ``%``, ``!`` or ``//`` anywhere, and free-text header
  lines before the first numeric line;
* maps "wide": a header row ``x, y, shift₁, shift₂, …`` then one row per point;
* maps "long": rows ``x, y, shift, intensity`` (optionally after a header row), every
  point carrying the same set of shifts, in any row order.

:func:`read_spectrum_or_map` tells a map from a spectrum by its first data row.  The map
readers live in :mod:`qc.analysis.map_readers` (and the columnar fast path in
:mod:`qc.analysis.map_columnar`), the text-table parsing they share in
:mod:`qc.analysis.text_tables`; this module names them all, so callers import from here.
"""

from __future__ import annotations

import re
from pathlib import Path

from .errors import AnalysisInputError
from .jcamp import read_jcamp
from .map_columnar import read_map_wide_columnar
from .map_readers import read_map, read_map_long, read_map_wide
from .spectrum import RamanMap, Spectrum
from .text_tables import (
    DELIMITER_NAMES,
    MAX_ABS_VALUE,
    MAX_COLUMNS,
    ascending_order,
    content_lines,
    decode_text,
    detect_delimiter,
    first_numeric,
    parse_block,
)

__all__ = ["MAX_ABS_VALUE", "MAX_COLUMNS", "decode_text", "looks_like_map", "read_map",
           "read_map_long", "read_map_wide", "read_spectrum", "read_spectrum_or_map",
           "read_two_column"]

_JCAMP_SUFFIXES = (".jdx", ".dx", ".jcamp", ".jcm")


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
    lines = content_lines(decode_text(data))
    start = first_numeric(lines)
    delimiter = detect_delimiter(lines.texts[start])
    texts, numbers = lines.texts[start:], lines.numbers[start:]
    block, decimal_comma = parse_block(texts, numbers, delimiter, n_columns=2)
    if block.shape[0] < 2:
        raise AnalysisInputError(
            "a spectrum needs at least 2 points, found 1", line=numbers[0]
        )
    order = ascending_order(block[:, 0], numbers, "x value")
    metadata = {
        "header_lines": start,
        "header": lines.texts[:start],
        "comment_lines": lines.comment_count,
        "delimiter": DELIMITER_NAMES[delimiter],
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



def looks_like_map(text: str, filename: str | None = None) -> bool:
    """Whether text holds a map: x, y and at least two more columns on its first data row.

    JCAMP-DX (by its ``##`` labels or its file name) and two-column text are spectra.
    """
    first = next((line.strip() for line in text.splitlines()
                  if line.strip() and not line.lstrip().startswith("#")), "")
    if first.startswith("##") or str(filename or "").lower().endswith(_JCAMP_SUFFIXES):
        return False
    return len([c for c in re.split(r"[,;\t]|\s+", first) if c]) >= 4


def read_spectrum_or_map(data: str | bytes | Path,
                         filename: str | None = None) -> Spectrum | RamanMap:
    """Read a Raman file that may be one spectrum or a map (:func:`looks_like_map`).

    A ``Path`` is read from disk: by columns when it is the common wide map, else whole.
    """
    if isinstance(data, (bytes, bytearray, memoryview, Path)):
        fast = read_map_wide_columnar(data if isinstance(data, Path) else bytes(data))
        if fast is not None:
            return fast
        if isinstance(data, Path):
            data = data.read_bytes()  # anything unusual: the line-by-line readers
    text = decode_text(data)
    if looks_like_map(text, filename):
        return read_map(text)
    return read_spectrum(text, filename)
