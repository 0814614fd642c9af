"""Time the product's everyday reads on a generated lab, with their query counts.

Run from the repository root after ``benchmarks/generate_lab.py`` for the same ``--db``::

    .venv/bin/python benchmarks/run_benchmarks.py --db sqlite
    .venv/bin/python benchmarks/run_benchmarks.py --db postgres
    .venv/bin/python benchmarks/run_benchmarks.py --report     # markdown from saved results

Each operation is called through the product's own functions (readiness, lineage, expiry
list, pages through the Django test client, logged in), warmed up, then timed ``--repeat``
times with ``time.perf_counter``; the median is reported with the number of SQL queries of
one call (counted by a connection execute wrapper).  A naive lineage walk, one query per node for its edges
and one per record (written here, not in the product), runs on the same records in the same
run and is reported as a ratio.  Results go to ``benchmarks/out/results-<db>-<scale>.json``;
``--report`` prints one markdown table over every saved result, so query counts at two
scales sit side by side.  The API rows are measured only when ``/api/`` resolves.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from collections import deque
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate_lab import OUT_DIR, configure_django

TARGETS_MS = {"readiness": 20.0, "lineage": 50.0, "list": 300.0}


def timed(call, repeat: int) -> dict:
    """Median and spread of ``repeat`` calls after two warm-up calls, and one call's queries.

    The SQL statements of one call are counted with a connection execute wrapper (the test
    client resets ``CaptureQueriesContext``'s log at each request start).
    """
    from django.db import connection

    call()
    call()
    queries = []
    # A wrapper rather than CaptureQueriesContext: the test client resets the query log at
    # each request start, which would hide a page's queries.
    with connection.execute_wrapper(lambda execute, sql, *rest: queries.append(sql)
                                    or execute(sql, *rest)):
        call()
    samples = []
    for _ in range(repeat):
        start = time.perf_counter()
        call()
        samples.append((time.perf_counter() - start) * 1000.0)
    return {"median_ms": round(statistics.median(samples), 3),
            "min_ms": round(min(samples), 3), "max_ms": round(max(samples), 3),
            "queries": len(queries), "repeat": repeat}


def naive_lineage(code: str, direction: str) -> dict:
    """Reference walk: one query per reached node for its edges, one per record fetched."""
    from inventory.codes import record_get
    from inventory.models import LineageEdge

    near, far = ("child_code", "parent_code") if direction == "ancestors" \
        else ("parent_code", "child_code")
    depth, queue, records = {code: 0}, deque([code]), {}
    while queue:
        current = queue.popleft()
        for edge in LineageEdge.objects.filter(**{near: current}):
            nxt = getattr(edge, far)
            if nxt not in depth:
                depth[nxt] = depth[current] + 1
                records[nxt] = record_get(nxt)
                queue.append(nxt)
    return records


def probes() -> dict:
    """The records to ask about, chosen the same way at every scale (newest finished work)."""
    from inventory.models import Dataset, Flag, SphereLot, Status, Substrate

    substrate = Substrate.objects.filter(stage="particles").order_by("-made_on", "-code").first()
    dataset = Dataset.objects.filter(substrates=substrate).order_by("code").first() \
        or Dataset.objects.order_by("-acquired_on", "-code").first()
    # A sphere lot from the middle of the history: a finished lot with all its descendants.
    spheres = SphereLot.objects.order_by("received_on", "code")
    sphere = spheres[spheres.count() // 2]
    return {"substrate": substrate.code, "dataset": dataset.code, "sphere_lot": sphere.code,
            "released_substrates": Substrate.objects.filter(status=Status.RELEASED).count(),
            "open_flags": Flag.objects.filter(state="open").count()}


def measure(repeat: int) -> dict:
    from django.contrib.auth.models import User
    from django.core.paginator import Paginator
    from django.test import Client
    from django.urls import Resolver404, resolve

    from inventory.lineage import record_get_ancestors, record_get_descendants
    from inventory.models import Status, Substrate
    from inventory.readiness import substrate_check_readiness
    from inventory.selectors import records_expiring_within

    chosen = probes()
    client = Client()
    client.force_login(User.objects.order_by("id").first())

    def page(url: str):
        def get():
            response = client.get(url)
            assert response.status_code == 200, (url, response.status_code)
            return response
        return get

    def released_page(number: int):
        def get():
            rows = Substrate.objects.filter(status=Status.RELEASED).order_by("-made_on", "code")
            return list(Paginator(rows, 50).page(number).object_list)
        return get

    deep_page = max(1, chosen["released_substrates"] // 50 // 2)
    sub, ds, sph = chosen["substrate"], chosen["dataset"], chosen["sphere_lot"]
    ops = {
        "readiness (service)": ("readiness", lambda: substrate_check_readiness(sub)),
        "ancestors of a dataset": ("lineage", lambda: record_get_ancestors(ds)),
        "descendants of a sphere lot": ("lineage", lambda: record_get_descendants(sph)),
        "naive ancestors of a dataset": ("naive", lambda: naive_lineage(ds, "ancestors")),
        "naive descendants of a sphere lot": ("naive", lambda: naive_lineage(sph, "descendants")),
        "expiring within 14 days": ("list", lambda: records_expiring_within(14)),
        "released substrates, page 1 of 50": ("list", released_page(1)),
        f"released substrates, page {deep_page} of 50": ("list", released_page(deep_page)),
        "home page (logged in)": ("list", page("/")),
        "readiness page": ("list", page(f"/check/?code={sub}")),
        "record page of the substrate": ("list", page(f"/r/{sub}/")),
    }
    try:
        resolve("/api/")
        api = True
    except Resolver404:
        api = False
    results = {}
    for name, (kind, call) in ops.items():
        results[name] = {"kind": kind, **timed(call, repeat)}
        print(f"  {name:<40} {results[name]['median_ms']:9.2f} ms "
              f"{results[name]['queries']:5d} queries", flush=True)
    sizes = {"ancestors": len(record_get_ancestors(ds).depth),
             "ancestor_depth": max(record_get_ancestors(ds).depth.values()),
             "descendants": len(record_get_descendants(sph).depth),
             "expiring_rows": len(records_expiring_within(14))}
    return {"probes": chosen, "sizes": sizes, "api_present": api, "operations": results}


def machine() -> dict:
    import os
    import platform

    cpu = next((line.split(":", 1)[1].strip() for line in
                Path("/proc/cpuinfo").read_text().splitlines() if line.startswith("model name")),
               platform.processor())
    mem_kb = next(int(line.split()[1]) for line in Path("/proc/meminfo").read_text().splitlines()
                  if line.startswith("MemTotal"))
    return {"nproc": os.cpu_count(), "memory_GiB": round(mem_kb / 2**20, 1), "cpu": cpu,
            "python": platform.python_version()}


def run(db: str, repeat: int) -> Path:
    configure_django(db)
    from django.db import connection

    summary = json.loads((OUT_DIR / f"generate-{db}.json").read_text())
    print(f"Measuring {db} at scale {summary['scale']} ({connection.vendor} "
          f"{connection.Database.__name__})", flush=True)
    result = {"db": db, "scale": summary["scale"], "generation": summary,
              "machine": machine(), "measured_at": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime()),
              **measure(repeat)}
    path = OUT_DIR / f"results-{db}-{summary['scale']:g}.json"
    path.write_text(json.dumps(result, indent=2))
    print(f"Saved {path}")
    return path


def _verdict(kind: str, median_ms: float) -> str:
    target = TARGETS_MS.get(kind)
    if target is None:
        return ""
    return f"< {target:g} ms: {'met' if median_ms < target else 'MISSED'}"


def report() -> str:
    """One markdown table per database: each operation's median and queries at every scale."""
    results = [json.loads(p.read_text()) for p in sorted(OUT_DIR.glob("results-*.json"))]
    lines = []
    for db in ("sqlite", "postgres"):
        runs = sorted((r for r in results if r["db"] == db), key=lambda r: r["scale"])
        if not runs:
            continue
        big = runs[-1]
        header = " | ".join(f"scale {r['scale']:g}: ms / queries" for r in runs)
        lines += [f"### {db}", "", f"| operation | {header} | target (largest scale) |",
                  "|---|" + "---|" * len(runs) + "---|"]
        for name, op in big["operations"].items():
            cells = []
            for r in runs:
                other = r["operations"].get(name) or next(
                    (v for k, v in r["operations"].items()
                     if k.split(",")[0] == name.split(",")[0]), None)
                cells.append(f"{other['median_ms']:.2f} / {other['queries']}" if other else "–")
            lines.append(f"| {name} | {' | '.join(cells)} | {_verdict(op['kind'], op['median_ms'])} |")
        ops = big["operations"]
        for label in ("ancestors of a dataset", "descendants of a sphere lot"):
            ratio = ops[f"naive {label}"]["median_ms"] / ops[label]["median_ms"]
            lines.append(f"\nNaive walk / product, {label}: {ratio:.1f}x slower, "
                         f"{ops[f'naive {label}']['queries']} vs {ops[label]['queries']} queries "
                         f"(scale {big['scale']:g}).")
        lines += ["", f"Sizes at scale {big['scale']:g}: {big['sizes']}; probes: {big['probes']}.",
                  (f"Generation at scale {big['scale']:g}: {big['generation']['seconds_total']} s "
                  f"for {sum(big['generation']['rows'].values()):,} rows."), ""]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", choices=["sqlite", "postgres"])
    parser.add_argument("--repeat", type=int, default=25)
    parser.add_argument("--report", action="store_true", help="print markdown from saved results")
    args = parser.parse_args(argv)
    if args.report:
        print(report())
    elif args.db:
        run(args.db, args.repeat)
    else:
        parser.error("give --db or --report")


if __name__ == "__main__":
    main()
