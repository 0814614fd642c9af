"""API throughput under gunicorn on loopback: requests/s and latency with 8 concurrent clients.

Run from the repository root after ``benchmarks/generate_lab.py --db postgres --scale 1``::

    /work/venv/bin/python benchmarks/api_throughput.py --db postgres
    /work/venv/bin/python benchmarks/api_throughput.py --db postgres --server sync:3 \\
        --server sync:5 --server gthread:3x4 --endpoint "API substrate detail"   # compare servers

The app is served by gunicorn on 127.0.0.1 (a free port, never another interface) with
``benchmarks/settings_bench.py``: the production settings with only the TLS redirect off.  The
load comes from ``wrk`` (Debian package ``wrk``, written in C, one event-loop thread) so the
client takes as little of the shared cores as possible; its CPU time is measured and reported.
Each endpoint gets ``--warmup`` untimed seconds, then ``--seconds`` of load from ``--clients``
keep-alive connections; wrk stops sending at ``--max-requests`` (a safety cap: wrk still waits
out the duration, so a run that reaches it is marked and its rate is a lower bound). Requests
carry an API token of the generated user bench01 and cycle through many records or pages, so no
single row is measured hot.  Any answer other than HTTP 200 counts as an error, like socket
errors and timeouts.  /proc/loadavg and the whole machine's CPU use are recorded beside each run
because the machine is shared.  Results go to ``benchmarks/out/throughput-<db>-<scale>.json``.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import secrets
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from generate_lab import OUT_DIR, PG_DATABASE, ROOT, database_url
from run_benchmarks import substrate_list_cursor

HOST = "127.0.0.1"
TARGET_RPS = 200.0
GUNICORN = Path(sys.executable).with_name("gunicorn")
# Lua for wrk: cycle the paths, count non-200 answers, stop at the cap, print one JSON line.
WRK_SCRIPT = """
local paths = {%(paths)s}
local cap = %(cap)d
local threads = {}
-- Globals, not locals: done() reads each thread's count through thread:get().
sent, answered, bad = 0, 0, 0

function setup(thread)
  table.insert(threads, thread)
end

function init(args)
  wrk.headers["Authorization"] = "Token %(token)s"
end

function request()
  sent = sent + 1
  return wrk.format("GET", paths[(sent - 1) %% #paths + 1])
end

function response(status, headers, body)
  answered = answered + 1
  if status ~= 200 then bad = bad + 1 end
  if answered >= cap then wrk.thread:stop() end
end

function done(summary, latency, requests)
  local non200 = 0
  for _, t in ipairs(threads) do non200 = non200 + t:get("bad") end
  local e = summary.errors
  io.write(string.format(
    'RESULT {"requests": %%d, "duration_us": %%d, "bytes": %%d, "non200": %%d, ' ..
    '"connect": %%d, "read": %%d, "write": %%d, "timeout": %%d, "p50_us": %%d, ' ..
    '"p95_us": %%d, "p99_us": %%d, "max_us": %%d, "mean_us": %%.1f}\\n',
    summary.requests, summary.duration, summary.bytes, non200, e.connect, e.read, e.write,
    e.timeout, latency:percentile(50), latency:percentile(95), latency:percentile(99),
    latency.max, latency.mean))
end
"""


def configure(db: str) -> dict:
    """Environment for this process and the server: bench settings on the benchmark database."""
    env = {"DATABASE_URL": database_url(db), "DJANGO_SETTINGS_MODULE": "benchmarks.settings_bench",
           "SECRET_KEY": secrets.token_urlsafe(50), "ALLOWED_HOSTS": HOST,
           "PYTHONPATH": str(ROOT)}
    os.environ.update(env)
    sys.path.insert(0, str(ROOT))
    import django

    django.setup()
    return env


def endpoints(pages_to_cycle: int, records_to_cycle: int,
              wanted=None) -> tuple[str, dict[str, list[str]]]:
    """The token of bench01 and, per endpoint (``wanted``, default all), the paths its
    requests cycle through."""
    from django.contrib.auth.models import User
    from django.db import connections
    from knox.models import AuthToken

    from inventory.models import Substrate

    user = User.objects.get(username="bench01")
    token = AuthToken.objects.create(user=user)[1]
    codes = list(Substrate.objects.order_by("code").values_list("code", flat=True))
    step = max(1, len(codes) // records_to_cycle)
    sample = codes[::step][:records_to_cycle]
    # Cursors of pages spread over the whole list, as clients following ``next`` hold them.
    starts = sorted({(i * (len(codes) - 1)) // max(1, pages_to_cycle - 1)
                     for i in range(pages_to_cycle)})
    paths = {
        "login page (no auth, harness check)": lambda: ["/accounts/login/"],
        "API substrate detail": lambda: [f"/api/v1/substrates/{c}/" for c in sample],
        "API substrate readiness": lambda: [f"/api/v1/substrates/{c}/readiness/"
                                            for c in sample],
        "API substrate list (cursor)": lambda: [
            f"/api/v1/substrates/?cursor={substrate_list_cursor(n)}" for n in starts],
    }
    chosen = {name: make() for name, make in paths.items() if not wanted or name in wanted}
    connections.close_all()
    return token, chosen


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind((HOST, 0))
        return sock.getsockname()[1]


def parse_server(spec: str) -> dict:
    """``sync:4`` (4 sync workers) or ``gthread:3x4`` (3 workers of 4 threads)."""
    kind, _, size = spec.partition(":")
    workers, _, threads = size.partition("x")
    if (
        kind not in {"sync", "gthread"}
        or not workers.isdigit()
        or (threads and not threads.isdigit())
    ):
        raise argparse.ArgumentTypeError(f"server {spec!r}: use sync:N or gthread:NxT")
    return {"spec": spec, "worker_class": kind, "workers": int(workers),
            "threads": int(threads or 1)}


class Server:
    """gunicorn on loopback in its own process group, stopped by its pid only."""

    def __init__(self, server: dict, env: dict, log: Path):
        self.port = free_port()
        self.url = f"http://{HOST}:{self.port}"
        command = [str(GUNICORN), "sersledger.wsgi:application", "--bind", f"{HOST}:{self.port}",
                   "--chdir", str(ROOT), "--workers", str(server["workers"]),
                   "--worker-class", server["worker_class"], "--threads", str(server["threads"]),
                   "--timeout", "60", "--preload", "--error-logfile", str(log),
                   "--log-level", "warning"]
        self.process = subprocess.Popen(command, env={**os.environ, **env},
                                        start_new_session=True)

    def wait_ready(self, seconds: float = 180.0) -> None:
        deadline = time.monotonic() + seconds
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise SystemExit(f"gunicorn exited with {self.process.returncode}; see its log")
            try:
                with urllib.request.urlopen(f"{self.url}/accounts/login/", timeout=60) as answer:
                    if answer.status == 200:
                        return
            except (urllib.error.URLError, OSError):  # not listening yet, or still importing
                time.sleep(0.3)
        raise SystemExit(f"gunicorn did not answer within {seconds:g} s; see its log")

    def cpu_seconds(self) -> dict[int, float]:
        """User + system CPU of the master and its workers so far, by pid."""
        return process_cpu_seconds(lambda pid, ppid, _: self.process.pid in (pid, ppid))

    def stop(self) -> None:
        if self.process.poll() is None:
            os.killpg(self.process.pid, signal.SIGTERM)
            try:
                self.process.wait(timeout=30)
            except subprocess.TimeoutExpired:
                os.killpg(self.process.pid, signal.SIGKILL)
                self.process.wait()


def process_cpu_seconds(chosen) -> dict[int, float]:
    """CPU seconds (user + system) by pid of the processes ``chosen(pid, ppid, cmdline)``."""
    tick = os.sysconf("SC_CLK_TCK")
    by_pid = {}
    for folder in Path("/proc").glob("[0-9]*"):
        try:
            fields = (folder / "stat").read_text().rsplit(")", 1)[1].split()
            cmdline = (folder / "cmdline").read_bytes().replace(b"\0", b" ").decode()
        except OSError:
            continue
        if chosen(int(folder.name), int(fields[1]), cmdline):
            by_pid[int(folder.name)] = (int(fields[11]) + int(fields[12])) / tick
    return by_pid


def cpu_used(before: dict[int, float], after: dict[int, float]) -> float:
    """CPU spent between two readings by the processes alive at the second one.

    A process that ended in between (a recycled database connection, a parallel query
    worker) takes its CPU with it, so the figure is a lower bound, never negative.
    """
    return sum(cpu - before.get(pid, 0.0) for pid, cpu in after.items())


def database_cpu_seconds() -> dict[int, float]:
    """CPU of the PostgreSQL backends serving the benchmark database (none on SQLite)."""
    return process_cpu_seconds(lambda _pid, _ppid, cmd: cmd.startswith("postgres:")
                               and f" {PG_DATABASE} " in cmd)


def status_of(url: str, token: str) -> int:
    request = urllib.request.Request(url, headers={"Authorization": f"Token {token}"})
    try:
        with urllib.request.urlopen(request, timeout=120) as answer:
            return answer.status
    except urllib.error.HTTPError as error:
        return error.code


def machine_busy() -> tuple[int, int]:
    """(busy, total) jiffies of the whole machine, from the first line of /proc/stat."""
    values = [int(v) for v in Path("/proc/stat").read_text().split("\n", 1)[0].split()[1:]]
    idle = values[3] + values[4]
    return sum(values) - idle, sum(values)


def loadavg() -> str:
    return " ".join(Path("/proc/loadavg").read_text().split()[:3])


def run_wrk(url: str, paths: list[str], token: str, *, clients: int, seconds: float,
            cap: int) -> dict:
    """One wrk run (one thread, ``clients`` connections); its JSON line plus its own CPU time."""
    script = OUT_DIR / f"wrk-{os.getpid()}.lua"
    script.write_text(WRK_SCRIPT % {"paths": ", ".join(json.dumps(p) for p in paths),
                                    "cap": cap, "token": token})
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    try:
        out = subprocess.run(["wrk", "-t1", f"-c{clients}", f"-d{seconds:g}s", "--timeout", "10s",
                              "-s", str(script), url], capture_output=True, text=True,
                             timeout=seconds + 60, check=True).stdout
    finally:
        script.unlink(missing_ok=True)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    line = next(line for line in out.splitlines() if line.startswith("RESULT "))
    result = json.loads(line.removeprefix("RESULT "))
    result["client_cpu_s"] = round(after.ru_utime + after.ru_stime
                                   - before.ru_utime - before.ru_stime, 2)
    return result


def measure_endpoint(server: Server, paths: list[str], token: str, args) -> dict:
    status = status_of(server.url + paths[0], token)
    if status != 200:
        return {"measured": False, "why": f"GET {paths[0]} answered HTTP {status}"}
    # Each worker imports the whole site on its first request (seconds on a busy machine),
    # which must not fall inside the timed run.
    run_wrk(server.url, paths, token, clients=args.clients, seconds=args.warmup, cap=10**9)
    load_before, busy_before = loadavg(), machine_busy()
    cpu_before, db_before = server.cpu_seconds(), database_cpu_seconds()
    result = run_wrk(server.url, paths, token, clients=args.clients, seconds=args.seconds,
                     cap=args.max_requests)
    busy_after, cpu_after, db_after = machine_busy(), server.cpu_seconds(), database_cpu_seconds()
    requests = max(result["requests"], 1)
    cpu_ms = {"server": cpu_used(cpu_before, cpu_after) * 1000 / requests,
              "database": cpu_used(db_before, db_after) * 1000 / requests,
              "client": result["client_cpu_s"] * 1000 / requests}
    seconds = result["duration_us"] / 1e6
    errors = (result["non200"] + result["connect"] + result["read"] + result["write"]
              + result["timeout"])
    rps = result["requests"] / seconds
    capped = result["requests"] >= args.max_requests
    return {"measured": True, "requests": result["requests"], "seconds": round(seconds, 2),
            "cap_reached": capped,
            "rps": round(rps, 1), "p50_ms": result["p50_us"] / 1000,
            "p95_ms": result["p95_us"] / 1000, "p99_ms": result["p99_us"] / 1000,
            "max_ms": result["max_us"] / 1000, "errors": errors, "wrk": result,
            "cpu_ms_per_request": {k: round(v, 2) for k, v in cpu_ms.items()},
            # What the 2 cores would serve if nothing else ran: cores / CPU time per request.
            "capacity_rps_alone": round((os.cpu_count() or 1) * 1000 / sum(cpu_ms.values()), 0),
            "client_cpu_share": round(result["client_cpu_s"] / seconds, 3),
            "machine_busy": round((busy_after[0] - busy_before[0])
                                  / max(1, busy_after[1] - busy_before[1]), 2),
            "loadavg_before": load_before, "loadavg_after": loadavg(),
            "target": f">= {TARGET_RPS:g} req/s, 0 errors: "
                      + ("met" if rps >= TARGET_RPS and errors == 0 else "MISSED")
                      + (" (cap reached: rate is a lower bound)" if capped else "")}


def run(args) -> Path:
    if shutil.which("wrk") is None:
        raise SystemExit("wrk is missing: apt-get install -y wrk")
    if not GUNICORN.exists():
        raise SystemExit(f"gunicorn is missing beside {sys.executable}: pip install gunicorn")
    env = configure(args.db)
    summary = json.loads((OUT_DIR / f"generate-{args.db}.json").read_text())
    token, chosen = endpoints(args.pages, args.records, args.endpoint)
    result = {"db": args.db, "scale": summary["scale"], "clients": args.clients,
              "seconds": args.seconds, "max_requests": args.max_requests, "client": "wrk -t1",
              "measured_at": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime()), "runs": []}
    log = OUT_DIR / f"gunicorn-{args.db}.log"
    log.unlink(missing_ok=True)
    for server_spec in args.server:
        server = Server(server_spec, env, log)
        try:
            server.wait_ready()
            for name, paths in chosen.items():
                figures = measure_endpoint(server, paths, token, args)
                result["runs"].append({"server": server_spec["spec"], "endpoint": name,
                                       "paths_cycled": len(paths), **figures})
                print(row(result["runs"][-1]), flush=True)
        finally:
            server.stop()
    label = f"-{args.label}" if args.label else ""
    path = OUT_DIR / f"throughput-{args.db}-{summary['scale']:g}{label}.json"
    path.write_text(json.dumps(result, indent=2))
    print(f"Saved {path}")
    return path


HEADER = ("| server | endpoint | req/s | p50 ms | p95 ms | p99 ms | errors / requests "
          "| CPU ms/req: app + db + wrk | req/s if alone | wrk CPU | machine busy "
          "| loadavg before → after | target |\n"
          "|---|---|---|---|---|---|---|---|---|---|---|---|---|")


def row(run: dict) -> str:
    if not run["measured"]:
        return f"| {run['server']} | {run['endpoint']} | not measured: {run['why']} |"
    cpu = run["cpu_ms_per_request"]
    return (f"| {run['server']} | {run['endpoint']} | {run['rps']:.0f} | {run['p50_ms']:.1f} "
            f"| {run['p95_ms']:.1f} | {run['p99_ms']:.1f} | {run['errors']} / {run['requests']} "
            f"| {cpu['server']:.1f} + {cpu['database']:.1f} + {cpu['client']:.2f} "
            f"| {run['capacity_rps_alone']:.0f} | {run['client_cpu_share']:.0%} "
            f"| {run['machine_busy']:.0%} | {run['loadavg_before']} → {run['loadavg_after']} "
            f"| {run['target']} |")


def report() -> str:
    lines = []
    for path in sorted(OUT_DIR.glob("throughput-*.json")):
        result = json.loads(path.read_text())
        lines += [(f"{result['db']}, scale {result['scale']:g}, {result['clients']} clients "
                  f"({result['client']}), {result['seconds']:g} s or {result['max_requests']:,} "
                  f"requests per endpoint, measured {result['measured_at']}:"), "", HEADER]
        lines += [row(run) for run in result["runs"]] + [""]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", choices=["sqlite", "postgres"], default="postgres")
    parser.add_argument("--server", type=parse_server, action="append",
                        help="sync:N or gthread:NxT, repeatable (default sync:3)")
    parser.add_argument("--endpoint", action="append", help="only this endpoint (repeatable)")
    parser.add_argument("--clients", type=int, default=8)
    parser.add_argument("--seconds", type=float, default=15.0)
    parser.add_argument("--warmup", type=float, default=8.0, help="untimed seconds first")
    parser.add_argument("--max-requests", type=int, default=20000)
    parser.add_argument("--pages", type=int, default=40, help="list pages cycled through")
    parser.add_argument("--records", type=int, default=500, help="substrates cycled through")
    parser.add_argument("--label", help="saved as throughput-<db>-<scale>-<label>.json")
    parser.add_argument("--report", action="store_true", help="print markdown from saved results")
    args = parser.parse_args(argv)
    if args.report:
        print(report())
        return
    args.server = args.server or [parse_server("sync:3")]
    # A SIGTERM (e.g. from ``timeout``) unwinds through ``finally`` so gunicorn is stopped too.
    signal.signal(signal.SIGTERM, lambda *_: sys.exit("stopped by SIGTERM"))
    run(args)


if __name__ == "__main__":
    main()
