"""Film heights of a sample withdrawn from the plating bath in steps (a graded run).

One run gives a series of zones, each with its own deposition charge and so its own film
height; a lab uses it to find the h/D that suits an analyte on one slide.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .deposition_charge import CathodicSign, cathodic_magnitude, checked_time_and_current
from .errors import AnalysisInputError
from .faraday import thickness_per_charge_nm_C
from .template_geometry import film_height_nm
from .validation import as_finite_1d


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
    time, current = checked_time_and_current(time_s, current_A)
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
    nm_per_C_cm2 = thickness_per_charge_nm_C(
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
        return cathodic_magnitude(float(signed_density), cathodic_sign)
    except AnalysisInputError as error:
        raise AnalysisInputError(f"zone {index + 1}: {error.message}", field=error.field) from None
