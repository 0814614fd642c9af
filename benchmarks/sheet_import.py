"""Time a 10,000-row sheet through the importer: dry run and import, SQLite and PostgreSQL.

Run from the repository root::

    .venv/bin/python benchmarks/sheet_import.py --db sqlite
    .venv/bin/python benchmarks/sheet_import.py --db postgres

Each run uses its own database (SQLite ``benchmarks/out/sheet_import.sqlite3``, PostgreSQL
``sersledger_sheet_bench`` or ``--pg-database``), dropped and migrated first; the lab's
database is never touched. The sheets are invented xlsx files built with openpyxl: sphere
lots (the kind with the most rows in a lab's sheets) and colloid batches (each naming two
reagent lots as parents, every tenth with a UV-vis reading to size) and deposition runs
(``--kinds deposition_runs``: each through its own released template, inserted before the
timing starts; 2-4 pieces; a charge on nine rows in ten, one in 25 off target, so flagged;
the reference loop is ``deposition_run_record``). Each is dry-run and
imported by the bulk path (the default) and, with ``--per-row-rows`` rows, by the per-row
path; the reference in the same run is the same rows written by calling the service
(``sphere_lot_receive``, ``nanoparticle_batch_make``) in a plain loop (no sheet, no
savepoints), so the report can say how much of the time is the importer and how much the
services. ``--django-validation`` adds the loop with Django's own constraint validation (a
query per CHECK constraint), the way records were validated before the first speed work.
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
from functools import partial
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT_DIR = ROOT / "benchmarks" / "out"
SQLITE_PATH = OUT_DIR / "sheet_import.sqlite3"
PG_SERVER = "postgres://postgres@127.0.0.1:5432"
PG_DATABASE = "sersledger_sheet_bench"
HEADER = ["Code or your ID", "Material", "Nominal diameter (nm)", "Size CV (%)", "Solids (%)",
          "Supplier", "Supplier lot number", "Received on", "Volume (mL)"]
COLLOID_HEADER = ["Code or your ID", "Metal", "Synthesis", "Volume made (mL)", "Made on",
                  "Reagent lots used", "UV-vis measured on", "UV-vis peak (nm)",
                  "Absorbance at peak", "UV-vis dilution factor"]


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


def colloid_values(n: int) -> dict:
    start = date(2026, 2, 1)
    return {"metal": "Ag", "synthesis_method": ("citrate", "borohydride")[n % 2],
            "volume_mL": 20 + n % 200, "made_on": start + timedelta(days=n % 120)}


def colloid_sheet(rows: int, lots: list[str]) -> bytes:
    """Colloid batches, each made from two of ``lots``, every tenth with a UV-vis reading."""
    import openpyxl

    book = openpyxl.Workbook()
    ws = book.active
    ws.append(COLLOID_HEADER)
    for n in range(rows):
        v = colloid_values(n)
        reading = [v["made_on"], 395 + n % 20, 0.5 + (n % 7) * 0.1, 10] if n % 10 == 0 \
            else [None, None, None, None]
        ws.append([f"NP-{n:06d}", v["metal"], v["synthesis_method"], v["volume_mL"],
                   v["made_on"], f"{lots[n % 2]}; {lots[2]}", *reading])
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def colloid_parents() -> list[str]:
    """Three released reagent lots the colloid rows name as parents."""
    from inventory import services

    codes = []
    for kind in ("metal_salt", "reductant", "stabiliser"):
        lot = services.reagent_lot_receive(actor=None, name=f"bench {kind}", kind=kind,
                                           received_on=date(2026, 1, 2))
        codes.append(services.record_transition(actor=None, record=lot,
                                                to_status="released").code)
    return codes


def colloid_loop(rows: int, lots: list[str]) -> None:
    """The colloid rows through ``nanoparticle_batch_make`` in a plain loop, rolled back."""
    from django.db import transaction

    from inventory.models import ReagentLot
    from inventory.services import nanoparticle_batch_make

    with transaction.atomic():
        by_code = {lot.code: lot for lot in ReagentLot.objects.filter(code__in=lots)}
        for n in range(rows):
            nanoparticle_batch_make(actor=None, source_lots=[by_code[lots[n % 2]],
                                                             by_code[lots[2]]],
                                    **colloid_values(n))
        transaction.set_rollback(True)


# --------------------------------------------------------------------------- deposition runs

RUN_HEADER = ["Code or your ID", "Template", "Plating bath lot", "Metal", "Electrons per atom",
              "Mode", "Electrode area (cm²)", "Target h/D", "Charge (C)", "Made on",
              "Pieces cut", "Piece area (cm²)"]
RUN_SPHERE_NM = 600


def run_values(n: int, on_target_C: float) -> dict:
    """Run ``n``: 2-4 pieces; a charge on nine rows in ten, within 2 % of the target's but
    every 25th row 30 % over it (a flagged film)."""
    charge = None if n % 10 == 9 else on_target_C * (1.3 if n % 25 == 0 else
                                                     1 + (n % 5 - 2) * 0.01)
    return {"metal": "Au", "electrons_per_atom": 1, "mode": "potentiostatic",
            "electrode_area_cm2": 1.0, "target_height_over_diameter": 0.5, "charge_C": charge,
            "made_on": date(2026, 3, 1) + timedelta(days=n % 200), "pieces": 2 + n % 3,
            "piece_area_cm2": 0.25}


def run_parents(count: int) -> tuple[str, list[str], float]:
    """A released bath and ``count`` released templates (one per run), made before the
    timed part: the templates are inserted in bulk with the figures ``template_assemble``
    works out for them (the services would take minutes here and are not what is timed)."""
    from django.db import transaction
    from simple_history.utils import bulk_create_with_history

    from inventory import services
    from inventory.codes import code_next, codes_in_blocks
    from inventory.models import Status, TemplateAssembly
    from inventory.physics.electrodeposition import charge_for_target_height_C
    from inventory.services.fabrication import _template_figures

    def released(lot):
        return services.record_transition(actor=None, record=lot, to_status="released")

    bath = released(services.reagent_lot_receive(actor=None, name="bench gold bath",
                                                 kind="plating_bath",
                                                 received_on=date(2026, 1, 2)))
    slides = released(services.reagent_lot_receive(actor=None, name="bench slides",
                                                   kind="base_slide",
                                                   received_on=date(2026, 1, 2)))
    spheres = released(services.sphere_lot_receive(
        actor=None, material="polystyrene", nominal_diameter_nm=RUN_SPHERE_NM,
        solids_percent_w_v=10, received_on=date(2026, 1, 2)))
    figures = _template_figures(spheres, slide_area_cm2=2.0, sphere_density_g_cm3=None,
                                excess_factor=1.0)
    with transaction.atomic(), codes_in_blocks():
        templates = [TemplateAssembly(
            code=code_next("TPL"), sphere_lot=spheres, base_slide_lot=slides,
            method="interface_transfer", slide_area_cm2=2.0, made_on=date(2026, 2, 1),
            status=Status.RELEASED, **figures) for _ in range(count)]
        bulk_create_with_history(templates, TemplateAssembly, batch_size=500)
    on_target_C = charge_for_target_height_C(
        target_height_over_diameter=0.5, sphere_diameter_nm=RUN_SPHERE_NM,
        electrode_area_cm2=1.0, metal="Au", electrons_per_atom=1, current_efficiency=1.0)
    return bath.code, [t.code for t in templates], on_target_C


def run_sheet(rows: int, bath: str, templates: list[str], on_target_C: float) -> bytes:
    import openpyxl

    book = openpyxl.Workbook()
    ws = book.active
    ws.append(RUN_HEADER)
    for n in range(rows):
        v = run_values(n, on_target_C)
        ws.append([f"RUN-{n:06d}", templates[n], bath, v["metal"], v["electrons_per_atom"],
                   v["mode"], v["electrode_area_cm2"], v["target_height_over_diameter"],
                   v["charge_C"], v["made_on"], v["pieces"], v["piece_area_cm2"]])
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def run_loop(rows: int, bath: str, templates: list[str], on_target_C: float) -> None:
    """The run rows through ``deposition_run_record`` in a plain loop, rolled back."""
    from django.db import transaction

    from inventory.models import ReagentLot, TemplateAssembly
    from inventory.services import deposition_run_record

    with transaction.atomic():
        bath_lot = ReagentLot.objects.get(code=bath)
        by_code = TemplateAssembly.objects.in_bulk(templates[:rows], field_name="code")
        for n in range(rows):
            values = {k: v for k, v in run_values(n, on_target_C).items() if v is not None}
            deposition_run_record(actor=None, bath_lot=bath_lot,
                                  template=by_code[templates[n]], **values)
        transaction.set_rollback(True)


def rollback_deposition_runs() -> None:
    """Remove what a run import wrote and release its templates again."""
    from inventory.models import (
        CodeCounter,
        DepositionRun,
        Flag,
        LineageEdge,
        StatusChange,
        Substrate,
        TemplateAssembly,
    )

    Flag.history.all().delete()
    Flag.objects.all().delete()
    LineageEdge.objects.filter(child_code__startswith="SUB-").delete()
    LineageEdge.objects.filter(child_code__startswith="DEP-").delete()
    StatusChange.objects.filter(to_status="consumed").delete()
    for model in (Substrate, DepositionRun):
        model.history.all().delete()
        model.objects.all().delete()
    TemplateAssembly.history.filter(status="consumed").delete()
    TemplateAssembly.objects.filter(status="consumed").update(status="released", version=1)
    from exchange.models import SheetKey

    SheetKey.objects.filter(kind="deposition_runs").delete()
    CodeCounter.objects.filter(prefix__in=["DEP", "SUB", "FLG"]).update(last_value=0)


def deposition_run_inputs(args) -> tuple[bytes, bytes, object]:
    """The run sheet (all rows), the per-row path's sheet and the reference loop."""
    bath, templates, on_target_C = run_parents(max(args.rows, args.reference_rows,
                                                   args.per_row_rows))
    content = run_sheet(args.rows, bath, templates, on_target_C)
    per_row_content = run_sheet(args.per_row_rows, bath, templates, on_target_C) \
        if args.per_row_rows else b""
    return content, per_row_content, partial(run_loop, bath=bath, templates=templates,
                                             on_target_C=on_target_C)


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


def measure(result: dict, kind: str, content: bytes, rows: int, reference: dict,
            per_row_content: bytes, per_row_rows: int) -> None:
    """Dry run and import by the bulk path (all rows) and the per-row path (fewer rows)."""
    from exchange.importer import import_sheet

    for path, data, count in (("bulk", content, rows), ("per_row", per_row_content,
                                                        per_row_rows)):
        if not count:
            continue
        for label, commit in (("dry_run", False), ("import", True)):
            report, wall, cpu = timed(partial(
                import_sheet, kind=kind, content=data, file_name=f"{path}-{label}.xlsx",
                actor=None, commit=commit, bulk=path == "bulk"))
            assert report.ok and len(report.created) == count, report.errors[:3]
            result[kind][f"{path}_{label}"] = {
                "rows": count, "wall_s": wall, "cpu_s": cpu,
                "cpu_ms_per_row": 1000 * cpu / count,
                "cpu_ratio_to_reference": 1000 * cpu / count / reference["cpu"]}
            print(f"{kind} {path} {label}: {count} rows, {wall:.1f} s wall, {cpu:.1f} s CPU,"
                  f" load {loadavg()}", flush=True)
            if commit and report.committed:
                rollback_import(kind)


def rollback_import(kind: str) -> None:
    """Remove what an import wrote, so the next one starts from the same records."""
    from exchange.models import SheetKey, SheetUvVisReading
    from inventory.models import CodeCounter, LineageEdge, NanoparticleBatch, SphereLot

    if kind == "deposition_runs":
        return rollback_deposition_runs()
    model = {"sphere_lots": SphereLot, "colloid_batches": NanoparticleBatch}[kind]
    if kind == "colloid_batches":
        SheetUvVisReading.history.all().delete()
        SheetUvVisReading.objects.all().delete()
        LineageEdge.objects.filter(child_code__startswith="NPB-").delete()
    model.history.all().delete()
    model.objects.all().delete()
    SheetKey.objects.filter(kind=kind).delete()
    CodeCounter.objects.filter(prefix=model.CODE_PREFIX).update(last_value=0)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--db", choices=("sqlite", "postgres"), required=True)
    parser.add_argument("--rows", type=int, default=10_000)
    parser.add_argument("--reference-rows", type=int, default=2_000)
    parser.add_argument("--per-row-rows", type=int, default=2_000,
                        help="rows of the per-row path's dry run and import (0: skip)")
    parser.add_argument("--kinds", nargs="+", default=["sphere_lots", "colloid_batches"],
                        choices=["sphere_lots", "colloid_batches", "deposition_runs"])
    parser.add_argument("--django-validation", action="store_true",
                        help="also time the service loop with Django's constraint queries")
    parser.add_argument("--pg-database", default=PG_DATABASE,
                        help="PostgreSQL database to drop and fill (default %(default)s)")
    parser.add_argument("--out", default=None, help="result file (default out/sheet-import-DB)")
    args = parser.parse_args()
    configure(args.db, args.pg_database)

    result = {"db": args.db, "rows": args.rows, "loadavg_before": loadavg()}
    for kind in args.kinds:
        result[kind] = {}
        if kind == "sphere_lots":
            content = sheet(args.rows)
            per_row_content = sheet(args.per_row_rows) if args.per_row_rows else b""
            loop = reference_loop
        elif kind == "deposition_runs":
            content, per_row_content, loop = deposition_run_inputs(args)
        else:
            lots = colloid_parents()
            content = colloid_sheet(args.rows, lots)
            per_row_content = colloid_sheet(args.per_row_rows, lots) if args.per_row_rows \
                else b""
            loop = partial(colloid_loop, lots=lots)
        result[kind]["file_bytes"] = len(content)
        _, wall, cpu = timed(partial(loop, args.reference_rows))
        reference = {"wall": 1000 * wall / args.reference_rows,
                     "cpu": 1000 * cpu / args.reference_rows}
        result[kind]["reference_ms_per_row"] = reference
        print(f"{kind} reference loop: {args.reference_rows} rows, {wall:.1f} s wall, "
              f"{cpu:.1f} s CPU", flush=True)
        if kind == "sphere_lots" and args.django_validation:
            _, wall, cpu = timed(lambda: django_validation_loop(args.reference_rows))
            result[kind]["django_validation_ms_per_row"] = {
                "wall": 1000 * wall / args.reference_rows, "cpu": 1000 * cpu / args.reference_rows}
        measure(result, kind, content, args.rows, reference, per_row_content,
                args.per_row_rows)
    result["loadavg_after"] = loadavg()
    path = Path(args.out) if args.out else OUT_DIR / f"sheet-import-{args.db}.json"
    path.write_text(json.dumps(result, indent=2))
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
