"""Silver colloid size and concentration from a calibration table of peak position.

A :class:`CalibrationTable` maps the plasmon peak wavelength to the mean diameter and to the
molar extinction coefficient at the peak.  Tables come from three places: the lab's own
sizing (e.g. TEM), stored by the Django side as a record with its provenance; the
project's Mie model with Johnson & Christy silver (:func:`silver_table_from_mie`); or a
published table the lab types in, such as Paramelle et al. (2014) for citrate-capped
silver.  The published values are not built in: they could not be confirmed here, and a
table recalled from memory is no basis for release decisions.

References
----------
D. Paramelle, A. Sadovoy, S. Gorelik, P. Free, J. Hobley and D. G. Fernig, "A rapid method
to estimate the concentration of citrate capped silver nanoparticles from UV-visible light
spectra", Analyst 139, 4855–4861 (2014).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import constants
from scipy.interpolate import PchipInterpolator

from ._validation import as_finite_1d, require_positive
from .errors import AnalysisInputError
from .mie_cross_section import mean_cross_section_nm2
from .uvvis import CalibratedValue


@dataclass(frozen=True)
class CalibrationTable:
    """Peak wavelength → diameter and molar extinction at the peak, with provenance.

    Attributes
    ----------
    peak_nm : tuple of float
        Plasmon peak wavelengths, strictly increasing.
    diameter_nm : tuple of float
        Mean diameter at each peak, strictly increasing.
    extinction_M1cm1 : tuple of float
        Molar (per mole of particles) decadic extinction coefficient at the peak, M⁻¹cm⁻¹.
    provenance : str
        Where the numbers come from (paper, lab TEM series, model and its settings).
    independent_of_mie : bool, default True
        False for a table computed with this project's Mie model: comparing a Mie fit with
        it is not an independent check.  A lab's own table (e.g. TEM sizing) is independent.
    """

    peak_nm: tuple[float, ...]
    diameter_nm: tuple[float, ...]
    extinction_M1cm1: tuple[float, ...]
    provenance: str
    independent_of_mie: bool = True

    def __post_init__(self):
        peak = as_finite_1d(self.peak_nm, field="peak_nm", min_points=3)
        for name in ("diameter_nm", "extinction_M1cm1"):
            column = as_finite_1d(getattr(self, name), field=name, min_points=3)
            if column.size != peak.size:
                raise AnalysisInputError(
                    f"{column.size} values for {peak.size} peak wavelengths", field=name
                )
            if np.any(column <= 0):
                raise AnalysisInputError("values must be positive", field=name)
        for name in ("peak_nm", "diameter_nm"):
            steps = np.diff(np.asarray(getattr(self, name), dtype=float))
            if np.any(steps <= 0):
                row = int(np.flatnonzero(steps <= 0)[0]) + 2
                raise AnalysisInputError(
                    f"must increase strictly down the table (row {row} does not)", field=name
                )
        if not str(self.provenance).strip():
            raise AnalysisInputError("a calibration table needs its provenance", field="provenance")


def _lookup(table: CalibrationTable, peak_nm: float, column: str, unit: str) -> CalibratedValue:
    peak = require_positive(peak_nm, field="peak_nm")
    low, high = table.peak_nm[0], table.peak_nm[-1]
    method = f"calibration table ({table.provenance}), monotone PCHIP interpolation"
    if not low <= peak <= high:
        return CalibratedValue(
            None, unit, method, False, False,
            f"peak {peak:.1f} nm is outside the table's {low:g}–{high:g} nm",
        )
    value = float(PchipInterpolator(table.peak_nm, getattr(table, column))(peak))
    return CalibratedValue(value, unit, method, True, False, "")


def diameter_from_peak(table: CalibrationTable, peak_nm: float) -> CalibratedValue:
    """Mean diameter (nm) at a peak wavelength, by monotone (PCHIP) interpolation.

    Outside the table's peak range there is no number (no extrapolation).
    """
    return _lookup(table, peak_nm, "diameter_nm", "nm")


def extinction_at_peak(table: CalibrationTable, peak_nm: float) -> CalibratedValue:
    """Molar extinction coefficient at the peak (M⁻¹cm⁻¹), by PCHIP interpolation."""
    return _lookup(table, peak_nm, "extinction_M1cm1", "1/(M·cm)")


def molar_concentration_M(
    table: CalibrationTable, peak_nm: float, peak_absorbance_1cm: float
) -> CalibratedValue:
    """Particle molar concentration by Beer–Lambert, c = A_peak / (ε_peak · 1 cm), in mol/L.

    ``peak_absorbance_1cm`` must be for the undiluted colloid in 1 cm.
    """
    absorbance = require_positive(peak_absorbance_1cm, field="peak_absorbance_1cm")
    epsilon = extinction_at_peak(table, peak_nm)
    if epsilon.value is None:
        return CalibratedValue(None, "M", epsilon.method, False, False, epsilon.note)
    return CalibratedValue(absorbance / epsilon.value, "M", epsilon.method, True, False, "")


def molar_extinction_M1cm1(cross_section_nm2) -> np.ndarray:
    """Molar decadic extinction coefficient from a cross section: ε = N_A·C_ext/(1000·ln 10).

    C_ext in nm² (converted to cm²); ε in M⁻¹cm⁻¹; N_A from scipy.constants.
    """
    cross_cm2 = np.asarray(cross_section_nm2, dtype=float) * 1e-14
    return constants.Avogadro * cross_cm2 / (1000.0 * np.log(10.0))


@lru_cache(maxsize=4)
def silver_table_from_mie(
    diameters_nm: tuple[float, ...] = (20.0, 30.0, 40.0, 50.0, 60.0, 70.0, 80.0, 90.0),
    geometric_sigma: float = 1.1,
) -> CalibrationTable:
    """Calibration table for citrate silver in water computed with the project's Mie model.

    For each median diameter the log-normal Mie spectrum (Johnson & Christy silver,
    Kreibig damping with A = 1, water n = 1.333) is computed on a 1 nm grid from 360 to
    480 nm; the peak is the vertex of the parabola through the highest sample and its two
    neighbours, and the table holds the peak wavelength and ε at the peak.

    Notes
    -----
    Below about 20 nm the modelled Ag peak hardly moves with size (about 1 nm per 5 nm),
    so the peak cannot resolve size there and the default table starts at 20 nm.  Above
    about 90 nm the quadrupole band near 390 nm overtakes the dipole band, so the highest
    point no longer tracks size and the table stops at 90 nm.
    The coarse Johnson & Christy grid near 400 nm makes absolute peak positions uncertain
    by a few nm; a lab table from its own TEM sizing is preferable where available.
    """
    wavelength = np.arange(360.0, 481.0, 1.0)
    peaks, epsilons = [], []
    for diameter in diameters_nm:
        cross = mean_cross_section_nm2("Ag", wavelength, diameter, geometric_sigma)
        top = int(np.clip(np.argmax(cross), 1, wavelength.size - 2))
        curvature, slope, height = np.polyfit([-1.0, 0.0, 1.0], cross[top - 1 : top + 2], 2)
        peaks.append(float(wavelength[top] - slope / (2 * curvature)))
        epsilons.append(float(molar_extinction_M1cm1(height - slope**2 / (4 * curvature))))
    return CalibrationTable(
        peak_nm=tuple(peaks),
        diameter_nm=tuple(float(d) for d in diameters_nm),
        extinction_M1cm1=tuple(epsilons),
        provenance=(
            "sersledger Mie model: Johnson & Christy (1972) Ag, Kreibig damping A = 1, "
            f"water n = 1.333, log-normal σ_g = {geometric_sigma:g}"
        ),
        independent_of_mie=False,
    )
