"""Starting limits for a lab that has not set its own: every substrate stage, every metal.

They are saved marked ``is_example`` ("defaults to review" on the limits page) until an
administrator saves the lab's own values.  Each value says where it comes from: a standard,
a published source, "common practice" for a fact of the trade, or "from memory" where recalled.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["COLLOID_DEFAULTS", "QC_DEFAULTS", "ColloidDefault", "QcDefault"]

# Shared by every stage, each with its source:
# SERS precision is typically 15–20 % RSD; "reproducible" substrates are described as below
# that (common practice).
MAX_RSD_PERCENT = 20.0
# S/N 10:1 is the quantitation limit of ICH Q2(R1) (2005), "Validation of analytical
# procedures", section on the quantitation limit (common practice).
MIN_SNR = 10.0
# About twice the 2–4 cm⁻¹ resolution of a bench dispersive Raman spectrometer, so adsorption
# shifts of a cm⁻¹ or two pass (common practice).
BAND_TOLERANCE_CM1 = 5.0
# A 5 × 5 map, the smallest grid usually quoted for uniformity (from memory).
MIN_MAP_POINTS = 25


@dataclass(frozen=True)
class QcDefault:
    """Default QC limits for one substrate stage, with the reason for each stage value."""

    min_enhancement_factor: float
    valid_days: int
    why: str
    max_rsd_percent: float = MAX_RSD_PERCENT
    min_snr: float = MIN_SNR
    band_position_tolerance_cm1: float = BAND_TOLERANCE_CM1
    min_map_points: int = MIN_MAP_POINTS
    intensity_measure: str = "height"  # band height or area: labs report either (common practice)

    def as_values(self) -> dict:
        return {name: getattr(self, name) for name in (
            "min_enhancement_factor", "max_rsd_percent", "min_snr",
            "band_position_tolerance_cm1", "valid_days", "min_map_points", "intensity_measure")}


COMMON_SOURCES = (
    f"RSD ≤ {MAX_RSD_PERCENT:g} %: SERS precision is typically 15–20 % (common practice); "
    f"S/N ≥ {MIN_SNR:g}: quantitation limit of ICH Q2(R1), 2005; band within "
    f"±{BAND_TOLERANCE_CM1:g} cm⁻¹: about twice a bench spectrometer's resolution (common "
    f"practice); at least {MIN_MAP_POINTS} map points, a 5 × 5 grid (from memory).")

QC_DEFAULTS = {
    # Roughened and vapour-deposited films give EF 10³–10⁶, structured films about 10⁶
    # (common practice): a floor of 10⁵ passes a good structured film and fails a flat one.
    "film": QcDefault(1e5, 30, "EF ≥ 10⁵: structured films reach about 10⁶, rough films "
                               "10³–10⁶ (common practice); QC valid 30 days (from memory)."),
    # A linker monolayer adds no enhancement of its own, so the film's floor stands; thiol
    # monolayers oxidise in air within days (from memory), hence a short validity.
    "linker": QcDefault(1e5, 7, "EF ≥ 10⁵, as the film below it: a linker layer adds no "
                                "enhancement (common practice); thiol layers age in air within "
                                "days, so QC is valid 7 days (from memory)."),
    # Particle-in-gap substrates reach 10⁸–10¹⁰ (common practice); a floor of 10⁶, the
    # structured-film level, shows when attachment added nothing.
    "particles": QcDefault(1e6, 14, "EF ≥ 10⁶: particle-in-gap substrates reach 10⁸–10¹⁰, a "
                                    "failed attachment stays at the film's 10⁶ (common "
                                    "practice); QC valid 14 days (from memory)."),
    "purchased": QcDefault(1e5, 90, "EF ≥ 10⁵: the film level, below what makers of ready-made "
                                    "substrates state (from memory); QC valid 90 days on a "
                                    "sealed substrate (from memory)."),
}


@dataclass(frozen=True)
class ColloidDefault:
    """Default UV-vis limits for colloids of one metal."""

    peak_min_nm: float
    peak_max_nm: float
    fwhm_max_nm: float
    why: str
    peak_shift_max_nm: float = 5.0  # a shift of a few nm means growth or coupling (common practice)
    absorbance_loss_max_fraction: float = 0.2  # a fifth of the particles lost (from memory)
    aggregation_index_max: float = 0.1  # a weak red tail only (from memory)
    size_tolerance_percent: float = 15.0  # Haiss et al. 2007 report 11 % average deviation

    def as_values(self) -> dict:
        return {name: getattr(self, name) for name in (
            "peak_min_nm", "peak_max_nm", "fwhm_max_nm", "peak_shift_max_nm",
            "absorbance_loss_max_fraction", "aggregation_index_max", "size_tolerance_percent")}


COLLOID_DEFAULTS = {
    # Haiss, Thanh, Aveyard & Fernig, Anal. Chem. 2007, 79, 4215: λspr = 512 + 6.53·exp(0.0216·d)
    # gives 520 nm at 10 nm and 569 nm at 100 nm.
    "Au": ColloidDefault(515.0, 570.0, 100.0,
                         "Peak 515–570 nm: gold of 10–100 nm by Haiss et al., Anal. Chem. 2007; "
                         "FWHM ≤ 100 nm, shift ≤ 5 nm, loss ≤ 20 %, aggregation index ≤ 0.1 "
                         "(from memory); size agreement 15 % (Haiss et al. report 11 %)."),
    # Citrate silver of 10–80 nm peaks at about 390–460 nm (from memory; Paramelle et al.,
    # Analyst 2014 tabulate it, values not confirmed here).
    "Ag": ColloidDefault(390.0, 460.0, 100.0,
                         "Peak 390–460 nm: citrate silver of 10–80 nm (from memory; see "
                         "Paramelle et al., Analyst 2014); FWHM ≤ 100 nm, shift ≤ 5 nm, loss "
                         "≤ 20 %, aggregation index ≤ 0.1 (from memory)."),
}
