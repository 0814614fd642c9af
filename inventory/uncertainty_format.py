"""One way to write a value with its standard uncertainty, for pages, the API and reports.

The uncertainty keeps two significant digits and the value is rounded to the same decimal
place (JCGM 100:2008, GUM §7.2.6: "it is usually sufficient to quote u_c ... to at most
two significant digits"; the value is rounded to match).  Very large or small numbers share
one power of ten: "(2.3 ± 0.4) × 10⁶".  Python's own formatting does the rounding; what it
does not do is choose the shared decimal place, hence this module.
"""

from __future__ import annotations

import math

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")
_PLAIN_RANGE = (-3, 5)  # powers of ten written without a shared exponent


def format_with_uncertainty(value: float | None, uncertainty: float | None, unit: str = "",
                            *, digits: int = 2) -> str:
    """``value ± uncertainty unit`` with ``digits`` significant digits in the uncertainty.

    Parameters
    ----------
    value : float or None
        The measured value; None gives "—".
    uncertainty : float or None
        Its standard uncertainty (same unit).  None, NaN or 0 writes the value alone with
        four significant digits and no "±" (nothing is claimed about its precision).
    unit : str
        Appended after a space ("nm", "%"); empty for dimensionless numbers.
    digits : int, default 2
        Significant digits of the uncertainty.

    Returns
    -------
    str
    """
    if value is None or not math.isfinite(value):
        return "—"
    suffix = f" {unit}" if unit else ""
    if uncertainty is None or not math.isfinite(uncertainty) or uncertainty <= 0:
        return f"{value:.4g}{suffix}"
    exponent = _decade(max(abs(value), uncertainty))
    shared = 0 if _PLAIN_RANGE[0] <= exponent <= _PLAIN_RANGE[1] else exponent
    scaled_value, scaled_u = value / 10**shared, uncertainty / 10**shared
    decimals = max(0, digits - 1 - _decade(scaled_u))
    # Rounding can carry the uncertainty up a decade (0.0996 → 0.10); Python's format keeps
    # the digits right because the decimal place is chosen before formatting.
    text = f"{scaled_value:.{decimals}f} ± {scaled_u:.{decimals}f}"
    if shared:
        return f"({text}) × 10{str(shared).translate(_SUPERSCRIPT)}{suffix}"
    return f"{text}{suffix}"


def _decade(number: float) -> int:
    return math.floor(math.log10(abs(number))) if number else 0
