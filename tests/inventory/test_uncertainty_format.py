"""Value ± uncertainty formatting against the GUM's own examples (JCGM 100:2008, §7.2)."""

import pytest

from inventory.uncertainty_format import format_with_uncertainty


def test_gum_7_2_2_example():
    # GUM §7.2.2: m_s = 100.021 47 g with u_c = 0.35 mg, written (100.021 47 ± 0.000 35) g.
    assert format_with_uncertainty(100.02147, 0.00035, "g") == "100.02147 ± 0.00035 g"


@pytest.mark.parametrize("value, u, unit, expected", [
    (41.234, 7.42, "nm", "41.2 ± 7.4 nm"),  # two digits in u, value to the same place
    (41.234, 0.236, "nm", "41.23 ± 0.24 nm"),
    (528.1234, 0.0004, "nm", "528.12340 ± 0.00040 nm"),
    (2.31e6, 4.4e5, "", "(2.31 ± 0.44) × 10⁶"),
    (1.907, None, "", "1.907"),
    (None, 1.0, "nm", "—"),
    (1.90718, 0.0, "", "1.907"),
])
def test_significant_figures(value, u, unit, expected):
    assert format_with_uncertainty(value, u, unit) == expected
