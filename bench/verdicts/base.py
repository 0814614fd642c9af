"""What every result page leads with: a verdict in words, then its key figures.

One shape for every kind (QC, deposition, colloid UV-vis, readiness), rendered by one
template (``inventory/_verdict_first.html``).  The builders only read what the services
stored; judging lives in qc and inventory.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import NamedTuple

from inventory.uncertainty_format import format_with_uncertainty


class KeyFigure(NamedTuple):
    label: str
    value: str
    link_code: str = ""  # a record the figure comes from, linked on the page


@dataclass(frozen=True)
class Verdict:
    """``passed`` is True (good to go), False (do not use as it is) or None (not judged)."""

    passed: bool | None
    headline: str  # a few capital words: "PASS", "OFF TARGET", "NOT READY"
    sentence: str
    next_step: str
    figures: list[KeyFigure] = field(default_factory=list)

    @property
    def tone(self) -> str:
        """The colour class of the headline: go, stop, or neither when nothing was judged."""
        return {True: "ready", False: "not-ready"}.get(self.passed, "unjudged")


SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def sci(value: float) -> str:
    """3.00 × 10⁶: scientific notation as printed, not as typed."""
    mantissa, exponent = f"{value:.2e}".split("e")
    return f"{mantissa} × 10{str(int(exponent)).translate(SUPERSCRIPT)}"


def with_u(value: float | None, uncertainty: float | None, unit: str = "") -> str:
    """A value and its standard uncertainty the one way the project writes them."""
    return format_with_uncertainty(value, uncertainty, unit)


def figures(rows: Iterable[tuple]) -> list[KeyFigure]:
    """(label, value[, code]) rows as key figures."""
    return [KeyFigure(*row) for row in rows]


def flag_words(flag_codes: Iterable[str]) -> str:
    """"open flag FLG-00003" / "open flags FLG-00003, FLG-00004"; empty without flags."""
    codes = list(flag_codes)
    if not codes:
        return ""
    return f"open flag{'s' if len(codes) > 1 else ''} {', '.join(codes)}"


def stale_verdict(code: str, stale_reason: str, *, next_step: str,
                  figures_: list[KeyFigure]) -> Verdict:
    """Figures whose inputs changed are not presented as a current result."""
    return Verdict(False, "STALE", f"{code}'s figures are not current: stale: {stale_reason}",
                   next_step, figures_)
