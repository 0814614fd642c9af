"""A compiled parser for the rows of the common wide Raman map: decimal text into float32.

The first step of :func:`qc.analysis.map_columnar.read_map_wide_columnar`.  Hand-written
because no installed library turns decimal text into floats fast enough: Apache Arrow's
CSV reader, streamed on one thread, converts a 10,000 × 1,024 map (82 MB) at 53–61 MB per
CPU-second on the lab's worker (benchmarks/REPORT.md, 2026-12-03), four times the parse
budget of a quarter of the analysis; locating the line ends alone costs 0.05–0.07 s.

Each cell is read in one pass (sign, digits, decimal point, signed exponent) into an
integer mantissa and a power of ten.  With a mantissa below 2⁵³ and a power within ±22
both are exact doubles, so one IEEE multiplication or division gives the correctly rounded
double (Clinger, "How to read floating point numbers accurately", PLDI 1990, the "fast
path").  Rounding that double to float32 equals rounding the decimal straight to float32
unless the double lies exactly halfway between two float32 values; such a cell (and any
cell or row this parser does not know: quotes, nan/inf, more digits, a wrong number of
cells, a bare carriage return) makes the whole file :class:`Declined`, and Arrow's reader,
then the line-by-line reader, read it or name its fault as they always did.
"""

from __future__ import annotations

import contextlib
import io
import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numba import njit

# Read from disk a block at a time: the raw file is never held beside the map.
_BLOCK_BYTES = 4 << 20
_EXACT_POWERS = np.array([float(10**k) for k in range(23)])  # 10⁰ … 10²² are exact doubles
_POWERS_OF_FIVE = np.array([5**k for k in range(23)], dtype=np.int64)
_MAX_EXACT_MANTISSA = 1 << 53
_ROWS_MARGIN = 1.05  # rows first made for the file's length over its first row's, and 5 %
# A block at least this long is parsed as two runs of whole lines on two threads (the
# kernel releases the GIL); a shorter one on the calling thread (a thread's hand-over
# would cost more than it saves).
_SPLIT_BYTES = 256 << 10
# A float64 exactly halfway between two float32 values: bit 28 set, bits 0–27 clear.
_LOW_BITS, _HALFWAY = (1 << 29) - 1, 1 << 28
_SPACE, _NEWLINE, _RETURN, _POINT, _MINUS, _PLUS = 32, 10, 13, 46, 45, 43

# Why a file was declined (``Declined.code``).
OK, BAD_CELL, INEXACT, CELL_COUNT, HALFWAY, FULL = range(6)  # FULL: grow the output
REASONS = {BAD_CELL: "a cell that is not a plain decimal number",
           INEXACT: "more digits or a larger exponent than the exact fast path",
           CELL_COUNT: "a row with a different number of cells",
           HALFWAY: "a value halfway between two float32 values"}


@dataclass(frozen=True)
class WideRows:
    """The parsed rows: positions (rows, 2) float64 and intensity (rows, shifts) float32."""

    positions: np.ndarray
    intensity: np.ndarray


@dataclass(frozen=True)
class Declined:
    """Not read here: ``code`` (see ``REASONS``) at byte ``offset`` of the file."""

    code: int
    offset: int


@njit(nogil=True, cache=True)
def _exponent(buf, i, end):  # pragma: no cover - compiled
    """A signed exponent after ``e``/``E``; ``ok`` False when it has no digit."""
    negative = i < end and buf[i] == _MINUS
    if i < end and (buf[i] == _MINUS or buf[i] == _PLUS):
        i += 1
    start, value = i, 0
    while i < end and 48 <= buf[i] <= 57:
        value = min(value * 10 + (np.int64(buf[i]) - 48), 100_000)
        i += 1
    return (-value if negative else value), i, i > start


@njit(nogil=True, cache=True)
def _significant(buf, start, end):  # pragma: no cover - compiled
    """Significant digits among the digits and point of ``buf[start:end]``."""
    count = 0
    for i in range(start, end):
        if buf[i] != _POINT and (count or buf[i] != 48):
            count += 1
    return count


@njit(nogil=True, cache=True)
def _is_exact(value, mantissa, power):  # pragma: no cover - compiled
    """Whether the double ``value`` is the decimal mantissa × 10^power itself.

    m / 10ᵏ = (m / 5ᵏ) / 2ᵏ is a double exactly when 5ᵏ divides m (m < 2⁵³, no underflow
    this close to 1); m × 10ᵏ when the product stays below 2⁵³.
    """
    if power >= 0:
        return abs(value) < _MAX_EXACT_MANTISSA
    return mantissa % _POWERS_OF_FIVE[-power] == 0


@njit(nogil=True, cache=True)
def _parse_rows(buf, i, end, delimiter, positions, intensity, row,  # pragma: no cover
                ascending):
    """Rows of ``buf[i:end]`` into ``positions`` and ``intensity`` from ``row`` on.

    Returns (code, rows filled so far, byte index): ``OK`` and the end, ``FULL`` and the
    line that found no room, or why and where
    not.  One loop with the cell and its two digit runs written out in it: as functions
    returning tuples (even inlined by numba) it ran at a half to a third of the speed.
    """
    last = intensity.shape[1] + 1
    scratch = np.empty(1, np.float64)
    bits = scratch.view(np.uint64)
    while i < end:
        if buf[i] == _NEWLINE:  # blank lines are skipped, as Arrow does
            i += 1
            continue
        if buf[i] == _RETURN and i + 1 < end and buf[i + 1] == _NEWLINE:
            i += 2
            continue
        if row >= intensity.shape[0]:
            return FULL, row, i
        out = intensity[row] if ascending else intensity[row, ::-1]
        for column in range(last + 1):
            start = i
            while i < end and buf[i] == _SPACE:
                i += 1
            negative = i < end and buf[i] == _MINUS
            if i < end and (negative or buf[i] == _PLUS):
                i += 1
            first, mantissa, scale = i, 0, 0
            while i < end:
                digit = np.int64(buf[i]) - 48
                if digit < 0 or digit > 9:
                    break
                mantissa = mantissa * 10 + digit
                i += 1
            digits = i - first
            if i < end and buf[i] == _POINT:
                i += 1
                after_point = i
                while i < end:
                    digit = np.int64(buf[i]) - 48
                    if digit < 0 or digit > 9:
                        break
                    mantissa = mantissa * 10 + digit
                    i += 1
                scale, digits = after_point - i, digits + i - after_point
            if digits == 0:
                return BAD_CELL, row, start
            if digits > 19 and _significant(buf, first, i) > 19:  # int64 would overflow
                return INEXACT, row, start
            power = scale
            if i < end and (buf[i] == 101 or buf[i] == 69):  # e, E
                exponent, i, has_digits = _exponent(buf, i + 1, end)
                if not has_digits:
                    return BAD_CELL, row, start
                power += exponent
            while i < end and buf[i] == _SPACE:
                i += 1
            if mantissa == 0:
                value = 0.0
            elif mantissa > _MAX_EXACT_MANTISSA or power < -22 or power > 22:
                return INEXACT, row, start
            elif power >= 0:
                value = np.float64(mantissa) * _EXACT_POWERS[power]
            else:
                value = np.float64(mantissa) / _EXACT_POWERS[-power]
            if negative:
                value = -value
            if column < 2:
                positions[row, column] = value
            else:
                single = np.float32(value)
                if np.float64(single) != value:
                    scratch[0] = value
                    if bits[0] & _LOW_BITS == _HALFWAY and not _is_exact(value, mantissa, power):
                        return HALFWAY, row, start
                out[column - 2] = single
            if column < last:
                if i < end and buf[i] == delimiter:
                    i += 1
                else:
                    return (CELL_COUNT if i >= end or buf[i] == _NEWLINE or buf[i] == _RETURN
                            else BAD_CELL), row, i
        if i < end:
            if buf[i] == _NEWLINE:
                i += 1
            elif buf[i] == _RETURN and i + 1 < end and buf[i + 1] == _NEWLINE:
                i += 2
            else:
                return CELL_COUNT if buf[i] == delimiter else BAD_CELL, row, i
        row += 1
    return OK, row, i


@njit(nogil=True, cache=True)
def _newlines(buf, start, stop):  # pragma: no cover - compiled
    """Newlines in ``buf[start:stop]``: at least the rows :func:`_parse_rows` reads from its
    whole lines (it skips blank ones).  Counted as integers so the loop vectorises."""
    view = buf[start:stop]
    count = np.int64(0)
    for i in range(view.size):
        count += np.int64(view[i] == _NEWLINE)
    return count


@njit(nogil=True, cache=True)
def _next_line(buf, i, stop):  # pragma: no cover - compiled
    """Index just past the first newline of ``buf[i:stop]``, ``stop`` when there is none."""
    while i < stop:
        if buf[i] == _NEWLINE:
            return i + 1
        i += 1
    return stop


@njit(nogil=True, cache=True)
def _after_last_newline(buf, end):  # pragma: no cover - compiled
    """Index just past the last newline of ``buf[:end]``, 0 when there is none."""
    for i in range(end - 1, -1, -1):
        if buf[i] == _NEWLINE:
            return i + 1
    return 0


def _first_line_bytes(buf, end: int) -> int:
    """Bytes of the first line of ``buf[:end]`` with its newline (all of it when none)."""
    found = buf[:min(end, 1 << 20)].tobytes().find(b"\n")
    return end if found < 0 else found + 1


class _Rows:
    """The growing output: sized from the first row, grown half again when full."""

    def __init__(self, n_shift: int, first_line: int, remaining: int):
        # A row of n cells takes at least 2n − 1 bytes: never more rows than that allows.
        at_most = remaining // (2 * (n_shift + 2) - 1) + 1
        rows = min(int(remaining / max(first_line, 1) * _ROWS_MARGIN) + 16, at_most)
        self.intensity = np.empty((rows, n_shift), dtype=np.float32)
        self.positions = np.empty((rows, 2))

    def grow(self) -> None:
        rows = self.intensity.shape[0] * 3 // 2 + 16  # realloc: pages remapped, not copied
        self.intensity.resize((rows, self.intensity.shape[1]), refcheck=False)
        self.positions.resize((rows, 2), refcheck=False)

    def parse(self, buf, stop: int, separator: int, row: int, ascending: bool,
              pool: ThreadPoolExecutor | None = None):
        """Rows of ``buf[:stop]`` from ``row`` on: (code, rows so far, byte index).

        With a ``pool`` and a long block, the lines after the middle are parsed on the
        pool's thread while this one parses those before.  That thread puts its rows after
        as many rows as the first half has newlines; blank lines there (rare) leave a gap,
        closed afterwards by moving its rows up.  The first fault in the file's order is
        the one reported; a run that found the map full resumes here, in order, after the
        map has grown.
        """
        if pool is None or stop < _SPLIT_BYTES:
            return self._resume(buf, 0, stop, separator, row, ascending)
        middle = _next_line(buf, stop // 2, stop)
        if middle >= stop:
            return self._resume(buf, 0, stop, separator, row, ascending)
        second = pool.submit(self._second_run, buf, middle, stop, separator, row, ascending)
        code, row, at = _parse_rows(buf, 0, middle, separator, self.positions,
                                    self.intensity, row, ascending)
        second_code, second_row, second_at, second_start = second.result()
        if code == FULL:
            code, row, at = self._resume(buf, at, middle, separator, row, ascending)
        if code != OK:
            return code, row, at
        if row < second_start:  # blank lines before the middle: close the gap
            moved = max(min(second_row, self.intensity.shape[0]) - second_start, 0)
            self.intensity[row:row + moved] = self.intensity[second_start:second_start + moved]
            self.positions[row:row + moved] = self.positions[second_start:second_start + moved]
            second_row -= second_start - row
        if second_code == FULL:
            return self._resume(buf, second_at, stop, separator, second_row, ascending)
        return second_code, second_row, second_at

    def _second_run(self, buf, middle: int, stop: int, separator: int, row: int,
                    ascending: bool):
        start = row + _newlines(buf, 0, middle)
        code, row, at = _parse_rows(buf, middle, stop, separator, self.positions,
                                    self.intensity, start, ascending)
        return code, row, at, start

    def _resume(self, buf, at: int, stop: int, separator: int, row: int, ascending: bool):
        """Rows of ``buf[at:stop]`` from ``row`` on, growing the map whenever it is full."""
        while True:
            code, row, at = _parse_rows(buf, at, stop, separator, self.positions,
                                        self.intensity, row, ascending)
            if code != FULL:
                return code, row, at
            self.grow()


def read_wide_rows(source: bytes | Path, data_start: int, delimiter: str, n_shift: int,
                   ascending: bool) -> WideRows | Declined:
    """Parse every row from byte ``data_start`` on: ``x, y`` then ``n_shift`` intensities.

    ``delimiter`` is the header's (``,``, tab or ``;``); intensities are stored with the
    shifts made ascending.  Rows are sized from the first row's length and the file's,
    grown if the rows turn out shorter, and cut to the rows read at the end.
    """
    size = source.stat().st_size if isinstance(source, Path) else len(source)
    separator = ord(delimiter)
    buffer = np.empty(_BLOCK_BYTES, dtype=np.uint8)
    out = None
    carry, row, offset = 0, 0, data_start  # bytes kept from the last block; its file offset
    pool = ThreadPoolExecutor(max_workers=1) if (os.cpu_count() or 1) > 1 else None
    with (source.open("rb") if isinstance(source, Path) else io.BytesIO(source) as handle,
          pool or contextlib.nullcontext()):
        handle.seek(data_start)
        while True:
            read = handle.readinto(buffer[carry:].data)
            end = carry + read
            stop = end if read == 0 else _after_last_newline(buffer, end)
            if stop == 0 and read:  # no whole line yet: read on, in a bigger buffer if full
                if end == buffer.size:
                    buffer = np.concatenate([buffer, np.empty_like(buffer)])
                carry = end
                continue
            if out is None:
                out = _Rows(n_shift, _first_line_bytes(buffer, stop), size - data_start)
            code, row, at = out.parse(buffer, stop, separator, row, ascending, pool)
            if code != OK:
                return Declined(int(code), offset + int(at))
            if read == 0:
                break
            carry = end - stop
            buffer[:carry] = buffer[stop:end]
            offset += stop
    out.intensity.resize((row, n_shift), refcheck=False)  # shrinks in place, no copy
    return WideRows(out.positions[:row], out.intensity)
