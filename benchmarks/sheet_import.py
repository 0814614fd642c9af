"""Time a 10,000-row sheet through the importer: dry run and import, SQLite and PostgreSQL.

Run from the repository root::

    .venv/bin/python benchmarks/sheet_import.py --db sqlite
    .venv/bin/python benchmarks/sheet_import.py --db postgres

Each run uses its own database (SQLite ``benchmarks/out/sheet_import.sqlite3``, PostgreSQL
``sersledger_sheet_bench`` or ``--pg-database``), dropped and migrated first; the lab's
database is never touched. The sheet is an invented xlsx of sphere lots (the kind with the
most rows in a lab's sheets) built with openpyxl. Reference in the same run: the same rows
written by calling ``sphere_lot_receive`` in a plain loop (no sheet, no savepoints), so the
report can say how much of the time is the importer and how much the services every row goes
through; and the same loop with Django's own constraint validation (a query per CHECK
constraint), the way every record was validated before, as the before/after reference.
Wall and CPU seconds and /proc/loadavg before and after go to
``benchmarks/out/sheet-import-<db>.json``.
"""

from __future__ import annotations

import argparse
import io
import json
import os
import sys
import time
from datetime import date, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT_DIR = ROOT / "benchmarks" / "out"
SQLITE_PATH = OUT_DIR / "sheet_import.sqlite3"
PG_SERVER = "postgres://postgres@127.0.0.1:5432"
PG_DATABASE = "sersledger_sheet_bench"
HEADER = ["Code or your ID", "Material", "Nominal diameter (nm)", "Size CV (%)", "Solids (%)",
          "Supplier", "Supplier lot number", "Received on", "Volume (mL)"]


def configure(db: str, pg_database: str = PG_DATABASE) -> None:
    sys.path.insert(0, str(ROOT))
    OUT_DIR.mkdir(parents=True, exist_ok=True)
    if db == "sqlite":
        SQLITE_PATH.unlink(missing_ok=True)
        os.environ["DATABASE_URL"] = f"sqlite:///{SQLITE_PATH}"
    else:
        import psycopg

        with psycopg.connect(f"{PG_SERVER}/postgres", autocommit=True) as connection:
            connection.execute(f"DROP DATABASE IF EXISTS {pg_database}")
            connection.execute(f"CREATE DATABASE {pg_database}")
        os.environ["DATABASE_URL"] = f"{PG_SERVER}/{pg_database}"
    os.environ["DJANGO_SETTINGS_MODULE"] = "sersledger.settings.test"
    import django

    django.setup()
    from django.core.management import call_command

    call_command("migrate", verbosity=0)


def sheet(rows: int, offset: int = 0) -> bytes:
    import openpyxl

    book = openpyxl.Workbook()
    ws = book.active
    ws.append(HEADER)
    start = date(2026, 1, 1)
    for n in range(offset, offset + rows):
        ws.append([f"LAB-{n:06d}", ("polystyrene", "silica", "pmma")[n % 3],
                   200 + (n % 80) * 10, 1 + (n % 5) * 0.5, 2.5 + (n % 4) * 2.5,
                   f"Invented Colloids {n % 7}", f"IC-{n:06d}",
                   start + timedelta(days=n % 300), 5 + n % 20])
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def timed(action):
    wall, cpu = time.perf_counter(), time.process_time()
    result = action()
    return result, time.perf_counter() - wall, time.process_time() - cpu


def loadavg() -> str:
    return Path("/proc/loadavg").read_text().split(" ", 3)[:3].__str__()


def reference_loop(rows: int) -> None:
    """The same rows through the service in a plain loop, rolled back."""
    from django.db import transaction

    from inventory.services import sphere_lot_receive

    with transaction.atomic():
        start = date(2026, 1, 1)
        for n in range(rows):
            sphere_lot_receive(actor=None, material=("polystyrene", "silica", "pmma")[n % 3],
                               nominal_diameter_nm=200 + (n % 80) * 10,
                               size_cv_percent=1 + (n % 5) * 0.5,
                               solids_percent_w_v=2.5 + (n % 4) * 2.5,
                               supplier=f"Invented Colloids {n % 7}", supplier_lot=f"R-{n:06d}",
                               received_on=start + timedelta(days=n % 300), volume_mL=5 + n % 20)
        transaction.set_rollback(True)


def django_validation_loop(rows: int) -> None:
    """The reference loop with Django's own constraint validation (one SELECT per CHECK
    constraint per record), as the services validated before the sheet-import speed work."""
    from unittest import mock

    from inventory.services import _common

    def by_query(record, *, exclude):
        record.validate_constraints(exclude=exclude)

    with mock.patch.object(_common, "validate_constraints", by_query):
        reference_loop(rows)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--db", choices=("sqlite", "postgres"), required=True)
    parser.add_argument("--rows", type=int, default=10_000)
    parser.add_argument("--reference-rows", type=int, default=2_000)
    parser.add_argument("--pg-database", default=PG_DATABASE,
                        help="PostgreSQL database to drop and fill (default %(default)s)")
    args = parser.parse_args()
    configure(args.db, args.pg_database)
    from exchange.importer import import_sheet

    result = {"db": args.db, "rows": args.rows, "loadavg_before": loadavg()}
    content, result["build_s"], _ = timed(lambda: sheet(args.rows))
    result["file_bytes"] = len(content)
    _, wall, cpu = timed(lambda: reference_loop(args.reference_rows))
    result["reference_ms_per_row"] = {"wall": 1000 * wall / args.reference_rows,
                                      "cpu": 1000 * cpu / args.reference_rows}
    _, wall, cpu = timed(lambda: django_validation_loop(args.reference_rows))
    result["django_validation_ms_per_row"] = {"wall": 1000 * wall / args.reference_rows,
                                              "cpu": 1000 * cpu / args.reference_rows}
    for label, commit in (("dry_run", False), ("import", True)):
        report, wall, cpu = timed(lambda c=commit: import_sheet(
            kind="sphere_lots", content=content, file_name="bench.xlsx", actor=None, commit=c))
        assert report.ok and len(report.created) == args.rows, report.errors[:3]
        reference = result["reference_ms_per_row"]
        result[label] = {"wall_s": wall, "cpu_s": cpu, "ms_per_row": 1000 * wall / args.rows,
                         "ratio_to_reference": 1000 * wall / args.rows / reference["wall"],
                         "cpu_ratio_to_reference": 1000 * cpu / args.rows / reference["cpu"]}
        print(f"{args.db} {label}: {wall:.1f} s wall, {cpu:.1f} s CPU", flush=True)
    result["loadavg_after"] = loadavg()
    path = OUT_DIR / f"sheet-import-{args.db}.json"
    path.write_text(json.dumps(result, indent=2))
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
