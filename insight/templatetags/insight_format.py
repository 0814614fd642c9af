"""Number formats for the insight page: percentages and significant figures."""

import math

from django import template

register = template.Library()


@register.filter
def percent(fraction, digits: int = 0) -> str:
    """0.934 → '93 %'; empty for a missing value."""
    if fraction is None or (isinstance(fraction, float) and math.isnan(fraction)):
        return "—"
    return f"{fraction * 100:.{int(digits)}f} %"


@register.filter
def sig(value, digits: int = 3) -> str:
    """A number to ``digits`` significant figures; '—' when missing."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    return f"{value:.{int(digits)}g}"
