"""The bench style's text colours meet WCAG 2.1 AA contrast (4.5:1 for body text).

Relative luminance and contrast ratio as defined by W3C WCAG 2.1, success criterion 1.4.3
and its definitions of "relative luminance" and "contrast ratio".
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from django.template.loader import get_template

# The base template wherever the template loaders find it (bench/templates/ today).
BASE = Path(get_template("base.html").origin.name)
AA_BODY_TEXT = 4.5  # WCAG 2.1 SC 1.4.3, normal-size text

# (foreground, background) pairs the style actually paints text with.
PAIRS = [
    ("--ink", "--paper"), ("--ink", "--sheet"), ("--muted", "--paper"), ("--muted", "--sheet"),
    ("--teal-dark", "--paper"), ("--teal-dark", "--sheet"), ("#fff", "--teal"),
    ("#fff", "--teal-dark"), ("#fff", "--go"), ("#fff", "--stop"), ("#fff", "--muted"),
    ("--amber", "--sheet"),
    ("--ink", "--amber-bg"), ("--ink", "--info-bg"), ("--go", "--sheet"), ("--stop", "--sheet"),
    ("--muted", "#eef0ea"),
]


def _palette() -> dict[str, str]:
    return dict(re.findall(r"(--[a-z-]+):(#[0-9a-fA-F]{3,6})", BASE.read_text()))


def _luminance(hex_colour: str) -> float:
    digits = hex_colour.lstrip("#")
    if len(digits) == 3:
        digits = "".join(c * 2 for c in digits)
    channels = [int(digits[i:i + 2], 16) / 255 for i in (0, 2, 4)]
    linear = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def contrast_ratio(a: str, b: str) -> float:
    light, dark = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (light + 0.05) / (dark + 0.05)


def test_formula_matches_the_wcag_extremes():
    # WCAG 2.1 definition: black on white is 21:1, a colour on itself 1:1.
    assert contrast_ratio("#000", "#fff") == pytest.approx(21.0)
    assert contrast_ratio("#777777", "#777777") == pytest.approx(1.0)
    # #767676 on white is the commonly cited lightest grey passing AA (4.54:1), common practice.
    assert contrast_ratio("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)


@pytest.mark.parametrize(("foreground", "background"), PAIRS)
def test_text_colours_meet_aa(foreground, background):
    palette = _palette()
    fg, bg = palette.get(foreground, foreground), palette.get(background, background)
    assert contrast_ratio(fg, bg) >= AA_BODY_TEXT, (foreground, background)
