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

The page and the report are cached under a digest of the data they show, so the page is
timed twice: "cold" with the cache cleared before every call (every statistic and plot
computed, as after any change to the records) and "warm" (the same data again).  To compare
two versions of the code on one lab, generate once and point both at it::

    .venv/bin/python benchmarks/insight_page.py --db sqlite --scale 0.05 --sqlite-path X
    cd /tmp/old && python /path/to/benchmarks/insight_page.py --reuse --sqlite-path X

(``--reuse`` skips the generator; ``--pg-database`` names the PostgreSQL database.)
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


def _use_own_database(pg_database: str, sqlite_path: str | None) -> None:
    generate_lab.PG_DATABASE = pg_database
    generate_lab.SQLITE_PATH = (Path(sqlite_path).resolve() if sqlite_path
                                else generate_lab.OUT_DIR / "insight.sqlite3")


def _no_cache() -> None:
    from django.core.cache import cache

    cache.clear()


WARMUPS = 2


def _timed(call, repeat: int, before=lambda: None) -> dict:
    for _ in range(WARMUPS):
        call()
    wall, cpu = [], []
    for _ in range(repeat):
        before()
        start, start_cpu = time.perf_counter(), time.process_time()
        call()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    before()
    return {"median_s": round(statistics.median(wall), 3), "max_s": round(max(wall), 3),
            "cpu_median_s": round(statistics.median(cpu), 3), "queries": count_queries(call)}


def measure(db: str, scale: float, repeat: int, reuse: bool = False) -> dict:
    if reuse:
        generate_lab.configure_django(db)
    else:
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
              "insight page, cold": _timed(page("insight"), repeat, _no_cache),
              "insight page, warm": _timed(page("insight"), repeat),
              "joined table": _timed(insight_table, repeat),
              "report (no plots), cold": _timed(insight_report, repeat, _no_cache),
              "stock page (reference)": _timed(page("stock"), repeat)}
    for name in OPERATIONS[:2]:
        result[f"ratio {name}/stock"] = round(
            result[name]["median_s"] / result["stock page (reference)"]["median_s"], 2)
    return result


OPERATIONS = ("insight page, cold", "insight page, warm", "joined table",
              "report (no plots), cold", "stock page (reference)")


def markdown(results: list[dict]) -> str:
    lines = ["| DB | substrates | operation | median s | max s | CPU s | queries | load |",
             "|---|---:|---|---:|---:|---:|---:|---|"]
    for r in results:
        for name in OPERATIONS:
            op = r[name]
            lines.append(f"| {r['db']} | {r['substrates']:,} | {name} | {op['median_s']} | "
                         f"{op['max_s']} | {op['cpu_median_s']} | {op['queries']} | "
                         f"{r['loadavg']} |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", choices=["sqlite", "postgres"], default="sqlite")
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--warmups", type=int, default=WARMUPS)
    parser.add_argument("--scale", type=float, action="append",
                        help=f"lab scale(s) to measure (default {SCALES})")
    parser.add_argument("--reuse", action="store_true",
                        help="measure the lab already in the database (one scale)")
    parser.add_argument("--pg-database", default="sersledger_bench_insight")
    parser.add_argument("--sqlite-path", help="default benchmarks/out/insight.sqlite3")
    parser.add_argument("--out", help="results file (default benchmarks/out/insight-<db>.json)")
    args = parser.parse_args(argv)
    globals()["WARMUPS"] = args.warmups
    _use_own_database(args.pg_database, args.sqlite_path)
    scales = [None] if args.reuse else args.scale or SCALES
    results = [measure(args.db, scale, args.repeat, args.reuse) for scale in scales]
    out = Path(args.out) if args.out else generate_lab.OUT_DIR / f"insight-{args.db}.json"
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(results, indent=2))
    print(markdown(results))
    for name in OPERATIONS[:2]:
        print(f"{name} at {results[-1]['substrates']:,} substrates: "
              f"{results[-1][name]['median_s']} s (target < {TARGET_S} s); "
              f"queries {[r[name]['queries'] for r in results]}")


if __name__ == "__main__":
    main()
