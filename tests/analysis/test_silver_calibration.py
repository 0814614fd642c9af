"""Silver calibration tables: interpolation, refusals, and the Mie-computed table."""

import numpy as np
import pytest
from scipy import constants

from qc.analysis import silver_calibration as sc
from qc.analysis.errors import AnalysisInputError

# An invented lab table (e.g. as a lab would enter from its own TEM sizing); not data.
LAB_TABLE = sc.CalibrationTable(
    peak_nm=(395.0, 400.0, 410.0, 420.0),
    diameter_nm=(30.0, 40.0, 55.0, 65.0),
    extinction_M1cm1=(3e10, 5e10, 8e10, 1e11),
    provenance="invented test table",
)


def test_interpolation_hits_table_points_and_stays_monotone():
    assert sc.diameter_from_peak(LAB_TABLE, 400.0).value == pytest.approx(40.0)
    inside = [sc.diameter_from_peak(LAB_TABLE, p).value for p in np.linspace(395, 420, 26)]
    assert np.all(np.diff(inside) > 0)  # PCHIP preserves monotonicity (Fritsch & Carlson 1980)


def test_refuses_outside_table():
    result = sc.diameter_from_peak(LAB_TABLE, 430.0)
    assert result.value is None and not result.within_range and "outside" in result.note
    assert sc.molar_concentration_M(LAB_TABLE, 390.0, 1.0).value is None


def test_concentration_by_beer_lambert():
    # Beer–Lambert: c = A/(ε·L), L = 1 cm, at a table point.
    assert sc.molar_concentration_M(LAB_TABLE, 410.0, 0.8).value == pytest.approx(0.8 / 8e10)


def test_molar_extinction_from_cross_section():
    # ε = N_A·C/(1000·ln10), C in cm² (CODATA N_A from scipy.constants).
    assert sc.molar_extinction_M1cm1(1000.0) == pytest.approx(
        constants.Avogadro * 1000e-14 / (1000 * np.log(10))
    )


def test_mie_table_is_plausible():
    table = sc.silver_table_from_mie()
    # Common practice: 20–90 nm citrate Ag peaks between ~390 and ~460 nm, red-shifting with size.
    assert 383 < table.peak_nm[0] < 395 and 440 < table.peak_nm[-1] < 470
    assert "Johnson & Christy" in table.provenance
    # Magnitude check (common practice): ~40 nm Ag has ε_peak of order 1e10–1e11 M⁻¹cm⁻¹.
    assert 1e10 < table.extinction_M1cm1[2] < 1e11


@pytest.mark.parametrize(
    "kwargs, field",
    [
        (
            {
                "peak_nm": (400, 395, 410),
                "diameter_nm": (30, 40, 50),
                "extinction_M1cm1": (1, 2, 3),
            },
            "peak_nm",
        ),
        (
            {
                "peak_nm": (395, 400, 410),
                "diameter_nm": (30, 30, 50),
                "extinction_M1cm1": (1, 2, 3),
            },
            "diameter_nm",
        ),
        (
            {"peak_nm": (395, 400, 410), "diameter_nm": (30, 40), "extinction_M1cm1": (1, 2, 3)},
            "diameter_nm",
        ),
        (
            {
                "peak_nm": (395, 400, 410),
                "diameter_nm": (30, 40, 50),
                "extinction_M1cm1": (1, -2, 3),
            },
            "extinction_M1cm1",
        ),
    ],
)
def test_bad_tables_are_refused(kwargs, field):
    with pytest.raises(AnalysisInputError) as error:
        sc.CalibrationTable(provenance="test", **kwargs)
    assert error.value.field == field
    with pytest.raises(AnalysisInputError):
        sc.CalibrationTable((395, 400, 410), (30, 40, 50), (1, 2, 3), provenance=" ")


def test_built_in_mie_table_is_marked_as_not_independent():
    # A table computed with the project's own Mie model cannot check a Mie fit; a lab table
    # (its own electron-microscopy sizing) can.
    assert sc.silver_table_from_mie().independent_of_mie is False
    assert LAB_TABLE.independent_of_mie is True
