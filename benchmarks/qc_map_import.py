"""Benchmark: a big QC map from upload to judged result, and its plot (issue 22's table).

For invented maps of 400 (20 × 20), 10,000 (100 × 100) and 40,000 (200 × 200)
points × 1,024 shifts, written as wide CSV with two decimals (about 5 MB per 1,000 points),
measured in one run on the demo laboratory (own SQLite database in benchmarks/out/):

* upload response: the API POST (multipart parse, upload streamed to a temporary file,
  every check, the file stored, the task queued) until the 202;
* time to result: the upload plus the worker's run (``qc_import_run``: read, analyse, judge,
  store), the worker started beforehand as in a lab (its start-up is not counted);
* peak memory: the worker process's peak resident set (VmHWM, and ``ru_maxrss``), whole and
  above its resident set after start-up, and the traced Python/numpy peak (tracemalloc),
  next to the map's float64 array; the parse and analysis stages timed apart;
* plot: the Raman plot of the stored map (first request renders it, then the server's cache,
  then a browser revalidating with its ETag) against the API detail of the same measurement.

Also, in the same run, the map pipeline against the per-spectrum pybaselines loop
(``qc_map_pipeline.py --rounds 2``) and the memory-bandwidth floor: five passes (reads) over a
10,000 × 1,024 float64 array.
``python benchmarks/qc_map_import.py [--sizes 400 10000 40000]``; results in
benchmarks/out/qc_map_import.json.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import time
from functools import partial
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "benchmarks" / "out"
sys.path.insert(0, str(ROOT))
os.environ["DJANGO_SETTINGS_MODULE"] = "benchmarks.settings_import"

TODAY = {  # issue 22's "today" column (10,000-point map), for the table
    "upload": "2–3 s, blocks", "result": "2–3 s", "memory": "690–850 MiB",
    "plot": "1.2–2.1 s (≈ 40× API detail)", "limit": "≈ 52 MB",
}
GRID = {400: 20, 10_000: 100, 40_000: 200}


def _map_file(points: int, *, counts: str = "decimals") -> Path:
    """The invented map of ``points`` spectra: counts with two decimals (``decimals``, about
    8.2 MB per 1,000 points) or whole counts as a CCD reads them out (``integers``, about
    5.1 MB per 1,000 points: the size of issue 22's 51 MB map)."""
    path = OUT / (f"map_{points}.csv" if counts == "decimals" else f"map_{points}_{counts}.csv")
    if path.exists():
        return path
    from benchmarks.qc_map_pipeline import synthetic_map

    side = GRID[points]
    shift, intensity = synthetic_map(side, side, 1024, seed=points)
    ys, xs = np.divmod(np.arange(points), side)
    with path.open("w") as handle:
        handle.write("x_um,y_um," + ",".join(f"{s:.2f}" for s in shift) + "\n")
        if counts == "decimals":
            block = np.column_stack([xs * 2.0, ys * 2.0, intensity + 0.25])
            np.savetxt(handle, block, fmt="%.2f", delimiter=",")
        else:
            block = np.column_stack([xs * 2, ys * 2, np.rint(intensity)]).astype(np.int64)
            np.savetxt(handle, block, fmt="%d", delimiter=",")
    return path


def _memory_floor_s() -> float:
    """Best of three: five read passes over a 10,000 × 1,024 float64 array (82 MB)."""
    array = np.random.default_rng(0).random((10_000, 1024))
    best = float("inf")
    for _ in range(3):
        start = time.perf_counter()
        for _ in range(5):
            array.sum()
        best = min(best, time.perf_counter() - start)
    return best


def _status_kib(name: str) -> int:
    """A memory figure of this process from /proc/self/status (VmRSS now, VmHWM peak)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith(name + ":"):
            return int(line.split()[1])
    raise KeyError(name)


def work(pending_id: str) -> None:
    """The worker side, in its own process: one import, timed, with its peak memory."""
    import tracemalloc

    import django

    django.setup()
    from benchmarks.qc_map_pipeline import SETTINGS, synthetic_map
    from qc.analysis.qc_pipeline import analyse_qc_map
    from qc.analysis.readers import read_spectrum_or_map
    from qc.services import background
    from qc.services.background import qc_import_run

    # A running worker has its compiled kernels and the CSV reader loaded: warm them first.
    analyse_qc_map(*synthetic_map(4, 4, 1024), **SETTINGS)
    read_spectrum_or_map(_map_file(400).read_bytes(), "map_400.csv")
    baseline_kib = _status_kib("VmRSS")
    reported = background._report
    stages: dict[str, tuple[float, float]] = {}

    def timed_report(pending, worker, state):  # when each stage begins (wall, CPU)
        stages[state] = (time.perf_counter(), time.process_time())
        reported(pending, worker, state)

    background._report = timed_report
    tracemalloc.start()
    start, start_cpu = time.perf_counter(), time.process_time()
    code = qc_import_run(pending_id)
    seconds, cpu_s = time.perf_counter() - start, time.process_time() - start_cpu
    traced = tracemalloc.get_traced_memory()[1]
    peak_kib = _status_kib("VmHWM")  # high-water mark; the warm-up maps are far smaller
    usage = resource.getrusage(resource.RUSAGE_SELF)
    print(json.dumps({"code": code, "seconds": seconds, "baseline_mib": baseline_kib / 1024,
                      "peak_mib": peak_kib / 1024, "traced_mib": traced / 2 ** 20,
                      "maxrss_mib": usage.ru_maxrss / 1024,
                      "cpu_s": cpu_s, "loadavg": Path("/proc/loadavg").read_text().split()[:3],
                      "parse_s": stages["analysing"][0] - stages["parsing"][0],
                      "analyse_s": stages["judging"][0] - stages["analysing"][0],
                      "parse_cpu_s": stages["analysing"][1] - stages["parsing"][1],
                      "analyse_cpu_s": stages["judging"][1] - stages["analysing"][1]}))


def _median_ms(call, repeat: int = 7) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        call()
        times.append((time.perf_counter() - start) * 1000)
    return statistics.median(times)


def measure(sizes: list[int]) -> dict:
    import django

    OUT.mkdir(exist_ok=True)
    (OUT / "import.sqlite3").unlink(missing_ok=True)
    django.setup()
    from django.core.management import call_command
    from django.test import Client
    from knox.models import AuthToken
    from rest_framework.test import APIClient

    from inventory.models import Substrate
    from qc.models import QcMeasurement, ReferenceMeasurement

    call_command("migrate", verbosity=0)
    call_command("load_demo", verbosity=0)
    from django.contrib.auth import get_user_model

    maker = get_user_model().objects.get(username="rin.okafor")
    api = APIClient()
    api.credentials(HTTP_AUTHORIZATION=f"Token {AuthToken.objects.create(user=maker)[1]}")
    pages = Client()
    pages.force_login(maker)
    reference = ReferenceMeasurement.objects.order_by("id").first()
    lot = reference.analyte_lot
    substrate = Substrate.objects.get(code="SUB-00003")
    rows = []
    for points in sizes:
        path = _map_file(points)
        with path.open("rb") as handle:
            start = time.perf_counter()
            response = api.post("/api/v1/qc-measurements/", {
                "substrate": substrate.code, "analyte_lot": lot.code,
                "reference": reference.code, "laser_nm": 785, "power_mW": 2,
                "integration_s": 1, "raw_file": handle}, format="multipart")
            upload_s = time.perf_counter() - start
        assert response.status_code == 202, response.content[:400]
        pending_id = response.json()["id"]
        worker = subprocess.run([sys.executable, __file__, "--work", pending_id],
                                capture_output=True, text=True, check=True)
        done = json.loads(worker.stdout.strip().splitlines()[-1])
        measurement = QcMeasurement.objects.get(code=done["code"])
        detail_url = f"/api/v1/qc-measurements/{measurement.code}/"
        detail_ms = _median_ms(partial(api.get, detail_url))
        plot_url = f"/plots/raman/{measurement.code}.svg"
        start = time.perf_counter()
        first = pages.get(plot_url)
        plot_first_ms = (time.perf_counter() - start) * 1000
        plot_cached_ms = _median_ms(partial(pages.get, plot_url))
        plot_304_ms = _median_ms(partial(pages.get, plot_url, HTTP_IF_NONE_MATCH=first["ETag"]))
        array_mib = points * 1024 * 8 / 2 ** 20
        rows.append({
            "points": points, "file_mb": path.stat().st_size / 1e6, "upload_s": upload_s,
            "worker_s": done["seconds"], "result_s": upload_s + done["seconds"],
            "parse_s": done["parse_s"], "analyse_s": done["analyse_s"],
            "parse_cpu_s": done["parse_cpu_s"], "analyse_cpu_s": done["analyse_cpu_s"],
            "worker_cpu_s": done["cpu_s"], "worker_loadavg": done["loadavg"],
            "peak_above_start_mib": done["peak_mib"] - done["baseline_mib"],
            "worker_peak_rss_mib": done["peak_mib"], "traced_mib": done["traced_mib"],
            "array_float64_mib": array_mib, "api_detail_ms": detail_ms,
            "plot_first_ms": plot_first_ms, "plot_cached_ms": plot_cached_ms,
            "plot_304_ms": plot_304_ms, "passed": measurement.passed,
            "rsd_percent": measurement.rsd_percent})
        print(json.dumps(rows[-1]), flush=True)
    load_before = Path("/proc/loadavg").read_text().split()[:3]
    pipeline = subprocess.run([sys.executable, str(ROOT / "benchmarks" / "qc_map_pipeline.py"),
                               "--rounds", "2"], capture_output=True, text=True, check=True)
    print(pipeline.stdout, flush=True)
    return {"rows": rows, "memory_floor_5_passes_s": _memory_floor_s(),
            "loadavg": Path("/proc/loadavg").read_text().split()[:3],
            "loadavg_before_pipeline": load_before, "pipeline_vs_loop": pipeline.stdout,
            "when": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime()),
            "max_upload_mb": 500}


def report(result: dict) -> str:
    lines = ["| map | file | upload response | time to result (worker) | parse / analysis | "
             "worker peak: whole process, above start (traced) / float64 array | API detail | "
             "plot: first / cached / 304 |",
             "|---|---|---|---|---|---|---|---|"]
    for r in result["rows"]:
        lines.append(
            f"| {r['points']:,} points | {r['file_mb']:.0f} MB | {r['upload_s']:.2f} s | "
            f"{r['result_s']:.2f} s ({r['worker_s']:.2f} s) | {r['parse_s']:.2f} / "
            f"{r['analyse_s']:.2f} s | {r['worker_peak_rss_mib']:.0f} MiB, "
            f"{r['peak_above_start_mib']:.0f} MiB ({r['traced_mib']:.0f}) / "
            f"{r['array_float64_mib']:.0f} MiB | "
            f"{r['api_detail_ms']:.1f} ms | {r['plot_first_ms']:.0f} / "
            f"{r['plot_cached_ms']:.1f} / {r['plot_304_ms']:.1f} ms |")
    lines.append("\n" + result["pipeline_vs_loop"])
    lines.append(f"\nMemory-bandwidth floor (five passes over 10,000 × 1,024 float64): "
                 f"{result['memory_floor_5_passes_s'] * 1000:.0f} ms; load "
                 f"{' '.join(result['loadavg'])} at {result['when']}.")
    return "\n".join(lines)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[400, 10_000, 40_000],
                        choices=sorted(GRID), help="map sizes in points")
    parser.add_argument("--work", help=argparse.SUPPRESS)
    arguments = parser.parse_args()
    if arguments.work:
        work(arguments.work)
        return
    result = measure(arguments.sizes)
    (OUT / "qc_map_import.json").write_text(json.dumps(result, indent=2))
    print(report(result))


if __name__ == "__main__":
    main()
