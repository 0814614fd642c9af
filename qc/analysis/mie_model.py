"""Mie-theory extinction of Au and Ag colloids in water, and its fit to a UV-vis spectrum.

The chain is: Johnson & Christy bulk permittivity → Kreibig size-dependent damping of the
free-electron (Drude) part → Mie efficiencies from ``miepython`` → a log-normal number
distribution of diameters → absorbance of the colloid in a 1 cm path.  Cross sections are
tabulated once per (metal, wavelength grid, medium) and kept in memory, so fitting a
spectrum is a cheap spline evaluation.

The steps live in :mod:`~qc.analysis.drude_size_correction` (Kreibig damping),
:mod:`~qc.analysis.mie_cross_section` (cross sections, the log-normal average, absorbance)
and :mod:`~qc.analysis.mie_fit` (the spectrum fit and the size comparison); this module
re-exports their names so ``qc.analysis.mie_model`` stays the one import for callers.
"""

from __future__ import annotations

from .drude_size_correction import (
    DAMPING_CONSTANT_A,
    DRUDE,
    GOLD_DRUDE,
    SILVER_DRUDE,
    DrudeParameters,
    damping_rate_rad_s,
    size_corrected_permittivity,
)
from .mie_cross_section import (
    absorbance_from_cross_section,
    extinction_cross_section_nm2,
    mean_cross_section_nm2,
    synthesize_absorbance,
)
from .mie_fit import DIAMETER_SEARCH_NM, MieFit, SizeAgreement, compare_sizes, fit_lognormal_mie

__all__ = [
    "DAMPING_CONSTANT_A", "DIAMETER_SEARCH_NM", "DRUDE", "GOLD_DRUDE", "SILVER_DRUDE",
    "DrudeParameters", "MieFit", "SizeAgreement", "absorbance_from_cross_section",
    "compare_sizes", "damping_rate_rad_s", "extinction_cross_section_nm2", "fit_lognormal_mie",
    "mean_cross_section_nm2", "size_corrected_permittivity", "synthesize_absorbance",
]
