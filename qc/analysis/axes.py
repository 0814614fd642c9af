"""Raman-shift axes: converting between absolute scattered wavelength and Raman shift.

A Raman shift is the difference between the wavenumber of the laser line and that of the
scattered light.  With wavelengths in nanometres and wavenumbers in cm⁻¹
(1 cm = 10⁷ nm)::

    shift_cm1 = 1e7 / laser_nm - 1e7 / scattered_nm

so Stokes lines (scattered at longer wavelength than the laser) have positive shifts and
anti-Stokes lines negative ones, the sign convention of Raman spectroscopy.

References
----------
.. [1] McCreery, R. L. *Raman Spectroscopy for Chemical Analysis*; Chemical Analysis
   Vol. 157; Wiley-Interscience: New York, 2000; chapter 1 (definition of Raman shift
   as a wavenumber difference, Stokes positive).
"""

from __future__ import annotations

import numpy as np

from ._validation import require_positive
from .errors import AnalysisInputError
from .spectrum import Spectrum

_NM_PER_CM = 1.0e7  # 1 cm = 10^7 nm, so 1e7 / λ[nm] is a wavenumber in cm⁻¹


def _first_not_positive(values: np.ndarray) -> int | None:
    """Flat index of the first value that is not finite or not > 0, else None."""
    bad = np.flatnonzero(~(np.isfinite(values) & (values > 0)))
    return int(bad[0]) if bad.size else None


def _positive_wavelengths(values, *, field: str) -> np.ndarray:
    wavelength_nm = np.asarray(values, dtype=float)
    index = _first_not_positive(wavelength_nm.ravel())
    if index is not None:
        raise AnalysisInputError(
            f"wavelengths must be finite and positive; value at index {index} is "
            f"{wavelength_nm.ravel()[index]}",
            field=field,
        )
    return wavelength_nm


def raman_shift_cm1(scattered_nm, laser_nm: float) -> np.ndarray:
    """Raman shift of light scattered at ``scattered_nm`` from a laser at ``laser_nm``.

    .. math:: \\Delta\\tilde\\nu = 10^7/\\lambda_0 - 10^7/\\lambda_s

    Parameters
    ----------
    scattered_nm : array_like
        Absolute wavelength of the scattered light, nm (any shape), all > 0.
    laser_nm : float
        Laser (excitation) wavelength, nm, > 0.

    Returns
    -------
    numpy.ndarray
        Raman shift in cm⁻¹, same shape as ``scattered_nm``; Stokes positive.

    Notes
    -----
    Wavelengths are taken as given (air or vacuum); use the same for laser and
    scattered light.  The refractive index of air shifts both by ~0.03 %, which changes a
    shift by less than 0.3 cm⁻¹ at 1000 cm⁻¹ when applied consistently.

    References
    ----------
    .. [1] McCreery, R. L. *Raman Spectroscopy for Chemical Analysis*; Wiley-Interscience:
       New York, 2000; chapter 1.
    """
    laser = require_positive(laser_nm, field="laser_nm")
    scattered = _positive_wavelengths(scattered_nm, field="scattered_nm")
    return _NM_PER_CM / laser - _NM_PER_CM / scattered


def scattered_wavelength_nm(shift_cm1, laser_nm: float) -> np.ndarray:
    """Absolute wavelength (nm) at which a Raman band at ``shift_cm1`` appears.

    .. math:: \\lambda_s = 10^7 / (10^7/\\lambda_0 - \\Delta\\tilde\\nu)

    Parameters
    ----------
    shift_cm1 : array_like
        Raman shift, cm⁻¹ (Stokes positive), each below the laser wavenumber 10⁷/λ₀.
    laser_nm : float
        Laser wavelength, nm, > 0.

    Returns
    -------
    numpy.ndarray
        Scattered wavelength in nm, same shape as ``shift_cm1``.

    References
    ----------
    .. [1] McCreery, R. L. *Raman Spectroscopy for Chemical Analysis*; Wiley-Interscience:
       New York, 2000; chapter 1.
    """
    laser = require_positive(laser_nm, field="laser_nm")
    shift = np.asarray(shift_cm1, dtype=float)
    scattered_wavenumber_cm1 = _NM_PER_CM / laser - shift
    index = _first_not_positive(scattered_wavenumber_cm1.ravel())
    if index is not None:
        raise AnalysisInputError(
            f"shift {shift.ravel()[index]} cm⁻¹ at index {index} is not finite or not below "
            f"the laser wavenumber {_NM_PER_CM / laser:.2f} cm⁻¹",
            field="shift_cm1",
        )
    return _NM_PER_CM / scattered_wavenumber_cm1


def spectrum_to_raman_shift(
    spectrum: Spectrum, laser_nm: float | None = None
) -> Spectrum:
    """Turn a spectrum whose x is absolute wavelength (nm) into one in Raman shift (cm⁻¹).

    Parameters
    ----------
    spectrum : Spectrum
        ``x`` in nm (``x_unit`` "nm"), ascending.
    laser_nm : float, optional
        Laser wavelength, nm.  Defaults to ``spectrum.metadata["laser_nm"]``.

    Returns
    -------
    Spectrum
        ``x`` in cm⁻¹ (``x_unit`` "1/cm"), ascending (a wavelength axis ascending in nm is
        already ascending in shift, since the shift grows with λ_s), ``y`` unchanged,
        metadata with ``laser_nm`` recorded.

    Notes
    -----
    Intensities are not rescaled by the Jacobian of the axis change: counts per pixel
    stay counts per pixel, which is what band heights and ratios are measured on.

    References
    ----------
    .. [1] McCreery, R. L. *Raman Spectroscopy for Chemical Analysis*; Wiley-Interscience:
       New York, 2000; chapter 1.
    """
    if spectrum.x_unit.strip().lower() not in {"nm", "nanometers", "nanometres"}:
        raise AnalysisInputError(
            f"expected an axis in nm, got '{spectrum.x_unit}'", field="x_unit"
        )
    if laser_nm is None:
        laser_nm = spectrum.metadata.get("laser_nm")
        if laser_nm is None:
            raise AnalysisInputError(
                "the laser wavelength is needed to compute a Raman shift",
                field="laser_nm",
            )
    shift = raman_shift_cm1(spectrum.x, laser_nm)
    metadata = dict(spectrum.metadata, laser_nm=float(laser_nm))
    return Spectrum(shift, spectrum.y, "1/cm", spectrum.y_unit, metadata)
