"""GHS hazard statement codes on reagent records and labels.

Statement wording follows the UN Globally Harmonized System (GHS), Annex 3, as recalled
from memory for the codes a SERS laboratory meets most; the supplier's safety data sheet and
local regulations remain the authority, and pages say so.  Codes not in the table are kept
and shown with a pointer to the safety data sheet.
"""

from __future__ import annotations

import re

from django.core.exceptions import ValidationError  # noqa: F401

from .errors import refusal

# From memory (UN GHS Annex 3 wording); verify against the supplier's SDS.
STATEMENTS = {
    "H225": "Highly flammable liquid and vapour",
    "H226": "Flammable liquid and vapour",
    "H260": "In contact with water releases flammable gases which may ignite spontaneously",
    "H261": "In contact with water releases flammable gas",
    "H272": "May intensify fire; oxidizer",
    "H290": "May be corrosive to metals",
    "H300": "Fatal if swallowed",
    "H301": "Toxic if swallowed",
    "H302": "Harmful if swallowed",
    "H304": "May be fatal if swallowed and enters airways",
    "H310": "Fatal in contact with skin",
    "H311": "Toxic in contact with skin",
    "H312": "Harmful in contact with skin",
    "H314": "Causes severe skin burns and eye damage",
    "H315": "Causes skin irritation",
    "H317": "May cause an allergic skin reaction",
    "H318": "Causes serious eye damage",
    "H319": "Causes serious eye irritation",
    "H330": "Fatal if inhaled",
    "H331": "Toxic if inhaled",
    "H332": "Harmful if inhaled",
    "H335": "May cause respiratory irritation",
    "H336": "May cause drowsiness or dizziness",
    "H341": "Suspected of causing genetic defects",
    "H351": "Suspected of causing cancer",
    "H360": "May damage fertility or the unborn child",
    "H370": "Causes damage to organs",
    "H372": "Causes damage to organs through prolonged or repeated exposure",
    "H373": "May cause damage to organs through prolonged or repeated exposure",
    "H400": "Very toxic to aquatic life",
    "H410": "Very toxic to aquatic life with long lasting effects",
    "H411": "Toxic to aquatic life with long lasting effects",
    "H412": "Harmful to aquatic life with long lasting effects",
    "EUH032": "Contact with acids liberates very toxic gas",
}

_CODE = re.compile(r"^(H\d{3}[A-Za-z]{0,2}|EUH\d{3})$")
SEVERE = frozenset({"H300", "H310", "H330", "EUH032", "H260", "H314", "H360", "H370"})


def normalise_codes(text: str) -> str:
    """``"h300+h310, H330"`` → ``"H300 H310 H330"``; refuses anything that is not a code."""
    codes: list[str] = []
    for token in re.split(r"[\s,;+]+", text.strip()):
        if not token:
            continue
        code = token.upper()
        if not _CODE.match(code):
            raise refusal(
                "ghs_hazard_codes",
                f"'{token}' is not a GHS hazard code (e.g. H300, EUH032).",
                "bad_ghs_code",
            )
        if code not in codes:
            codes.append(code)
    return " ".join(codes)


def statements_for(codes: str) -> list[tuple[str, str]]:
    """(code, statement) pairs for display; unknown codes point to the safety data sheet."""
    return [(code, STATEMENTS.get(code, "see the supplier's safety data sheet"))
            for code in codes.split()]


def is_severe(codes: str) -> bool:
    """True when any code is acutely fatal, releases toxic/flammable gas or is corrosive."""
    return any(code in SEVERE for code in codes.split())
