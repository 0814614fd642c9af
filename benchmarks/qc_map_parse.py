"""Benchmark: parse of a big wide map against its analysis, in one process (issue 22).

The goal: reading the map takes at most a quarter of analysing it.  For the maps of
``qc_map_import.py`` (400 and 10,000 points × 1,024 shifts, two decimals; generated there
into benchmarks/out/, not committed), in one process without tracemalloc, after a warm-up
read and analysis: ``--repeat`` times each, CPU (of the process: the compiled parse runs on
two threads; each read after a pause of 0.2 s, in which any thread pool the analysis woke
goes idle) and wall seconds of

* the read from the file's path by the compiled parser (``qc.analysis.map_fastparse``),
* the same read by Apache Arrow's streaming reader (the compiled parser switched off),
* the QC analysis of the map (``analyse_qc_map``, the worker's settings).

The compiled parser's first call is timed apart in fresh processes: once with numba's
on-disk cache (the normal case) and once with an empty cache directory (compilation).
``python benchmarks/qc_map_parse.py [--sizes 400 10000] [--repeat 5]``.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from functools import partial
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
os.environ.setdefault("DJANGO_SETTINGS_MODULE", "benchmarks.settings_import")


def _timed(call, clock=time.process_time) -> tuple[float, float]:
    """(CPU s, wall s) of one call; the process's CPU unless another clock is given."""
    wall, cpu = time.perf_counter(), clock()
    call()
    return clock() - cpu, time.perf_counter() - wall


def _read_into(path: Path, read: list) -> None:
    from qc.analysis.map_columnar import read_map_wide_columnar

    read.append(read_map_wide_columnar(path))


def first_call() -> None:
    """In a fresh process: the compiled parser's first read (compile or cache load)."""
    from qc.analysis.map_columnar import read_map_wide_columnar

    path = ROOT / "benchmarks" / "out" / "map_400.csv"
    cpu, wall = _timed(lambda: read_map_wide_columnar(path))
    print(json.dumps({"cpu_s": cpu, "wall_s": wall}))


def _first_call_s(cache_dir: str | None) -> dict:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    if cache_dir:
        env["NUMBA_CACHE_DIR"] = cache_dir
    done = subprocess.run([sys.executable, __file__, "--first-call"], env=env, check=True,
                          capture_output=True, text=True, cwd=ROOT)
    return json.loads(done.stdout.strip().splitlines()[-1])


def measure(sizes: list[int], repeat: int, counts: str = "decimals") -> dict:
    from benchmarks.qc_map_import import _map_file
    from benchmarks.qc_map_pipeline import SETTINGS
    from qc.analysis import map_columnar
    from qc.analysis.qc_pipeline import analyse_qc_map

    _first_call_s(None)  # fills numba's cache if this code is new
    with tempfile.TemporaryDirectory() as empty:
        result = {"first_call_cached": _first_call_s(None),
                  "first_call_compiling": _first_call_s(empty)}
    compiled, arrow_path = map_columnar.read_wide_rows, (lambda *args: None)
    for points in sizes:
        path = _map_file(points, counts=counts)
        warm = map_columnar.read_map_wide_columnar(path)
        analyse_qc_map(warm.shift_cm1, warm.intensity, **SETTINGS)
        rows: dict[str, list] = {"compiled": [], "arrow": [], "analysis": []}
        for _ in range(repeat):
            for name, reader in (("compiled", compiled), ("arrow", arrow_path)):
                map_columnar.read_wide_rows = reader
                read: list = []
                # The process's CPU (the compiled parse runs on two threads), after a pause
                # in which any thread pool the analysis woke has gone idle.
                time.sleep(0.2)
                rows[name].append(_timed(partial(_read_into, path, read)))
                assert read[0].metadata["reader"].startswith(
                    "columnar (compiled" if name == "compiled" else "columnar (Apache")
            map_columnar.read_wide_rows = compiled
            rows["analysis"].append(_timed(partial(analyse_qc_map, read[0].shift_cm1,
                                                   read[0].intensity, **SETTINGS)))
        result[str(points)] = {"bytes": path.stat().st_size, **rows}
    result["loadavg"] = Path("/proc/loadavg").read_text().split()[:3]
    result["counts"] = counts
    return result


def report(result: dict, sizes: list[int]) -> str:
    lines = ["| map | compiled parse CPU / wall s | Arrow parse CPU / wall s | analysis CPU / "
             "wall s | compiled MB per CPU-s | parse / analysis (CPU, medians) | parse / "
             "analysis (wall, median of the same rounds' ratios) |",
             "|---|---|---|---|---|---|---|"]
    for points in sizes:
        entry = result[str(points)]

        def both(name, entry=entry):
            return (", ".join(f"{c:.3f}" for c, _ in entry[name]) + " / "
                    + ", ".join(f"{w:.3f}" for _, w in entry[name]))

        def median_cpu(name, entry=entry):
            return sorted(c for c, _ in entry[name])[len(entry[name]) // 2]

        rate = entry["bytes"] / 1e6 / median_cpu("compiled")
        wall_ratios = sorted(read[1] / analysis[1]
                             for read, analysis in zip(entry["compiled"], entry["analysis"],
                                                       strict=True))
        lines.append(f"| {points:,} points, {result['counts']} ({entry['bytes'] / 1e6:.0f} MB) | "
                     f"{both('compiled')} | {both('arrow')} | "
                     f"{both('analysis')} | {rate:.0f} | "
                     f"{median_cpu('compiled') / median_cpu('analysis'):.2f} | "
                     f"{wall_ratios[len(wall_ratios) // 2]:.2f} |")
    cached, cold = result["first_call_cached"], result["first_call_compiling"]
    lines.append(f"\nFirst read in a fresh process (400 points): {cached['cpu_s']:.2f} s CPU "
                 f"with numba's cache, {cold['cpu_s']:.2f} s CPU compiling "
                 f"({cold['wall_s']:.2f} s wall). Load average {result['loadavg']}.")
    return "\n".join(lines)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[400, 10_000])
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--counts", choices=["decimals", "integers"], default="decimals",
                        help="counts with two decimals (82 MB at 10,000 points) or whole "
                             "counts (51 MB, the size of issue 22's map)")
    parser.add_argument("--first-call", action="store_true", help=argparse.SUPPRESS)
    options = parser.parse_args()
    if options.first_call:
        first_call()
        return
    result = measure(options.sizes, options.repeat, options.counts)
    print(report(result, options.sizes))


if __name__ == "__main__":
    main()
