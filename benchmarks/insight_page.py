"""Time the insight page on a generated lab of about 1,000 and 5,000 substrates.

Run from the repository root::

    .venv/bin/python benchmarks/insight_page.py --db sqlite
    .venv/bin/python benchmarks/insight_page.py --db postgres

For each scale the lab generator (``generate_lab.py``) fills a database of this benchmark's
own (``benchmarks/out/insight.sqlite3`` or the PostgreSQL database ``sersledger_bench_insight``,
so a run never disturbs ``run_benchmarks.py``'s), then the page is fetched through the
Django test client, logged in, two warm-up calls and ``--repeat`` timed calls; the median
wall-clock and CPU time are reported with the SQL queries of one call.  Beside it, in the same
run: the joined table alone (``insight_table``), the whole report without plots
(``insight_report``), and the stock page as the reference (ratio = insight / stock).
Results go to ``benchmarks/out/insight-<db>.json`` and are printed as a markdown table.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import generate_lab  # noqa: E402
from run_benchmarks import count_queries, loadavg  # noqa: E402

SCALES = (0.01, 0.05)  # 1,000 and 5,000 substrates
TARGET_S = 2.0


def _use_own_database() -> None:
    generate_lab.PG_DATABASE = "sersledger_bench_insight"
    generate_lab.SQLITE_PATH = generate_lab.OUT_DIR / "insight.sqlite3"


def _timed(call, repeat: int) -> dict:
    call()
    call()
    wall, cpu = [], []
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        call()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return {"median_s": round(statistics.median(wall), 3), "max_s": round(max(wall), 3),
            "cpu_median_s": round(statistics.median(cpu), 3), "queries": count_queries(call)}


def measure(db: str, scale: float, repeat: int) -> dict:
    if "django.db" in sys.modules:  # the database is about to be dropped and rebuilt
        from django.db import connections

        connections.close_all()
    generate_lab.main(["--db", db, "--scale", str(scale)])
    from django.contrib.auth.models import User
    from django.db import connection
    from django.test import Client
    from django.urls import reverse

    from insight.selectors import insight_table
    from insight.services import insight_report
    from inventory.models import Substrate

    connection.close()
    client = Client()
    client.force_login(User.objects.get(username="bench01"))

    def page(name):
        def get():
            response = client.get(reverse(name))
            assert response.status_code == 200, response.status_code
        return get

    result = {"db": db, "scale": scale, "substrates": Substrate.objects.count(),
              "loadavg": loadavg(),
              "insight page": _timed(page("insight"), repeat),
              "joined table": _timed(insight_table, repeat),
              "report (no plots)": _timed(insight_report, repeat),
              "stock page (reference)": _timed(page("stock"), repeat)}
    result["ratio insight/stock"] = round(result["insight page"]["median_s"]
                                          / result["stock page (reference)"]["median_s"], 2)
    return result


def markdown(results: list[dict]) -> str:
    lines = ["| DB | substrates | operation | median s | max s | CPU s | queries | load |",
             "|---|---:|---|---:|---:|---:|---:|---|"]
    for r in results:
        for name in ("insight page", "joined table", "report (no plots)",
                     "stock page (reference)"):
            op = r[name]
            lines.append(f"| {r['db']} | {r['substrates']:,} | {name} | {op['median_s']} | "
                         f"{op['max_s']} | {op['cpu_median_s']} | {op['queries']} | "
                         f"{r['loadavg']} |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", choices=["sqlite", "postgres"], default="sqlite")
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--scale", type=float, action="append",
                        help=f"lab scale(s) to measure (default {SCALES})")
    args = parser.parse_args(argv)
    _use_own_database()
    results = [measure(args.db, scale, args.repeat) for scale in args.scale or SCALES]
    out = generate_lab.OUT_DIR / f"insight-{args.db}.json"
    out.write_text(json.dumps(results, indent=2))
    print(markdown(results))
    largest = results[-1]["insight page"]["median_s"]
    print(f"\nInsight page at {results[-1]['substrates']:,} substrates: {largest} s "
          f"(target < {TARGET_S} s); queries {[r['insight page']['queries'] for r in results]}")


if __name__ == "__main__":
    main()
