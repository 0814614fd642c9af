"""Colloid size and concentration from a plasmon band: the metal's calibration (services).

Gold is sized by Haiss et al. (2007), silver by the lab's active calibration table (or the
built-in one).  A spectrum import (:mod:`qc.services.colloid`) and a band typed in a lab's
sheet (:func:`uvvis_sizes_from_band`) run the very same code.
"""

from __future__ import annotations

from scipy import constants

from inventory.errors import refusal
from qc.analysis import gold_haiss, silver_calibration
from qc.analysis.errors import AnalysisInputError
from qc.analysis.uvvis import PlasmonBand

from ..models.colloid import ColloidMetal, SilverCalibration, UvVisRecord
from .colloid_limits import silver_calibration_active

# The silver table in force, as silver_calibration_active() returns it.
SilverTable = tuple[silver_calibration.CalibrationTable, SilverCalibration | None]


def store_calibration(record: UvVisRecord, metal: str, band: PlasmonBand, *,
                      silver_table: SilverTable | None = None) -> float | None:
    """Size and concentration from the metal's calibration; returns the size used.

    ``silver_table``: the active silver table read once by a caller sizing many bands
    (a sheet of readings); None reads it here.
    """
    if metal == ColloidMetal.GOLD:
        return store_gold(record, band)
    return store_silver(record, band, silver_table=silver_table)


def store_gold(record: UvVisRecord, band: PlasmonBand) -> float | None:
    # u(R)/R = u(A_spr)/A_spr: the 450 nm reading is interpolated, not fitted.
    ratio_u = band.ratio_spr_450 * band.peak_absorbance_u_1cm / band.peak_absorbance_1cm
    ratio = gold_haiss.diameter_from_ratio(band.ratio_spr_450, ratio_u=ratio_u)
    peak = gold_haiss.diameter_from_peak(band.peak_nm, peak_u_nm=band.peak_u_nm)
    record.haiss_ratio_diameter_u_nm = ratio.standard_uncertainty
    record.haiss_peak_diameter_u_nm = peak.standard_uncertainty
    record.haiss_ratio_diameter_nm = ratio.value
    record.haiss_ratio_in_range = ratio.within_range
    record.haiss_ratio_is_estimate = ratio.is_estimate
    record.haiss_ratio_note = ratio.note
    record.haiss_peak_diameter_nm = peak.value
    record.haiss_peak_in_range = peak.within_range
    record.haiss_peak_note = peak.note
    # Haiss et al. advise the peak position above 35 nm and the ratio below.
    if peak.value is not None and peak.value >= gold_haiss.PEAK_ADVISED_MIN_NM:
        chosen, method = peak, "Haiss et al. 2007, peak position"
    elif ratio.value is not None:
        chosen, method = ratio, "Haiss et al. 2007, A_spr/A_450 ratio (experimental B1, B2)"
    else:
        chosen, method = peak, "Haiss et al. 2007, peak position"
    record.calibration_source = "Haiss, Thanh, Aveyard & Fernig, Anal. Chem. 79, 4215 (2007)"
    if chosen.value is None:
        record.concentration_note = "no calibration size in range, so no concentration"
        return None
    record.diameter_nm, record.diameter_method = chosen.value, method
    record.diameter_u_nm = chosen.standard_uncertainty
    number = gold_haiss.number_concentration_per_mL(band.absorbance_450_1cm, chosen.value)
    record.concentration_note = number.note
    if number.value is not None:
        record.number_per_mL = number.value
        record.molar_concentration_M = gold_haiss.molar_concentration_M(number.value)
    return chosen.value


def store_silver(record: UvVisRecord, band: PlasmonBand, *,
                 silver_table: SilverTable | None = None) -> float | None:
    table, stored = silver_table or silver_calibration_active()
    record.silver_calibration = stored
    record.calibration_source = (f"lab table '{stored.name}': {stored.provenance}" if stored
                                 else f"built-in table ({table.provenance}); not independent "
                                      "of the Mie fit")
    record.calibration_independent = table.independent_of_mie
    size = silver_calibration.diameter_from_peak(table, band.peak_nm)
    record.silver_table_diameter_nm = size.value
    record.silver_table_in_range = size.within_range
    record.silver_table_note = size.note
    molar = silver_calibration.molar_concentration_M(table, band.peak_nm, band.peak_absorbance_1cm)
    record.concentration_note = molar.note
    if molar.value is not None:
        record.molar_concentration_M = molar.value
        # Unit conversion mol/L → particles/mL: N = c·N_A/1000 (N_A, CODATA).
        record.number_per_mL = molar.value * constants.Avogadro / 1000.0
    if size.value is None:
        return None
    record.diameter_nm = size.value
    record.diameter_method = "silver calibration table, peak position (PCHIP)"
    return size.value


# Fields store_calibration fills, offered to callers sizing a band read elsewhere.
SIZING_FIELDS = ("diameter_nm", "diameter_method", "number_per_mL", "molar_concentration_M",
                 "concentration_note", "calibration_source")


def uvvis_sizes_from_band(*, metal: str, band: PlasmonBand,
                          silver_table: SilverTable | None = None) -> dict:
    """Size and concentration of a band measured elsewhere (e.g. typed in a lab's sheet).

    Runs the very calibration a spectrum import runs (``store_calibration``: Haiss et al.
    2007 for gold, the active silver table for silver) on an unsaved record and returns its
    sizing fields, so a sheet's peak and absorbances are sized exactly like a file's.
    ``silver_table`` as for ``store_calibration``.
    """
    if metal not in ColloidMetal.values:
        raise refusal("metal", f"UV-vis sizing covers silver (Ag) and gold (Au) only, not "
                               f"{metal}.", "unsupported_metal")
    record = UvVisRecord()
    try:
        store_calibration(record, metal, band, silver_table=silver_table)
    except AnalysisInputError as error:
        raise refusal(error.field or "peak_nm", error.message, "bad_value") from None
    return {name: getattr(record, name) for name in SIZING_FIELDS}
