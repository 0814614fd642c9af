"""Time the log-normal Mie fit of a UV-vis spectrum with miepython's two backends.

Run from the repository root: ``python benchmarks/mie_fit.py [--rounds R]``.  Prints one
markdown table.  The spectrum is synthesised (invented): 20 nm gold, σ_g 1.1, on a 1 nm grid.

Each round starts a fresh Python process per backend (``MIEPYTHON_USE_JIT=1``, the product's
default, and ``=0``, the pure-Python reference) and times in it:

- first fit of the process: importing ``qc.analysis.mie_model``, which does not import
  miepython, then one fit, so the miepython import (and, for the compiled backend, loading
  numba's on-disk cache) and the cross-section table are both inside;
- a fit on a new wavelength grid (0.5 nm steps, 350–800 nm, 901 points): a new table;
- a warm fit on the first grid again (table cached).

Target (issue 9, from the colloid issue): one fit under 2 s.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CHILD = r"""
import json, sys, time
sys.path.insert(0, %(root)r)
import numpy as np
start = time.perf_counter()
from qc.analysis import mie_cross_section, mie_model
def spectrum(step_nm):
    wavelength_nm = np.arange(350.0, 800.0 + step_nm / 2, step_nm)
    rng = np.random.default_rng(1)
    clean = mie_model.synthesize_absorbance("Au", wavelength_nm, median_diameter_nm=20.0,
                                            geometric_sigma=1.1, number_per_mL=5e11)
    return wavelength_nm, clean + rng.normal(0.0, 0.002, wavelength_nm.size)
def fit(step_nm):
    return mie_model.fit_lognormal_mie(*spectrum(step_nm), "Au", fit_range_nm=(350.0, 800.0))
first = fit(1.0)
first_s = time.perf_counter() - start
t = time.perf_counter(); fit(0.5); new_grid_s = time.perf_counter() - t
mie_cross_section.cross_section_tables_clear()
t = time.perf_counter(); fit(1.0); table_s = time.perf_counter() - t
t = time.perf_counter(); fit(1.0); warm_s = time.perf_counter() - t
print(json.dumps({"first_s": first_s, "new_grid_s": new_grid_s, "table_s": table_s,
                  "warm_s": warm_s, "diameter_nm": first.median_diameter_nm}))
"""


def run_child(use_jit: str) -> dict:
    env = {**os.environ, "MIEPYTHON_USE_JIT": use_jit}
    out = subprocess.run([sys.executable, "-c", CHILD % {"root": str(ROOT)}], env=env,
                         check=True, capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    # One untimed process per backend first, so numba's on-disk cache exists (the first run on
    # a machine compiles miepython's functions, about 7 s; reported separately).
    compile_start = time.perf_counter()
    run_child("1")
    compile_s = time.perf_counter() - compile_start
    rows = []
    for _ in range(args.rounds):
        for use_jit in ("1", "0"):
            rows.append((use_jit, run_child(use_jit), os.getloadavg()[0]))
    print(f"Untimed first process (compiled backend; compiles only if no cache): {compile_s:.1f} s")
    print("| backend | first fit of a process (import + table + fit) s | fit on a new grid "
          "(901 points) s | fit on a cleared cache (table + fit) s | warm fit s | "
          "fitted d nm (true 20) | load |")
    print("| --- | --- | --- | --- | --- | --- | --- |")
    for use_jit, r, load in rows:
        name = "compiled (numba)" if use_jit == "1" else "pure Python"
        print(f"| {name} | {r['first_s']:.2f} | {r['new_grid_s']:.2f} | {r['table_s']:.2f} | "
              f"{r['warm_s']:.3f} | {r['diameter_nm']:.1f} | {load:.1f} |")


if __name__ == "__main__":
    main()
