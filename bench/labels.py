"""Printable labels: a QR code (ISO/IEC 18004, drawn by segno) carrying the record's page URL.

Scanning the code opens the record page, where readiness, lineage and hazards are current;
the label itself only repeats what does not change: code, kind, dates and, for reagents, the
GHS pictogram codes.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import segno

from inventory.ghs import statements_for

# GHS hazard statement → pictogram (GHS01 … GHS09), from memory of UN GHS Annex 1/3 for the
# codes in inventory.ghs; the supplier's safety data sheet remains the authority.
PICTOGRAMS = {
    "GHS02": ("flame", {"H225", "H226", "H260", "H261"}),
    "GHS03": ("flame over circle", {"H272"}),
    "GHS05": ("corrosion", {"H290", "H314", "H318"}),
    "GHS06": ("skull and crossbones", {"H300", "H301", "H310", "H311", "H330", "H331"}),
    "GHS07": ("exclamation mark", {"H302", "H312", "H315", "H317", "H319", "H332", "H335",
                                   "H336"}),
    "GHS08": ("health hazard", {"H304", "H341", "H351", "H360", "H370", "H372", "H373"}),
    "GHS09": ("environment", {"H400", "H410", "H411"}),
}

# Error correction level M (about 15 % of the symbol recoverable): labels get scuffed.
QR_ERROR_LEVEL = "m"


def pictograms_for(hazard_codes: str) -> list[tuple[str, str]]:
    """(pictogram code, name) pairs for the hazard statements, in GHS number order."""
    held = set(hazard_codes.split())
    return [(code, name) for code, (name, statements) in PICTOGRAMS.items() if held & statements]


@dataclass(frozen=True)
class Label:
    code: str
    kind: str
    made_on: date | None
    expires_on: date | None
    url: str
    qr_svg: str
    pictograms: tuple[tuple[str, str], ...]
    hazards: tuple[tuple[str, str], ...]


def qr_svg(payload: str, *, scale: int = 3) -> str:
    """An inline SVG QR code for ``payload`` (no XML declaration, fits in an HTML page)."""
    return segno.make(payload, error=QR_ERROR_LEVEL, micro=False).svg_inline(
        scale=scale, title=payload, omitsize=True)


def made_on_of(record) -> date | None:
    for name in ("made_on", "prepared_on", "received_on", "acquired_on", "measured_on"):
        value = getattr(record, name, None)
        if value is not None:
            return value
    return None


def label_for(record, *, url: str) -> Label:
    """The label of ``record`` whose page is at the absolute ``url``."""
    codes = getattr(record, "ghs_hazard_codes", "") or ""
    return Label(code=record.code, kind=str(record._meta.verbose_name), made_on=made_on_of(record),
                 expires_on=getattr(record, "expires_on", None), url=url, qr_svg=qr_svg(url),
                 pictograms=tuple(pictograms_for(codes)),
                 hazards=tuple(statements_for(codes)) if codes else ())
