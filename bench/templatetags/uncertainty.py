"""``{{ value|pm:uncertainty }}``: a stored number with its standard uncertainty on a page.

A thin wrapper of :func:`inventory.uncertainty_format.format_with_uncertainty`, the one
place where the digits are chosen.
"""

from django import template

from inventory.uncertainty_format import format_with_uncertainty

register = template.Library()


@register.filter
def pm(value, uncertainty):
    """``value ± uncertainty`` with two significant digits in the uncertainty."""
    return format_with_uncertainty(value, uncertainty)
