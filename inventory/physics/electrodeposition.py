"""Electrodeposition through a sphere template: charge, Faraday's law and film height.

The chain is: chronoamperogram → deposition charge Q (integral of current) → amount of
metal n = ηQ/(zF) → volume V = nM/ρ → equivalent flat thickness t = V/A → film height h
inside the close-packed template (slab minus sphere caps) → h/D.  Each step is one public
function; :func:`analyse_deposition` runs the whole chain for the services layer.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import periodictable
from scipy import constants, integrate

from .errors import AnalysisInputError
from .template_geometry import equivalent_thickness_for_height_nm, film_height_nm
from .validation import as_finite_1d, require_fraction, require_positive

#: Metals the film-height calculation supports (density and molar mass from periodictable).
SUPPORTED_METALS = ("Au", "Ag", "Cu", "Pt", "Pd", "Ni")

#: Densities at 20 °C from the CRC Handbook of Chemistry and Physics (W. M. Haynes, ed.,
#: CRC Press), used instead of periodictable's rounded values (it gives gold as 19.3).
HANDBOOK_DENSITY_G_CM3 = {"Au": 19.32, "Ag": 10.49}

#: Electrons transferred per deposited atom for common plating baths (second-hand for Au;
#: the others are the usual oxidation states of the salts, common practice).  The caller
#: always states the value; this table is for forms and help text.
COMMON_ELECTRONS_PER_ATOM = {
    "Au(I)": 1, "Au(III)": 3, "Ag(I)": 1, "Cu(II)": 2, "Cu(I)": 1,
    "Pt(II)": 2, "Pt(IV)": 4, "Pd(II)": 2, "Ni(II)": 2,
}

CathodicSign = Literal["negative", "positive", "auto"]

_CM_PER_NM = 1.0e-7


def faraday_constant_C_mol() -> float:
    """Faraday constant F, C/mol, from scipy.constants (CODATA).

    References
    ----------
    E. Tiesinga, P. J. Mohr, D. B. Newell and B. N. Taylor, "CODATA recommended values of the
    fundamental physical constants: 2018", Rev. Mod. Phys. 93, 025010 (2021).
    """
    return float(constants.value("Faraday constant"))


# --------------------------------------------------------------------------- charge


def deposition_charge_C(
    time_s,
    current_A,
    *,
    start_s: float | None = None,
    end_s: float | None = None,
    cathodic_sign: CathodicSign = "negative",
) -> float:
    """Deposition charge, C, by trapezoidal integration of current over time.

    .. math:: Q = s \\int_{t_1}^{t_2} I(t)\\,dt

    with s = −1 when cathodic current is recorded negative (the IUPAC convention) and
    s = +1 when it is recorded positive.  The current at ``start_s``/``end_s`` is linearly
    interpolated so the bounds need not fall on samples.

    Parameters
    ----------
    time_s : array_like
        Sample times, s, strictly increasing.
    current_A : array_like
        Current, A, same length.
    start_s, end_s : float, optional
        Integration bounds, s, inside the record; default the whole record.
    cathodic_sign : {"negative", "positive", "auto"}
        Sign of cathodic (deposition) current in the record.  ``"auto"`` takes the sign of
        the net charge as cathodic, so it cannot detect an anodic record: use it only when
        the file is known to be a deposition.

    Returns
    -------
    float
        Net deposition charge, C, a positive magnitude.

    Raises
    ------
    AnalysisInputError
        Bad arrays or bounds, or a net charge of the wrong sign for deposition (net anodic)
        or of zero.

    References
    ----------
    A. J. Bard and L. R. Faulkner, *Electrochemical Methods: Fundamentals and Applications*,
    2nd ed., Wiley, New York, 2001 (charge as the integral of current, ch. 5; sign
    conventions, ch. 1).
    """
    time, current = _time_and_current(time_s, current_A)
    low, high = _bounds(time, start_s, end_s)
    inside = (time > low) & (time < high)
    grid = np.concatenate(([low], time[inside], [high]))
    values = np.interp(grid, time, current)
    return _cathodic_magnitude(float(integrate.trapezoid(values, grid)), cathodic_sign)


def _time_and_current(time_s, current_A) -> tuple[np.ndarray, np.ndarray]:
    time = as_finite_1d(time_s, field="time_s", min_points=2)
    current = as_finite_1d(current_A, field="current_A", min_points=2)
    if time.size != current.size:
        raise AnalysisInputError(
            f"time has {time.size} points but current has {current.size}", field="current_A"
        )
    bad = np.flatnonzero(np.diff(time) <= 0)
    if bad.size:
        raise AnalysisInputError(
            f"time must increase strictly; it does not at index {bad[0] + 1}", field="time_s"
        )
    return time, current


def _bounds(time: np.ndarray, start_s, end_s) -> tuple[float, float]:
    low = float(time[0]) if start_s is None else float(start_s)
    high = float(time[-1]) if end_s is None else float(end_s)
    for value, field in ((low, "start_s"), (high, "end_s")):
        if not (np.isfinite(value) and time[0] <= value <= time[-1]):
            raise AnalysisInputError(
                f"{value} s is outside the record ({time[0]} to {time[-1]} s)", field=field
            )
    if high <= low:
        raise AnalysisInputError(f"end {high} s is not after start {low} s", field="end_s")
    return low, high


def _cathodic_magnitude(signed_charge_C: float, cathodic_sign: str) -> float:
    """Turn a signed integral into a positive deposition charge, refusing net anodic."""
    if cathodic_sign not in ("negative", "positive", "auto"):
        raise AnalysisInputError(
            f"must be 'negative', 'positive' or 'auto', got {cathodic_sign!r}",
            field="cathodic_sign",
        )
    if signed_charge_C == 0.0:
        raise AnalysisInputError("the net charge is zero: nothing was deposited", field="current_A")
    if cathodic_sign == "auto":
        return abs(signed_charge_C)
    deposition = -signed_charge_C if cathodic_sign == "negative" else signed_charge_C
    if deposition < 0:
        raise AnalysisInputError(
            f"net charge {signed_charge_C:.4g} C is anodic for cathodic_sign="
            f"'{cathodic_sign}': this record dissolves metal or the sign convention is wrong",
            field="current_A",
        )
    return deposition


# --------------------------------------------------------------------------- Faraday


@dataclass(frozen=True)
class MetalProperties:
    """Handbook data for one metal, from the periodictable package.

    Attributes
    ----------
    symbol : str
    molar_mass_g_mol : float
    density_g_cm3 : float
        Density of the bulk solid near room temperature.
    """

    symbol: str
    molar_mass_g_mol: float
    density_g_cm3: float


def metal_properties(metal: str) -> MetalProperties:
    """Molar mass (g/mol) and bulk density (g/cm³) of a plating metal.

    Molar mass from periodictable; density from :data:`HANDBOOK_DENSITY_G_CM3` (CRC
    Handbook, 20 °C) for gold and silver, from periodictable for the others.

    Parameters
    ----------
    metal : str
        Element symbol, one of :data:`SUPPORTED_METALS`.

    Returns
    -------
    MetalProperties

    Notes
    -----
    Electrodeposited films can be slightly less dense than the bulk metal; the bulk value
    is used, so heights are lower bounds if the film is porous.

    References
    ----------
    periodictable (P. A. Kienzle), element densities and masses from the CRC Handbook of
    Chemistry and Physics and IUPAC atomic weights.
    CRC Handbook of Chemistry and Physics (W. M. Haynes, ed., CRC Press): Au 19.32 g/cm³ and
    Ag 10.49 g/cm³ at 20 °C.
    """
    if metal not in SUPPORTED_METALS:
        raise AnalysisInputError(
            f"unsupported metal {metal!r}; supported: {', '.join(SUPPORTED_METALS)}",
            field="metal",
        )
    element = periodictable.elements.symbol(metal)
    density = HANDBOOK_DENSITY_G_CM3.get(metal, float(element.density))
    return MetalProperties(symbol=metal, molar_mass_g_mol=float(element.mass),
                           density_g_cm3=density)


def metal_amount_mol(
    charge_C: float, *, electrons_per_atom: int, current_efficiency: float = 1.0
) -> float:
    """Amount of metal deposited, mol, by Faraday's law of electrolysis.

    .. math:: n = \\frac{\\eta\\,Q}{z\\,F}

    Parameters
    ----------
    charge_C : float
        Deposition charge Q, C; > 0.
    electrons_per_atom : int
        z, electrons per deposited atom (Au(I) 1, Au(III) 3, Cu(II) 2; see
        :data:`COMMON_ELECTRONS_PER_ATOM`).
    current_efficiency : float
        η, fraction of the charge that deposits metal, in (0, 1].

    Returns
    -------
    float
        Metal amount, mol.

    References
    ----------
    A. J. Bard and L. R. Faulkner, *Electrochemical Methods: Fundamentals and Applications*,
    2nd ed., Wiley, New York, 2001, ch. 1 (Faraday's law).
    """
    charge = require_positive(charge_C, field="charge_C")
    electrons = _electrons(electrons_per_atom)
    efficiency = require_fraction(current_efficiency, field="current_efficiency")
    return efficiency * charge / (electrons * faraday_constant_C_mol())


def metal_volume_cm3(amount_mol: float, *, metal: str) -> float:
    """Volume of deposited metal, cm³: V = n·M/ρ with handbook M and ρ.

    Parameters
    ----------
    amount_mol : float
        Metal amount, mol; ≥ 0.
    metal : str
        Element symbol, one of :data:`SUPPORTED_METALS`.

    Returns
    -------
    float
        Volume, cm³.

    References
    ----------
    Density and molar mass from periodictable (CRC Handbook values); see
    :func:`metal_properties`.
    """
    amount = float(amount_mol)
    if not np.isfinite(amount) or amount < 0:
        raise AnalysisInputError(f"must be zero or positive, got {amount_mol}", field="amount_mol")
    properties = metal_properties(metal)
    return amount * properties.molar_mass_g_mol / properties.density_g_cm3


def equivalent_thickness_nm(volume_cm3: float, *, electrode_area_cm2: float) -> float:
    """Equivalent flat-film thickness t = V/A, nm.

    Parameters
    ----------
    volume_cm3 : float
        Deposited metal volume, cm³.
    electrode_area_cm2 : float
        Electrode (immersed) area, cm²; > 0.

    Returns
    -------
    float
        Thickness a flat film of the same volume would have, nm.
    """
    area = require_positive(electrode_area_cm2, field="electrode_area_cm2")
    return float(volume_cm3) / area / _CM_PER_NM


def _electrons(electrons_per_atom) -> int:
    try:
        whole = not isinstance(electrons_per_atom, bool) and (
            int(electrons_per_atom) == float(electrons_per_atom)
        )
    except (TypeError, ValueError, OverflowError):
        whole = False
    if not whole:
        raise AnalysisInputError(
            f"must be a whole number, got {electrons_per_atom!r}", field="electrons_per_atom"
        )
    electrons = int(electrons_per_atom)
    if not 1 <= electrons <= 8:
        raise AnalysisInputError(
            f"must be between 1 and 8, got {electrons}", field="electrons_per_atom"
        )
    return electrons


def _nm_per_coulomb(
    *, metal: str, electrons_per_atom: int, current_efficiency: float, electrode_area_cm2: float
) -> float:
    """Equivalent thickness per coulomb, nm/C (the whole Faraday chain is linear in Q)."""
    amount = metal_amount_mol(
        1.0, electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency
    )
    return equivalent_thickness_nm(
        metal_volume_cm3(amount, metal=metal), electrode_area_cm2=electrode_area_cm2
    )


# --------------------------------------------------------------------------- targets


def charge_for_target_height_C(
    *,
    target_height_over_diameter: float,
    sphere_diameter_nm: float,
    electrode_area_cm2: float,
    metal: str,
    electrons_per_atom: int,
    current_efficiency: float = 1.0,
) -> float:
    """Charge, C, that brings a film in a close-packed template to a target h/D.

    Forward model then Faraday's law inverted: h = (h/D)·D → t(h) → Q = t / (nm per C).

    Parameters
    ----------
    target_height_over_diameter : float
        Target normalised height h/D; > 0 (values above 1 bury the spheres).
    sphere_diameter_nm : float
        Template sphere diameter D, nm.
    electrode_area_cm2 : float
        Electrode area, cm².
    metal, electrons_per_atom, current_efficiency
        As for :func:`metal_amount_mol` and :func:`metal_properties`.

    Returns
    -------
    float
        Deposition charge, C.

    References
    ----------
    Faraday's law as in :func:`metal_amount_mol`; geometry as in
    :func:`equivalent_thickness_for_height_nm`.
    """
    ratio = require_positive(target_height_over_diameter, field="target_height_over_diameter")
    diameter = require_positive(sphere_diameter_nm, field="sphere_diameter_nm")
    thickness = equivalent_thickness_for_height_nm(ratio * diameter, sphere_diameter_nm=diameter)
    nm_per_C = _nm_per_coulomb(
        metal=metal, electrons_per_atom=electrons_per_atom,
        current_efficiency=current_efficiency, electrode_area_cm2=electrode_area_cm2,
    )
    return thickness / nm_per_C


# --------------------------------------------------------------------------- graded runs


@dataclass(frozen=True, eq=False)
class GradedDeposition:
    """Per-zone results of a run in which the sample was withdrawn from the bath in steps.

    Attributes
    ----------
    withdrawal_time_s : numpy.ndarray
        When each zone left the bath, s.
    zone_area_cm2 : numpy.ndarray
        Area of each zone, cm².
    charge_density_C_cm2 : numpy.ndarray
        Deposition charge each zone received per area, C/cm².
    equivalent_thickness_nm, film_height_nm : numpy.ndarray
        Per zone, nm.
    height_over_diameter : numpy.ndarray or None
        Per zone h/D; None for a flat film.
    """

    withdrawal_time_s: np.ndarray
    zone_area_cm2: np.ndarray
    charge_density_C_cm2: np.ndarray
    equivalent_thickness_nm: np.ndarray
    film_height_nm: np.ndarray
    height_over_diameter: np.ndarray | None


def graded_deposition(
    time_s,
    current_A,
    *,
    zone_area_cm2: Sequence[float],
    withdrawal_time_s: Sequence[float],
    metal: str,
    electrons_per_atom: int,
    current_efficiency: float = 1.0,
    sphere_diameter_nm: float | None = None,
    cathodic_sign: CathodicSign = "negative",
) -> GradedDeposition:
    """Film height of each zone of a sample withdrawn from the bath step by step.

    All zones start immersed at the first sample; zone k leaves the bath at
    ``withdrawal_time_s[k]``.  While immersed, every zone carries the same current density

    .. math:: j(t) = \\frac{I(t)}{A_{imm}(t)}, \\qquad
              A_{imm}(t) = \\sum_{k:\\,t < t_k} A_k

    so zone k receives q_k = ∫ j dt from the start to t_k, and its height follows from q_k
    by Faraday's law and the template geometry, as in :func:`analyse_deposition`.

    Parameters
    ----------
    time_s, current_A : array_like
        The chronoamperogram, s and A.
    zone_area_cm2 : sequence of float
        Area of each zone, cm²; > 0.
    withdrawal_time_s : sequence of float
        When each zone was withdrawn, s, within the record and non-decreasing (the last is
        normally the end of the run).
    metal, electrons_per_atom, current_efficiency, sphere_diameter_nm, cathodic_sign
        As for :func:`analyse_deposition`.

    Returns
    -------
    GradedDeposition

    Notes
    -----
    Assumes uniform current density over the immersed area: it ignores edge effects, the
    meniscus, and the lower ohmic drop near the electrical contact.  The current at each
    withdrawal time is interpolated linearly, and the record's current is assumed to have
    been measured with the area that was immersed at that moment.

    References
    ----------
    Faraday's law as in :func:`metal_amount_mol`; geometry as in
    :func:`equivalent_thickness_for_height_nm`.
    """
    time, current = _time_and_current(time_s, current_A)
    areas, withdrawals = _zones(zone_area_cm2, withdrawal_time_s, time)

    grid = np.union1d(time[time <= withdrawals[-1]], withdrawals)
    values = np.interp(grid, time, current)
    interval_charge = 0.5 * (values[1:] + values[:-1]) * np.diff(grid)
    # Zones still in the bath during each interval: those withdrawn after its start.
    immersed = (withdrawals[None, :] > grid[:-1, None]) @ areas
    charge_density = np.concatenate(([0.0], np.cumsum(interval_charge / immersed)))
    signed = charge_density[np.searchsorted(grid, withdrawals)]

    densities = np.array(
        [_zone_magnitude(value, cathodic_sign, index) for index, value in enumerate(signed)]
    )
    nm_per_C_cm2 = _nm_per_coulomb(
        metal=metal, electrons_per_atom=electrons_per_atom,
        current_efficiency=current_efficiency, electrode_area_cm2=1.0,
    )
    thickness = densities * nm_per_C_cm2
    heights = np.array(
        [film_height_nm(value, sphere_diameter_nm=sphere_diameter_nm) for value in thickness]
    )
    ratio = None if sphere_diameter_nm is None else heights / float(sphere_diameter_nm)
    return GradedDeposition(
        withdrawal_time_s=withdrawals, zone_area_cm2=areas, charge_density_C_cm2=densities,
        equivalent_thickness_nm=thickness, film_height_nm=heights, height_over_diameter=ratio,
    )


def _zones(zone_area_cm2, withdrawal_time_s, time) -> tuple[np.ndarray, np.ndarray]:
    areas = as_finite_1d(zone_area_cm2, field="zone_area_cm2")
    withdrawals = as_finite_1d(withdrawal_time_s, field="withdrawal_time_s")
    if areas.size != withdrawals.size:
        raise AnalysisInputError(
            f"{areas.size} zone areas but {withdrawals.size} withdrawal times",
            field="withdrawal_time_s",
        )
    if np.any(areas <= 0):
        raise AnalysisInputError("every zone area must be > 0", field="zone_area_cm2")
    if np.any(np.diff(withdrawals) < 0):
        raise AnalysisInputError("withdrawal times must not decrease", field="withdrawal_time_s")
    if withdrawals[0] <= time[0] or withdrawals[-1] > time[-1]:
        raise AnalysisInputError(
            f"withdrawal times must lie after {time[0]} s and by {time[-1]} s",
            field="withdrawal_time_s",
        )
    return areas, withdrawals


def _zone_magnitude(signed_density: float, cathodic_sign: str, index: int) -> float:
    try:
        return _cathodic_magnitude(float(signed_density), cathodic_sign)
    except AnalysisInputError as error:
        raise AnalysisInputError(f"zone {index + 1}: {error.message}", field=error.field) from None


# --------------------------------------------------------------------------- whole chain


@dataclass(frozen=True)
class DepositionAnalysis:
    """Everything computed from one deposition run, with the inputs that produced it.

    Attributes
    ----------
    charge_C : float
        Deposition charge, C (positive).
    metal_amount_mol : float
    metal_volume_cm3 : float
    equivalent_thickness_nm : float
        Metal volume per electrode area as a flat thickness, nm.
    film_height_nm : float
        Height inside the template (equal to the thickness for a flat film), nm.
    height_over_diameter : float or None
        h/D; None for a flat film.
    metal, electrons_per_atom, current_efficiency, electrode_area_cm2, sphere_diameter_nm,
    start_s, end_s, cathodic_sign
        The inputs (bounds as actually used, s).
    molar_mass_g_mol, density_g_cm3, faraday_constant_C_mol : float
        The constants used.
    """

    charge_C: float
    metal_amount_mol: float
    metal_volume_cm3: float
    equivalent_thickness_nm: float
    film_height_nm: float
    height_over_diameter: float | None
    metal: str
    electrons_per_atom: int
    current_efficiency: float
    electrode_area_cm2: float
    sphere_diameter_nm: float | None
    start_s: float
    end_s: float
    cathodic_sign: str
    molar_mass_g_mol: float
    density_g_cm3: float
    faraday_constant_C_mol: float


def analyse_deposition(
    *,
    time_s,
    current_A,
    electrode_area_cm2: float,
    metal: str,
    electrons_per_atom: int,
    current_efficiency: float = 1.0,
    sphere_diameter_nm: float | None = None,
    start_s: float | None = None,
    end_s: float | None = None,
    cathodic_sign: CathodicSign = "negative",
) -> DepositionAnalysis:
    """Charge, metal amount, volume, equivalent thickness and film height of one run.

    Chains :func:`deposition_charge_C`, :func:`metal_amount_mol` (Faraday's law),
    :func:`metal_volume_cm3`, :func:`equivalent_thickness_nm` and :func:`film_height_nm`.

    Parameters
    ----------
    time_s, current_A : array_like
        The chronoamperogram (e.g. from
        :func:`inventory.physics.chronoamperogram.parse_chronoamperogram`), s and A.
    electrode_area_cm2 : float
        Geometric electrode area exposed to the bath, cm²; > 0.
    metal : str
        One of :data:`SUPPORTED_METALS`.
    electrons_per_atom : int
        Electrons per deposited atom (Au(I) 1, Au(III) 3, Ag(I) 1, Cu(II) 2 …).
    current_efficiency : float
        Fraction of the charge that deposits metal, in (0, 1]; default 1.
    sphere_diameter_nm : float or None
        Template sphere diameter, nm; None for a flat film.
    start_s, end_s : float, optional
        Integration bounds, s; default the whole record.
    cathodic_sign : {"negative", "positive", "auto"}
        Sign of cathodic current in the record; "negative" is the IUPAC convention.

    Returns
    -------
    DepositionAnalysis

    References
    ----------
    See the functions chained above.
    """
    time, _ = _time_and_current(time_s, current_A)
    low, high = _bounds(time, start_s, end_s)
    charge = deposition_charge_C(
        time_s, current_A, start_s=low, end_s=high, cathodic_sign=cathodic_sign
    )
    amount = metal_amount_mol(
        charge, electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency
    )
    volume = metal_volume_cm3(amount, metal=metal)
    thickness = equivalent_thickness_nm(volume, electrode_area_cm2=electrode_area_cm2)
    height = film_height_nm(thickness, sphere_diameter_nm=sphere_diameter_nm)
    properties = metal_properties(metal)
    diameter = None if sphere_diameter_nm is None else float(sphere_diameter_nm)
    return DepositionAnalysis(
        charge_C=charge,
        metal_amount_mol=amount,
        metal_volume_cm3=volume,
        equivalent_thickness_nm=thickness,
        film_height_nm=height,
        height_over_diameter=None if diameter is None else height / diameter,
        metal=metal,
        electrons_per_atom=int(electrons_per_atom),
        current_efficiency=float(current_efficiency),
        electrode_area_cm2=float(electrode_area_cm2),
        sphere_diameter_nm=diameter,
        start_s=low,
        end_s=high,
        cathodic_sign=cathodic_sign,
        molar_mass_g_mol=properties.molar_mass_g_mol,
        density_g_cm3=properties.density_g_cm3,
        faraday_constant_C_mol=faraday_constant_C_mol(),
    )
