"""JCAMP-DX labelled data records (LDRs): splitting a file into ``##LABEL=value`` records.

The first layer of the JCAMP-DX reader (:mod:`qc.analysis.jcamp`): comments dropped, labels
normalised as the standard compares them, a single block from ``##TITLE=`` to ``##END=``
checked, and the numeric header records read with the line of any fault.

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

DATA_LABELS = {"XYDATA", "XYPOINTS", "PEAKTABLE"}
_UNSUPPORTED_LABELS = {"NTUPLES": "n-tuple", "BLOCKS": "compound (multi-block)"}


@dataclass(frozen=True)
class Record:
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


def split_records(text: str) -> list[Record]:
    """The file's labelled data records in order, each with its continuation lines."""
    records: list[Record] = []
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


def _make_record(head: str, value: str, number: int, body: list) -> Record:
    return Record(_normalise_label(head), head.strip(), value, number, tuple(body))


def single_block(records: list[Record]) -> list[Record]:
    """Check TITLE first and END present, and refuse compound and n-tuple files."""
    if records[0].label != "TITLE":
        raise AnalysisInputError(
            "the first record of a JCAMP-DX file must be ##TITLE=", line=records[0].line
        )
    block: list[Record] = []
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


def record_number(record: Record) -> float:
    """The record's value as a finite number, else an error naming its line."""
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


def record_npoints(record: Record) -> int:
    value = record_number(record)
    if value != int(value) or value < 2:
        raise AnalysisInputError(
            f"##NPOINTS= must be a whole number of at least 2, got '{record.value}'",
            line=record.line,
        )
    return int(value)


def record_factor(header: dict[str, Record], label: str) -> float:
    if label not in header:
        return 1.0
    value = record_number(header[label])
    if value == 0:
        raise AnalysisInputError(
            f"##{label}= must not be zero", line=header[label].line
        )
    return value
