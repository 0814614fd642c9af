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
services. ``--kinds templates substrates qc_results`` adds the chain's kinds: templates
naming three sphere lots and two base-slide lots, numbered pieces of two purchased lots
(with area and notes), and one historical QC result for each of 10,000 pieces (imported by
a substrates sheet first); their parents are made before the timed part, and their
references are ``template_assemble``, ``purchased_piece_receive`` and
``imported_qc_result_record`` in a plain loop.  ``--django-validation`` adds the loop with
Django's own constraint validation (a query per CHECK constraint), the way records were
validated before the first speed work.
Wall and CPU seconds and /proc/loadavg before and after go to
``benchmarks/out/sheet-import-<db>.json``.

``--kinds linker_layers particle_attachments``: steps that move stored substrates to their
next stage. Their substrates (rows + per-row rows of them) are made before the timed part;
the linker sheet's import is kept, and the attachment sheet names the pieces it gave a
layer. The reference is ``linker_layer_apply`` / ``particle_attach`` in a plain loop.
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


TEMPLATE_HEADER = ["Code or your ID", "Sphere lot", "Base slide lot", "Method",
                   "Slide area (cm²)", "Coverage (%)", "Made on", "Notes"]
SUBSTRATE_HEADER = ["Code or your ID", "Piece", "Purchased substrate lot",
                    "Made or received on", "Area (cm²)", "Notes"]
QC_HEADER = ["Substrate", "Measured on", "Enhancement factor", "RSD (%)", "Verdict",
             "Analyte", "Laser wavelength (nm)", "Notes"]


def xlsx(header: list[str], rows) -> bytes:
    import openpyxl

    book = openpyxl.Workbook()
    ws = book.active
    ws.append(header)
    for row in rows:
        ws.append(row)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def released_lots(kind: str, count: int) -> list:
    from inventory import services

    return [services.record_transition(
        actor=None, to_status="released", record=services.reagent_lot_receive(
            actor=None, name=f"bench {kind} {n}", kind=kind, received_on=date(2026, 1, 2)))
        for n in range(count)]


def template_parents() -> dict:
    """Three released sphere lots and two released base-slide lots the template rows name."""
    from inventory import services

    spheres = [services.record_transition(
        actor=None, to_status="released", record=services.sphere_lot_receive(
            actor=None, material="polystyrene", nominal_diameter_nm=400 + 100 * n,
            solids_percent_w_v=10, received_on=date(2026, 1, 2)))
        for n in range(3)]
    return {"spheres": spheres, "slides": released_lots("base_slide", 2)}


def template_values(n: int, parents: dict) -> dict:
    return {"sphere_lot": parents["spheres"][n % 3], "base_slide_lot": parents["slides"][n % 2],
            "method": ("interface_transfer", "spin_coating", "drop_casting")[n % 3],
            "slide_area_cm2": 1.0 + n % 4, "coverage_percent": 70 + n % 30,
            "made_on": date(2026, 2, 1) + timedelta(days=n % 120), "notes": f"bench {n}"}


def template_sheet(rows: int, parents: dict) -> bytes:
    return xlsx(TEMPLATE_HEADER, (
        [f"TP-{n:06d}", v["sphere_lot"].code, v["base_slide_lot"].code, v["method"],
         v["slide_area_cm2"], v["coverage_percent"], v["made_on"], v["notes"]]
        for n, v in ((n, template_values(n, parents)) for n in range(rows))))


def template_loop(rows: int, parents: dict) -> None:
    """The template rows through ``template_assemble`` in a plain loop, rolled back."""
    from django.db import transaction

    from inventory.services import template_assemble

    with transaction.atomic():
        for n in range(rows):
            template_assemble(actor=None, **template_values(n, parents))
        transaction.set_rollback(True)


def piece_values(n: int, lots: list) -> dict:
    return {"purchased_lot": lots[n % 2], "number": str(n // 2 + 1),
            "received_on": date(2026, 2, 1) + timedelta(days=n % 120),
            "area_cm2": 0.25 * (1 + n % 4), "notes": f"bench {n}"}


def substrate_sheet(rows: int, lots: list) -> bytes:
    """Pieces of two purchased lots, numbered, each with its area and a note."""
    return xlsx(SUBSTRATE_HEADER, (
        [f"PC-{n:06d}", v["number"], v["purchased_lot"].code, v["received_on"], v["area_cm2"],
         v["notes"]] for n, v in ((n, piece_values(n, lots)) for n in range(rows))))


def substrate_loop(rows: int, parents: list) -> None:
    """The piece rows through ``purchased_piece_receive`` in a plain loop, rolled back;
    ``parents``: the purchased lots."""
    from django.db import transaction

    from inventory.services import purchased_piece_receive

    with transaction.atomic():
        for n in range(rows):
            purchased_piece_receive(actor=None, **piece_values(n, parents))
        transaction.set_rollback(True)


def qc_parents(rows: int) -> list:
    """``rows`` purchased pieces, imported by a substrates sheet before the timed part."""
    from exchange.importer import import_sheet
    from inventory.models import Substrate

    lots = released_lots("purchased_substrate", 2)
    report = import_sheet(kind="substrates", content=substrate_sheet(rows, lots),
                          file_name="qc-parents.xlsx", actor=None, commit=True)
    assert report.committed, report.errors[:3]
    return list(Substrate.objects.order_by("id"))


def qc_values(n: int, pieces: list) -> dict:
    piece = pieces[n]
    return {"substrate": piece, "measured_on": piece.made_on + timedelta(days=1 + n % 30),
            "verdict": ("passed", "failed")[n % 7 == 0], "enhancement_factor": 1e5 * (1 + n % 90),
            "rsd_percent": 5 + n % 20, "analyte": ("Benzenethiol", "4-MBA")[n % 2],
            "laser_nm": (633, 785)[n % 2], "notes": ""}


def qc_sheet(rows: int, pieces: list) -> bytes:
    """One historical result for each of the first ``rows`` pieces."""
    return xlsx(QC_HEADER, (
        [v["substrate"].code, v["measured_on"], v["enhancement_factor"], v["rsd_percent"],
         v["verdict"], v["analyte"], v["laser_nm"], v["notes"]]
        for v in (qc_values(n, pieces) for n in range(rows))))


def qc_loop(rows: int, parents: list) -> None:
    """The QC rows through ``imported_qc_result_record`` in a plain loop, rolled back;
    ``parents``: the pieces."""
    from django.db import transaction

    from exchange.services import imported_qc_result_record

    with transaction.atomic():
        for n in range(rows):
            imported_qc_result_record(actor=None, source=f"bench row {n}",
                                      **qc_values(n, parents))
        transaction.set_rollback(True)


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


def rollback_deposition_runs(last_run_pk: int) -> None:
    """Remove the runs an import wrote (key above ``last_run_pk``) with their pieces, edges,
    flags and status changes, and release their templates again; what other kinds of the
    same benchmark made (the surface kinds' substrates) stays."""
    from inventory.models import (
        CodeCounter,
        DepositionRun,
        Flag,
        LineageEdge,
        StatusChange,
        Substrate,
        TemplateAssembly,
    )

    runs = DepositionRun.objects.filter(pk__gt=last_run_pk)
    pieces = Substrate.objects.filter(deposition_run__in=runs)
    templates = TemplateAssembly.objects.filter(pk__in=runs.values("template_id"))
    codes = [*runs.values_list("code", flat=True), *pieces.values_list("code", flat=True)]
    template_codes = list(templates.values_list("code", flat=True))
    for start in range(0, max(len(codes), len(template_codes)), 500):
        part = codes[start:start + 500]
        Flag.history.filter(target_code__in=part).delete()
        Flag.objects.filter(target_code__in=part).delete()
        LineageEdge.objects.filter(child_code__in=part).delete()
        StatusChange.objects.filter(record_code__in=template_codes[start:start + 500],
                                    to_status="consumed").delete()
    TemplateAssembly.history.filter(id__in=templates.values("pk"), status="consumed").delete()
    templates.update(status="released", version=1)
    Substrate.history.filter(id__in=pieces.values("pk")).delete()
    pieces.delete()
    DepositionRun.history.filter(id__gt=last_run_pk).delete()
    runs.delete()
    from exchange.models import SheetKey

    SheetKey.objects.filter(kind="deposition_runs").delete()
    for prefix, model in (("DEP", DepositionRun), ("SUB", Substrate), ("FLG", Flag)):
        last = model.objects.order_by("-pk").values_list("code", flat=True).first()
        CodeCounter.objects.filter(prefix=prefix).update(
            last_value=int(last.rsplit("-", 1)[1]) if last else 0)


def run_sheet(rows: int, bath: str, templates: list[str], on_target_C: float) -> bytes:
    return xlsx(RUN_HEADER, (
        [f"RUN-{n:06d}", templates[n], bath, v["metal"], v["electrons_per_atom"], v["mode"],
         v["electrode_area_cm2"], v["target_height_over_diameter"], v["charge_C"],
         v["made_on"], v["pieces"], v["piece_area_cm2"]]
        for n, v in ((n, run_values(n, on_target_C)) for n in range(rows))))


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
            before = import_baseline(kind)
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
                rollback_import(kind, before)


def import_model(kind: str):
    from exchange.kinds import KINDS

    return KINDS[kind].model


def import_baseline(kind: str) -> tuple[int, int | None]:
    """The kind's highest key and code counter before an import."""
    from inventory.models import CodeCounter

    model = import_model(kind)
    prefix = getattr(model, "CODE_PREFIX", None)
    counter = CodeCounter.objects.filter(prefix=prefix).values_list("last_value", flat=True)
    return (model.objects.order_by("-pk").values_list("pk", flat=True).first() or 0,
            counter.first() if prefix else None)


def rollback_import(kind: str, before: tuple[int, int | None]) -> None:
    """Remove what an import wrote, so the next one starts from the same records."""
    from exchange.models import SheetKey, SheetUvVisReading
    from inventory.models import CodeCounter, LineageEdge

    if kind == "deposition_runs":
        return rollback_deposition_runs(before[0])
    model = import_model(kind)
    last_pk, last_code = before
    made = model.objects.filter(pk__gt=last_pk)
    if kind == "colloid_batches":
        SheetUvVisReading.history.filter(batch_id__in=made.values("pk")).delete()
        SheetUvVisReading.objects.filter(batch__in=made).delete()
    if last_code is not None:
        codes = list(made.values_list("code", flat=True))
        for start in range(0, len(codes), 500):
            LineageEdge.objects.filter(child_code__in=codes[start:start + 500]).delete()
        CodeCounter.objects.filter(prefix=model.CODE_PREFIX).update(last_value=last_code)
    model.history.filter(id__gt=last_pk).delete()
    made.delete()
    SheetKey.objects.filter(kind=kind).delete()


# kind -> (parents made before the timed part, sheet of n rows, reference loop of n rows)
CHAIN_KINDS = {
    "templates": (lambda rows: template_parents(), template_sheet, template_loop),
    "substrates": (lambda rows: released_lots("purchased_substrate", 2), substrate_sheet,
                   substrate_loop),
    "qc_results": (qc_parents, qc_sheet, qc_loop),
}


# ---------------------------------------------------------------------------------------
# Linker layers and particle attachments: steps that move stored substrates to a new stage
# ---------------------------------------------------------------------------------------

SURFACE_KINDS = ("linker_layers", "particle_attachments")
LINKER_HEADER = ["Code or your ID", "Linker lot", "Solvent lot", "Substrates",
                 "Concentration (mM)", "Immersion (h)", "Made on"]
ATTACHMENT_HEADER = ["Code or your ID", "Substrate", "Colloid batch", "Immersion (min)",
                     "Made on"]
PIECES_PER_RUN = 200  # the most a deposition run yields


def surface_parents(pieces: int) -> dict:
    """Released linker, solvent and colloid, and ``pieces`` substrates of flat-film
    deposition runs (200 a run), made before the timed part: each run and its first piece
    through the service, the other pieces inserted in bulk like the service's (a code each,
    history row, "cut from" edge), which is quicker than the service's one at a time."""
    from django.db import transaction
    from simple_history.utils import bulk_create_with_history

    from inventory import services
    from inventory.codes import code_next, codes_in_blocks
    from inventory.models import LineageEdge, Substrate

    def released(record):
        return services.record_transition(actor=None, record=record, to_status="released")

    lots = {kind: released(services.reagent_lot_receive(
        actor=None, name=f"bench {kind}", kind=kind, received_on=date(2026, 2, 20)))
        for kind in ("linker_thiol", "solvent", "base_slide", "plating_bath")}
    colloid = released(services.nanoparticle_batch_make(
        actor=None, metal="Ag", synthesis_method="citrate", volume_mL=500,
        made_on=date(2026, 4, 30)))
    made_on = date(2026, 3, 1)
    codes: list[str] = []
    with transaction.atomic(), codes_in_blocks():
        while len(codes) < pieces:
            run, (first,) = services.deposition_run_record(
                actor=None, bath_lot=lots["plating_bath"], base_slide_lot=lots["base_slide"],
                metal="Au", electrons_per_atom=1, mode="potentiostatic",
                setpoint_potential_V=-0.7, electrode_area_cm2=1.0, made_on=made_on, pieces=1)
            more = [Substrate(code=code_next(Substrate.CODE_PREFIX), deposition_run=run,
                              piece_label=f"{run.code}/{n}", made_on=made_on)
                    for n in range(2, min(PIECES_PER_RUN, pieces - len(codes)) + 1)]
            bulk_create_with_history(more, Substrate, batch_size=500)
            LineageEdge.objects.bulk_create([
                LineageEdge(parent_code=run.code, child_code=piece.code, role="cut from",
                            used_on=made_on) for piece in more])
            codes += [first.code, *(piece.code for piece in more)]
    return {"linker": lots["linker_thiol"].code, "solvent": lots["solvent"].code,
            "colloid": colloid.code, "substrates": codes}


def linker_values(n: int) -> dict:
    return {"concentration_mM": 0.5 + (n % 4) * 0.5, "immersion_h": 12 + n % 12,
            "made_on": date(2026, 3, 5) + timedelta(days=n % 30)}


def attachment_values(n: int) -> dict:
    return {"immersion_min": 30 + n % 60, "made_on": date(2026, 5, 1) + timedelta(days=n % 5)}


def linker_sheet(parents: dict, substrates: list[str], first: int = 0) -> bytes:
    """One layer a row on one substrate, IDs from ``first``; every second row names the
    solvent."""
    rows = []
    for n, code in enumerate(substrates, start=first):
        v = linker_values(n)
        rows.append([f"LL-{n:06d}", parents["linker"], parents["solvent"] if n % 2 else None,
                     code, v["concentration_mM"], v["immersion_h"], v["made_on"]])
    return xlsx(LINKER_HEADER, rows)


def attachment_sheet(parents: dict, substrates: list[str], first: int = 0) -> bytes:
    rows = []
    for n, code in enumerate(substrates, start=first):
        v = attachment_values(n)
        rows.append([f"PA-{n:06d}", code, parents["colloid"], v["immersion_min"], v["made_on"]])
    return xlsx(ATTACHMENT_HEADER, rows)


def surface_loop(kind: str, parents: dict, substrates: list[str]) -> None:
    """The rows of ``kind`` through their service in a plain loop (no sheet), rolled back."""
    from django.db import transaction

    from inventory.models import NanoparticleBatch, ReagentLot, Substrate
    from inventory.services import linker_layer_apply, particle_attach

    with transaction.atomic():
        lots = {lot.code: lot for lot in ReagentLot.objects.filter(
            code__in=[parents["linker"], parents["solvent"]])}
        colloid = NanoparticleBatch.objects.get(code=parents["colloid"])
        pieces = Substrate.objects.in_bulk(substrates, field_name="code")
        for n, code in enumerate(substrates):
            if kind == "linker_layers":
                linker_layer_apply(actor=None, linker_lot=lots[parents["linker"]],
                                   solvent_lot=lots[parents["solvent"]] if n % 2 else None,
                                   substrates=[pieces[code]], **linker_values(n))
            else:
                particle_attach(actor=None, substrate=pieces[code], batch=colloid,
                                **attachment_values(n))
        transaction.set_rollback(True)


def surface_kind(result: dict, kind: str, parents: dict, *, rows: int, reference_rows: int,
                 per_row_rows: int, timed_kind: bool) -> None:
    """Reference loop, then dry run and import of ``kind`` by the bulk path (``rows``) and the
    per-row path (the next ``per_row_rows`` substrates); imports are kept, since the
    attachments need substrates with a layer.  Not ``timed_kind``: only the imports, untimed.
    """
    from exchange.importer import import_sheet

    make = linker_sheet if kind == "linker_layers" else attachment_sheet
    bulk_pieces = parents["substrates"][:rows]
    per_row_pieces = parents["substrates"][rows:rows + per_row_rows]
    runs = [("bulk", make(parents, bulk_pieces), len(bulk_pieces))]
    if per_row_pieces:
        runs.append(("per_row", make(parents, per_row_pieces, first=rows),
                     len(per_row_pieces)))
    figures = result.setdefault(kind, {}) if timed_kind else {}
    if timed_kind:
        figures["file_bytes"] = len(runs[0][1])
        _, wall, cpu = timed(partial(surface_loop, kind, parents,
                                     bulk_pieces[:reference_rows]))
        figures["reference_ms_per_row"] = {"wall": 1000 * wall / reference_rows,
                                           "cpu": 1000 * cpu / reference_rows}
        print(f"{kind} reference loop: {reference_rows} rows, {wall:.1f} s wall, "
              f"{cpu:.1f} s CPU, load {loadavg()}", flush=True)
    for path, content, count in runs:
        for label, commit in (("dry_run", False), ("import", True)):
            if not (timed_kind or commit):
                continue
            report, wall, cpu = timed(partial(
                import_sheet, kind=kind, content=content, file_name=f"{path}-{label}.xlsx",
                actor=None, commit=commit, bulk=path == "bulk"))
            assert report.ok and len(report.created) == count, report.errors[:3]
            if timed_kind:
                per_row_cpu = 1000 * cpu / count
                figures[f"{path}_{label}"] = {
                    "rows": count, "wall_s": wall, "cpu_s": cpu, "cpu_ms_per_row": per_row_cpu,
                    "cpu_ratio_to_reference": per_row_cpu / figures["reference_ms_per_row"]["cpu"],
                    "loadavg_after": loadavg()}
                print(f"{kind} {path} {label}: {count} rows, {wall:.1f} s wall, {cpu:.1f} s "
                      f"CPU, load {loadavg()}", flush=True)


def surface_kinds(result: dict, kinds: list[str], args) -> None:
    """Linker layers, then attachments on the substrates the linker sheet gave a layer."""
    parents, wall, cpu = timed(partial(surface_parents, args.rows + args.per_row_rows))
    result["surface_setup"] = {"substrates": len(parents["substrates"]), "wall_s": wall,
                               "cpu_s": cpu}
    print(f"surface setup: {len(parents['substrates'])} substrates, {wall:.1f} s", flush=True)
    for kind in SURFACE_KINDS:
        surface_kind(result, kind, parents, rows=args.rows, reference_rows=args.reference_rows,
                     per_row_rows=args.per_row_rows, timed_kind=kind in kinds)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--db", choices=("sqlite", "postgres"), required=True)
    parser.add_argument("--rows", type=int, default=10_000)
    parser.add_argument("--reference-rows", type=int, default=2_000)
    parser.add_argument("--per-row-rows", type=int, default=2_000,
                        help="rows of the per-row path's dry run and import (0: skip)")
    parser.add_argument("--kinds", nargs="+", default=["sphere_lots", "colloid_batches"],
                        choices=["sphere_lots", "colloid_batches", "deposition_runs",
                                 *SURFACE_KINDS, *CHAIN_KINDS])
    parser.add_argument("--django-validation", action="store_true",
                        help="also time the service loop with Django's constraint queries")
    parser.add_argument("--pg-database", default=PG_DATABASE,
                        help="PostgreSQL database to drop and fill (default %(default)s)")
    parser.add_argument("--out", default=None, help="result file (default out/sheet-import-DB)")
    args = parser.parse_args()
    configure(args.db, args.pg_database)

    result = {"db": args.db, "rows": args.rows, "loadavg_before": loadavg()}
    if any(kind in SURFACE_KINDS for kind in args.kinds):
        surface_kinds(result, args.kinds, args)
    for kind in (kind for kind in args.kinds if kind not in SURFACE_KINDS):
        result[kind] = {}
        if kind == "sphere_lots":
            content = sheet(args.rows)
            per_row_content = sheet(args.per_row_rows) if args.per_row_rows else b""
            loop = reference_loop
        elif kind in CHAIN_KINDS:
            make_parents, make_sheet, chain_loop = CHAIN_KINDS[kind]
            parents = make_parents(max(args.rows, args.reference_rows))
            content = make_sheet(args.rows, parents)
            per_row_content = make_sheet(args.per_row_rows, parents) if args.per_row_rows \
                else b""
            loop = partial(chain_loop, parents=parents)
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
