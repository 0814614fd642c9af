"""Time the product's everyday reads on a generated lab, with their query counts.

Run from the repository root after ``benchmarks/generate_lab.py`` for the same ``--db``::

    .venv/bin/python benchmarks/run_benchmarks.py --db sqlite
    .venv/bin/python benchmarks/run_benchmarks.py --db postgres
    .venv/bin/python benchmarks/run_benchmarks.py --report     # markdown from saved results

Each operation is called through the product's own functions (readiness, lineage, expiry list,
pages through the Django test client, logged in), warmed up, then timed ``--repeat`` times with
``time.perf_counter``; the median is reported with the number of SQL queries of one call
(counted by a connection execute wrapper).  A naive lineage walk, one query per node for its
edges and one per record (written here, not in the product), runs on the same records in the
same run and is reported as a ratio.  Results go to ``benchmarks/out/results-<db>-<scale>.json``;
``--report`` prints one markdown table over every saved result, so query counts at two scales
sit side by side.  The API rows are measured only when ``/api/`` resolves.
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from collections import deque
from itertools import pairwise
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate_lab import OUT_DIR, configure_django

# Issue targets at the largest scale; API requests are held to the list-page target.
TARGETS_MS = {"readiness": 20.0, "lineage": 50.0, "list": 300.0, "api": 300.0}


def count_queries(call) -> int:
    """SQL statements of one call, counted by a connection execute wrapper.

    A wrapper rather than CaptureQueriesContext: the test client resets the query log at each
    request start, which would hide a page's queries.
    """
    from django.db import connection

    queries = []
    with connection.execute_wrapper(lambda execute, sql, *rest: queries.append(sql)
                                    or execute(sql, *rest)):
        call()
    return len(queries)


def timed(call, repeat: int) -> dict:
    """Median and spread of ``repeat`` calls after two warm-up calls, and one call's queries.

    Beside the wall-clock time, the median CPU time of this process per call: on a shared
    machine it hardly grows with other people's load, while the wall clock does (it excludes
    the PostgreSQL server's own work, which runs in another process).
    """
    call()
    call()
    queries = count_queries(call)
    samples, cpu = [], []
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        call()
        samples.append((time.perf_counter() - start) * 1000.0)
        cpu.append((time.process_time() - start_cpu) * 1000.0)
    return {"median_ms": round(statistics.median(samples), 3),
            "min_ms": round(min(samples), 3), "max_ms": round(max(samples), 3),
            "cpu_ms": round(statistics.median(cpu), 3), "queries": queries, "repeat": repeat}


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
            "substrates": Substrate.objects.count(),
            "released_substrates": Substrate.objects.filter(status=Status.RELEASED).count(),
            "open_flags": Flag.objects.filter(state="open").count()}


def substrate_list_cursor(rows_before: int) -> str:
    """The API's own cursor for the substrate list page that starts after ``rows_before`` rows
    (newest first), as a client following ``next`` that far would hold it."""
    from inventory.api.pagination import encode_cursor, ordering_keys
    from inventory.models import Substrate

    newest_first = Substrate.objects.order_by("-id").values_list("id", flat=True)
    last_before = newest_first[max(0, rows_before - 1)]
    return encode_cursor(ordering_keys(Substrate, ["-id"]), [last_before])


def _client(token: str | None = None, user=None):
    """A test client logged in as ``user`` (pages) or carrying an API ``token``."""
    from django.test import Client

    client = Client(headers={"authorization": f"Token {token}"} if token else None)
    if user is not None:
        client.force_login(user)
    return client


def _url(name: str, *args, query: str = "") -> str | None:
    """The path of a named page, or None while no such page exists (reported as absent)."""
    from django.urls import NoReverseMatch, reverse

    try:
        return reverse(name, args=args) + query
    except NoReverseMatch:
        return None


def _api_path(path: str) -> str | None:
    """``path`` if the API answers it (it resolves), else None (reported as absent)."""
    from django.urls import Resolver404, resolve

    try:
        resolve(path.split("?")[0])
        return path
    except Resolver404:
        return None


def _get(client, path: str):
    def get():
        response = client.get(path)
        if response.status_code != 200:
            raise PageFailed(f"GET {path} answered HTTP {response.status_code}")
        return response
    return get


class PageFailed(Exception):
    """A page or API call that exists but did not answer 200: recorded, exit status 1."""


def operations(chosen: dict) -> dict:
    """Every measured operation: name -> (kind, callable or None when the URL is absent)."""
    from django.contrib.auth.models import User
    from django.core.paginator import Paginator
    from knox.models import AuthToken

    from inventory.lineage import record_get_ancestors, record_get_descendants
    from inventory.models import Status, Substrate
    from inventory.readiness import substrate_check_readiness
    from inventory.selectors import records_expiring_within

    user = User.objects.get(username="bench01")
    pages = _client(user=user)
    api = _client(token=AuthToken.objects.create(user=user)[1])

    def released_page(number: int):
        def get():
            rows = Substrate.objects.filter(status=Status.RELEASED).order_by("-made_on", "code")
            return list(Paginator(rows, 50).page(number).object_list)
        return get

    def page(path: str | None):
        return _get(pages, path) if path else None

    def api_get(path: str):
        found = _api_path(path)
        return _get(api, found) if found else None

    deep_page = max(1, chosen["released_substrates"] // 50 // 2)
    middle = substrate_list_cursor(chosen["substrates"] // 2)
    sub, ds, sph = chosen["substrate"], chosen["dataset"], chosen["sphere_lot"]
    return {
        "readiness (service)": ("readiness", lambda: substrate_check_readiness(sub)),
        "ancestors of a dataset": ("lineage", lambda: record_get_ancestors(ds)),
        "descendants of a sphere lot": ("lineage", lambda: record_get_descendants(sph)),
        "naive ancestors of a dataset": ("naive", lambda: naive_lineage(ds, "ancestors")),
        "naive descendants of a sphere lot": ("naive", lambda: naive_lineage(sph, "descendants")),
        "expiring within 14 days": ("list", lambda: records_expiring_within(14)),
        "released substrates, page 1 of 50": ("list", released_page(1)),
        f"released substrates, page {deep_page} of 50": ("list", released_page(deep_page)),
        "home page (dashboard)": ("list", page(_url("home"))),
        "stock page": ("list", page(_url("stock"))),
        "review page (QC queue)": ("list", page(_url("review"))),
        "readiness page": ("list", page(_url("readiness", query=f"?code={sub}"))),
        "record page of the substrate": ("list", page(_url("record", sub))),
        "API substrate detail": ("api", api_get(f"/api/v1/substrates/{sub}/")),
        "API substrate readiness": ("readiness", api_get(f"/api/v1/substrates/{sub}/readiness/")),
        "API substrate list, first page": ("api", api_get("/api/v1/substrates/")),
        "API substrate list, middle page (cursor)": (
            "api", api_get(f"/api/v1/substrates/?cursor={middle}")),
        "API substrates filtered by status=released": (
            "api", api_get("/api/v1/substrates/?status=released")),
        "API ancestors of a dataset": (
            "api", api_get(f"/api/v1/records/{ds}/lineage/?direction=ancestors")),
        "API expiring within 14 days": ("api", api_get("/api/v1/expiring/?days=14")),
    }


def depth_ladder(dataset: str) -> list[dict]:
    """Ancestors of one record at each depth of the dataset's chain, with their query counts.

    The lineage query count should be one for the edges plus one per record kind reached;
    ``queries - kinds`` must therefore be the same at every depth (checked by ``compare``).
    """
    from inventory.codes import prefix_of
    from inventory.lineage import record_get_ancestors

    top = record_get_ancestors(dataset)
    by_depth = {}
    for code in top.codes():
        by_depth.setdefault(top.depth[code], code)
    ladder = []
    for code in [dataset, *by_depth.values()]:
        lineage = record_get_ancestors(code)
        queries = count_queries(lambda code=code: record_get_ancestors(code))
        ladder.append({"code": code, "depth": max(lineage.depth.values(), default=0),
                       "kinds": len({prefix_of(c) for c in lineage.depth}), "queries": queries})
    return ladder


def measure(repeat: int) -> dict:
    from inventory.lineage import record_get_ancestors, record_get_descendants
    from inventory.selectors import records_expiring_within

    chosen = probes()
    results, failures = {}, []
    for name, (kind, call) in operations(chosen).items():
        if call is None:
            results[name] = {"kind": kind, "absent": True}
            print(f"  {name:<44} absent (no such page or API route yet)", flush=True)
            continue
        try:
            results[name] = {"kind": kind, **timed(call, repeat)}
        except PageFailed as failure:
            failures.append(str(failure))
            results[name] = {"kind": kind, "failed": str(failure)}
            print(f"  {name:<44} FAILED: {failure}", flush=True)
            continue
        print(f"  {name:<44} {results[name]['median_ms']:9.2f} ms "
              f"{results[name]['cpu_ms']:9.2f} CPU ms {results[name]['queries']:5d} queries",
              flush=True)
    sizes = {"ancestors": len(record_get_ancestors(chosen["dataset"]).depth),
             "ancestor_depth": max(record_get_ancestors(chosen["dataset"]).depth.values()),
             "descendants": len(record_get_descendants(chosen["sphere_lot"]).depth),
             "expiring_rows": len(records_expiring_within(14))}
    return {"probes": chosen, "sizes": sizes, "operations": results, "failures": failures,
            "depth_ladder": depth_ladder(chosen["dataset"])}


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


def loadavg() -> str:
    return " ".join(Path("/proc/loadavg").read_text().split()[:3])


def run(db: str, repeat: int) -> list[str]:
    """Measure, save, and return the problems: failed calls and query counts that grow."""
    configure_django(db)
    from django.db import connection

    summary = json.loads((OUT_DIR / f"generate-{db}.json").read_text())
    print(f"Measuring {db} at scale {summary['scale']} ({connection.vendor} "
          f"{connection.Database.__name__}), load {loadavg()}", flush=True)
    result = {"db": db, "scale": summary["scale"], "generation": summary,
              "machine": machine(), "loadavg_before": loadavg(),
              "measured_at": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime()),
              **measure(repeat), "loadavg_after": loadavg()}
    path = OUT_DIR / f"results-{db}-{summary['scale']:g}.json"
    path.write_text(json.dumps(result, indent=2))
    print(f"Saved {path}; load {result['loadavg_after']}")
    return result["failures"] + compare(saved_results())


def saved_results() -> list[dict]:
    return [json.loads(p.read_text()) for p in sorted(OUT_DIR.glob("results-*.json"))]


def _same_operation(operations: dict, name: str) -> dict | None:
    """``name`` in another run, or the same family (``page 1`` for ``page 44``) if absent."""
    return operations.get(name) or next(
        (v for k, v in operations.items() if k.split(",")[0] == name.split(",")[0]), None)


def compare(results: list[dict]) -> list[str]:
    """Query counts that grow with data size (between saved scales) or with lineage depth.

    Naive walks are the reference and are expected to grow; every product operation must
    issue no more queries at the larger scale than at the smaller, and the lineage query
    count minus the record kinds reached must be the same at every depth.
    """
    problems = []
    for db in ("sqlite", "postgres"):
        runs = sorted((r for r in results if r["db"] == db), key=lambda r: r["scale"])
        for small, big in pairwise(runs):
            for name, op in big["operations"].items():
                other = _same_operation(small["operations"], name)
                if op["kind"] == "naive" or "queries" not in op or not other \
                        or "queries" not in other:
                    continue
                if op["queries"] > other["queries"]:
                    problems.append(f"{db}: {name} issues {op['queries']} queries at scale "
                                    f"{big['scale']:g} but {other['queries']} at "
                                    f"{small['scale']:g}")
        for r in runs:
            extra = {step["queries"] - step["kinds"] for step in r.get("depth_ladder", [])}
            if len(extra) > 1:
                problems.append(f"{db} scale {r['scale']:g}: lineage queries beyond one per "
                                f"record kind vary with depth: {r['depth_ladder']}")
    return problems


def _verdict(kind: str, op: dict) -> str:
    target = TARGETS_MS.get(kind)
    if target is None or "median_ms" not in op:
        return ""
    return f"< {target:g} ms: {'met' if op['median_ms'] < target else 'MISSED'}"


def _cell(op: dict | None) -> str:
    if op is None or op.get("absent"):
        return "not measured (absent)"
    if "failed" in op:
        return f"FAILED ({op['failed']})"
    cpu = f" ({op['cpu_ms']:.1f} CPU)" if "cpu_ms" in op else ""
    return f"{op['median_ms']:.2f}{cpu} / {op['queries']}"


def report() -> str:
    """One markdown table per database: each operation's median and queries at every scale."""
    results = saved_results()
    lines = []
    for db in ("sqlite", "postgres"):
        runs = sorted((r for r in results if r["db"] == db), key=lambda r: r["scale"])
        if not runs:
            continue
        big = runs[-1]
        header = " | ".join(f"scale {r['scale']:g}: ms (CPU ms) / queries" for r in runs)
        lines += [f"#### {db}", "", f"| operation | {header} | target (largest scale) |",
                  "|---|" + "---|" * len(runs) + "---|"]
        for name, op in big["operations"].items():
            cells = " | ".join(_cell(_same_operation(r["operations"], name)) for r in runs)
            lines.append(f"| {name} | {cells} | {_verdict(op['kind'], op)} |")
        ops = big["operations"]
        for label in ("ancestors of a dataset", "descendants of a sphere lot"):
            ratio = ops[f"naive {label}"]["median_ms"] / ops[label]["median_ms"]
            lines.append(f"\nNaive walk / product, {label}: {ratio:.1f}x slower, "
                         f"{ops[f'naive {label}']['queries']} vs {ops[label]['queries']} queries "
                         f"(scale {big['scale']:g}).")
        ladder = ", ".join(f"depth {s['depth']}: {s['queries']} queries / {s['kinds']} kinds"
                           for s in sorted(big["depth_ladder"], key=lambda s: -s["depth"]))
        lines += ["", f"Lineage queries by depth (scale {big['scale']:g}): {ladder}.", ""]
        for r in runs:
            lines.append(f"- scale {r['scale']:g}: measured {r['measured_at']}, load "
                         f"{r.get('loadavg_before', '?')} → {r.get('loadavg_after', '?')} "
                         f"(/proc/loadavg 1, 5, 15 min)")
        lines += ["", f"Sizes at scale {big['scale']:g}: {big['sizes']}; probes: {big['probes']}.",
                  (f"Generation at scale {big['scale']:g}: {big['generation']['seconds_total']} s "
                   f"for {sum(big['generation']['rows'].values()):,} rows."), ""]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", choices=["sqlite", "postgres"])
    parser.add_argument("--repeat", type=int, default=25)
    parser.add_argument("--report", action="store_true",
                        help="print markdown from saved results (and check their query counts)")
    args = parser.parse_args(argv)
    if args.report:
        print(report())
        problems = compare(saved_results())
    elif args.db:
        problems = run(args.db, args.repeat)
    else:
        parser.error("give --db or --report")
    for problem in problems:
        print(f"FAIL: {problem}", file=sys.stderr)
    if problems:
        sys.exit(1)


if __name__ == "__main__":
    main()
