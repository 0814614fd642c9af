"""Time one full Mie fit of a UV-vis spectrum: cold (table build included) and warm.

Run from the repository root: ``.venv/bin/python benchmarks/mie_fit.py``.  Prints one
markdown table.  The spectrum is synthesised (invented) on a 1 nm grid, 350–800 nm.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from qc.analysis import mie_model  # noqa: E402


def _timed_fit(wavelength_nm, absorbance):
    start = time.perf_counter()
    fit = mie_model.fit_lognormal_mie(wavelength_nm, absorbance, "Au", fit_range_nm=(350.0, 800.0))
    return time.perf_counter() - start, fit


def main() -> None:
    wavelength_nm = np.arange(350.0, 801.0, 1.0)
    rng = np.random.default_rng(1)
    absorbance = mie_model.synthesize_absorbance(
        "Au", wavelength_nm, median_diameter_nm=20.0, geometric_sigma=1.1, number_per_mL=5e11
    ) + rng.normal(0.0, 0.002, wavelength_nm.size)
    # Forget the table built while synthesising, so the first fit pays for it.
    mie_model._cross_section_spline.cache_clear()
    cold_s, fit = _timed_fit(wavelength_nm, absorbance)
    warm_s, _ = _timed_fit(wavelength_nm, absorbance)
    print("| benchmark | points | cold s (incl. table) | warm s | fitted d nm (true 20) |")
    print("| --- | --- | --- | --- | --- |")
    print(
        f"| Mie log-normal fit, Au | {wavelength_nm.size} | {cold_s:.2f} | {warm_s:.3f} | "
        f"{fit.median_diameter_nm:.1f} |"
    )


if __name__ == "__main__":
    main()
