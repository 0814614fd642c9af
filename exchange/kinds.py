"""The record kinds a lab keeps in sheets: their columns (with units) and how a row is written.

Each kind lists its columns once; the template, the header recognition, the reading of a
row and the sheet export all come from that list.  A row is written by the service the
pages and API call (inventory.services, qc.services, exchange.services), so every check of
those services applies to every row.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import date

from django.db.models import Model

from inventory import services
from inventory.models import (
    DepositionRun,
    LinkerLayer,
    NanoparticleBatch,
    ParticleAttachment,
    ReagentKind,
    ReagentLot,
    SphereLot,
    Substrate,
    TemplateAssembly,
)
from qc.models import QcMeasurement, UvVisRecord

from . import services as exchange_services
from .cells import split_header
from .models import ImportedQcResult, SheetUvVisReading


@dataclass(frozen=True)
class Column:
    """One column: the field it fills, its label, type, unit and the header variants known."""

    field: str
    label: str
    type: str = "text"  # text | number | integer | date | choice | ref | refs
    unit: str | None = None
    required: bool = False
    aliases: tuple[str, ...] = ()
    choices: tuple = ()
    ref: str | None = None  # the kind a ref/refs column points at
    example: object = None
    # Compared with an existing record's field when a row matches it (None: not compared).
    compare: bool = True

    @property
    def header(self) -> str:
        return f"{self.label} ({self.unit})" if self.unit else self.label


def normalise(header: str) -> str:
    """'Nominal diameter (nm)' and 'nominal_diameter' both -> 'nominal diameter'."""
    name, _unit = split_header(str(header))
    return re.sub(r"[^a-z0-9%]+", " ", name.lower()).strip()


_UNIT_SUFFIX = re.compile(r"_(nm|um|mL|uL|cm2|mM|h|min|s|V|mA|percent|percent_w_v|C)$")


def header_variants(column: Column) -> set[str]:
    names = {column.label, column.field, _UNIT_SUFFIX.sub("", column.field), *column.aliases}
    return {normalise(name) for name in names}


CODE = Column("code", "Code or your ID", aliases=("code", "id", "your id", "record code",
                                                  "sample id"), compare=False,
              example="HL-2026-001")
NOTES = Column("notes", "Notes", aliases=("comment", "comments", "remarks"), example="")


@dataclass
class Kind:
    name: str
    label: str
    model: type[Model]
    columns: tuple[Column, ...]
    create: Callable  # (values: dict, ctx) -> the record made
    # Fields that identify an existing lot besides its code ("lot number").
    lot_number: tuple[str, ...] = ()
    find: Callable | None = None  # (values, ctx) -> existing record or None
    extra: Callable | None = None  # (record, values, ctx, created: bool) -> list of changes
    export_value: dict[str, Callable] = field(default_factory=dict)  # field -> (record) -> value
    export_queryset: Callable | None = None

    def column(self, name: str) -> Column | None:
        return next((c for c in self.columns if c.field == name), None)


def _pick(values: dict, *names: str) -> dict:
    return {name: values[name] for name in names if values.get(name) is not None}


def _text(values: dict, name: str) -> str:
    return values.get(name) or ""


# ---------------------------------------------------------------------------------------
# Materials
# ---------------------------------------------------------------------------------------

def _sphere_lot(values, ctx):
    return services.sphere_lot_receive(
        actor=ctx.actor, material=values["material"],
        nominal_diameter_nm=values["nominal_diameter_nm"],
        solids_percent_w_v=values["solids_percent_w_v"], received_on=values["received_on"],
        supplier=_text(values, "supplier"), supplier_lot=_text(values, "supplier_lot"),
        notes=_text(values, "notes"), **_pick(values, "size_cv_percent", "volume_mL"))


SPHERE_LOTS = Kind(
    "sphere_lots", "Sphere lots", SphereLot, (
        CODE,
        Column("material", "Material", "choice", required=True,
               choices=tuple(SphereLot.Material.choices), example="polystyrene"),
        Column("nominal_diameter_nm", "Nominal diameter", "number", "nm", required=True,
               aliases=("diameter", "size", "sphere diameter"), example=600),
        Column("size_cv_percent", "Size CV", "number", "%", aliases=("cv", "size cv"),
               example=2.5),
        Column("solids_percent_w_v", "Solids", "number", "%", required=True,
               aliases=("solids content", "solids w v", "solids percent"), example=10.0),
        Column("supplier", "Supplier", aliases=("vendor", "manufacturer"),
               example="Invented Colloids"),
        Column("supplier_lot", "Supplier lot number", aliases=("lot", "lot number", "lot no",
                                                               "batch number"),
               example="PS600-118"),
        Column("received_on", "Received on", "date", required=True,
               aliases=("received", "date received", "receipt date"), example="2026-01-15"),
        Column("volume_mL", "Volume", "number", "mL", aliases=("volume",), example=15),
        NOTES,
    ), _sphere_lot, lot_number=("supplier", "supplier_lot"))


def _reagent_lot(values, ctx):
    return services.reagent_lot_receive(
        actor=ctx.actor, name=values["name"], kind=values["kind"],
        supplier=_text(values, "supplier"), supplier_lot=_text(values, "supplier_lot"),
        ghs_hazard_codes=_text(values, "ghs_hazard_codes"),
        quantity_unit=_text(values, "quantity_unit"), notes=_text(values, "notes"),
        prepared_from=values.get("prepared_from") or (),
        **_pick(values, "received_on", "opened_on", "prepared_on", "quantity",
                "concentration_mM"))


REAGENT_LOTS = Kind(
    "reagent_lots", "Reagent lots", ReagentLot, (
        CODE,
        Column("name", "Name", required=True, aliases=("reagent", "chemical", "product"),
               example="Gold sulfite plating bath, Au(I)"),
        Column("kind", "Kind", "choice", required=True, choices=tuple(ReagentKind.choices),
               aliases=("type", "category"), example="plating_bath"),
        Column("supplier", "Supplier", aliases=("vendor", "manufacturer"),
               example="Invented Plating Supplies"),
        Column("supplier_lot", "Supplier lot number", aliases=("lot", "lot number", "lot no"),
               example="HL-AU-2207"),
        Column("received_on", "Received on", "date", aliases=("received", "date received"),
               example="2026-01-20"),
        Column("opened_on", "Opened on", "date", aliases=("opened", "date opened")),
        Column("prepared_on", "Prepared on", "date", aliases=("prepared", "date prepared")),
        Column("quantity", "Quantity", "number", aliases=("amount",)),
        Column("quantity_unit", "Quantity unit", aliases=("unit", "amount unit")),
        Column("concentration_mM", "Concentration", "number", "mM",
               aliases=("concentration", "conc")),
        Column("ghs_hazard_codes", "GHS hazard codes", aliases=("hazards", "h statements",
                                                               "ghs"),
               example="H290 H319 H412"),
        Column("prepared_from", "Prepared from (lots)", "refs", ref="reagent_lots",
               compare=False),
        NOTES,
    ), _reagent_lot, lot_number=("supplier", "supplier_lot"),
    export_value={"prepared_from": lambda r: [p.code for p in r.prepared_from.all()]})


# ---------------------------------------------------------------------------------------
# Colloids with their optional UV-vis reading
# ---------------------------------------------------------------------------------------

UVVIS_FIELDS = ("uvvis_measured_on", "uvvis_peak_nm", "uvvis_peak_absorbance",
                "uvvis_absorbance_450", "uvvis_dilution_factor", "uvvis_path_length_cm")


def _colloid(values, ctx):
    return services.nanoparticle_batch_make(
        actor=ctx.actor, metal=values["metal"], synthesis_method=values["synthesis_method"],
        volume_mL=values["volume_mL"], made_on=values["made_on"],
        source_lots=values.get("source_lots") or (), notes=_text(values, "notes"),
        **_pick(values, "target_diameter_nm"))


def _colloid_reading(batch, values, ctx, created: bool) -> list[str]:
    """Add the row's UV-vis reading (if it has one and the batch lacks it)."""
    if values.get("uvvis_peak_nm") is None:
        return []
    from inventory.errors import refusal

    for name in ("uvvis_measured_on", "uvvis_peak_absorbance"):
        if values.get(name) is None:
            raise refusal(name, "A UV-vis reading needs its date and the absorbance at the "
                                "peak.", "required")
    if not created and SheetUvVisReading.objects.filter(
            batch=batch, measured_on=values["uvvis_measured_on"],
            peak_nm=values["uvvis_peak_nm"]).exists():
        return []
    exchange_services.sheet_uvvis_reading_record(
        actor=ctx.actor, batch=batch, measured_on=values["uvvis_measured_on"],
        peak_nm=values["uvvis_peak_nm"], peak_absorbance=values["uvvis_peak_absorbance"],
        absorbance_450=values.get("uvvis_absorbance_450"),
        dilution_factor=values.get("uvvis_dilution_factor") or 1.0,
        path_length_cm=values.get("uvvis_path_length_cm") or 1.0, source=ctx.source)
    return ["UV-vis reading added"]


def _first_reading(batch) -> dict:
    """The batch's first UV-vis figures (a sheet reading or a file's), as sheet columns."""
    sheet = batch.sheet_uvvis_readings.order_by("measured_on", "id").first()
    if sheet is not None:
        scale = sheet.dilution_factor / sheet.path_length_cm
        return {"uvvis_measured_on": sheet.measured_on, "uvvis_peak_nm": sheet.peak_nm,
                "uvvis_peak_absorbance": sheet.peak_absorbance_1cm / scale,
                "uvvis_absorbance_450": None if sheet.absorbance_450_1cm is None
                else sheet.absorbance_450_1cm / scale,
                "uvvis_dilution_factor": sheet.dilution_factor,
                "uvvis_path_length_cm": sheet.path_length_cm}
    record = UvVisRecord.objects.filter(batch=batch).order_by("measured_on", "id").first()
    if record is None:
        return {}
    return {"uvvis_measured_on": record.measured_on, "uvvis_peak_nm": record.peak_nm,
            "uvvis_peak_absorbance": record.peak_absorbance_1cm,
            "uvvis_absorbance_450": record.absorbance_450_1cm,
            "uvvis_dilution_factor": 1.0, "uvvis_path_length_cm": 1.0}


def _reading_value(name):
    return lambda batch: _first_reading(batch).get(name)


COLLOID_BATCHES = Kind(
    "colloid_batches", "Colloid batches", NanoparticleBatch, (
        CODE,
        Column("metal", "Metal", "choice", required=True,
               choices=(("Ag", "silver"), ("Au", "gold"), ("Cu", "copper")), example="Ag"),
        Column("synthesis_method", "Synthesis", "choice", required=True,
               choices=tuple(NanoparticleBatch.Method.choices),
               aliases=("method", "synthesis method", "route"), example="citrate"),
        Column("volume_mL", "Volume made", "number", "mL", required=True,
               aliases=("volume",), example=100),
        Column("target_diameter_nm", "Target diameter", "number", "nm",
               aliases=("target size", "target diameter"), example=40),
        Column("made_on", "Made on", "date", required=True,
               aliases=("date", "made", "synthesis date", "date made"), example="2026-01-25"),
        Column("source_lots", "Reagent lots used", "refs", ref="reagent_lots",
               aliases=("source lots", "reagents", "precursor lots"), compare=False),
        Column("uvvis_measured_on", "UV-vis measured on", "date", compare=False,
               aliases=("uv vis date", "uvvis date"), example="2026-01-25"),
        Column("uvvis_peak_nm", "UV-vis peak", "number", "nm", compare=False,
               aliases=("peak", "lspr peak", "plasmon peak", "lambda max", "spr peak"),
               example=404.0),
        Column("uvvis_peak_absorbance", "Absorbance at peak", "number", compare=False,
               aliases=("a peak", "peak absorbance", "a spr", "absorbance peak"), example=0.95),
        Column("uvvis_absorbance_450", "Absorbance at 450 nm", "number", compare=False,
               aliases=("a450", "a 450", "absorbance 450"), example=0.41),
        Column("uvvis_dilution_factor", "UV-vis dilution factor", "number", compare=False,
               aliases=("dilution", "dilution factor"), example=10),
        Column("uvvis_path_length_cm", "UV-vis path length", "number", "cm", compare=False,
               aliases=("path length", "cuvette"), example=1.0),
        NOTES,
    ), _colloid, extra=_colloid_reading,
    export_value={"source_lots": lambda r: [lot.code for lot in r.source_lots.all()],
                  **{name: _reading_value(name) for name in UVVIS_FIELDS}})


# ---------------------------------------------------------------------------------------
# Fabrication chain
# ---------------------------------------------------------------------------------------

def _template(values, ctx):
    return services.template_assemble(
        actor=ctx.actor, sphere_lot=values["sphere_lot"], base_slide_lot=values["base_slide_lot"],
        method=values["method"], slide_area_cm2=values["slide_area_cm2"],
        made_on=values["made_on"], notes=_text(values, "notes"),
        **_pick(values, "coverage_percent", "suspension_volume_uL"))


TEMPLATES = Kind(
    "templates", "Template assemblies", TemplateAssembly, (
        CODE,
        Column("sphere_lot", "Sphere lot", "ref", ref="sphere_lots", required=True,
               aliases=("spheres", "sphere lot code"), compare=False, example="SPH-00001"),
        Column("base_slide_lot", "Base slide lot", "ref", ref="reagent_lots", required=True,
               aliases=("slide lot", "base slides", "slides"), compare=False,
               example="RGT-00003"),
        Column("method", "Method", "choice", required=True,
               choices=tuple(TemplateAssembly.Method.choices), example="interface_transfer"),
        Column("slide_area_cm2", "Slide area", "number", "cm²", required=True,
               aliases=("area", "slide area"), example=2.5),
        Column("coverage_percent", "Coverage", "number", "%", aliases=("coverage",),
               example=92.0),
        Column("suspension_volume_uL", "Suspension volume", "number", "µL",
               aliases=("suspension volume", "volume dispensed")),
        Column("made_on", "Made on", "date", required=True, aliases=("date", "made"),
               example="2026-02-01"),
        NOTES,
    ), _template)


def _run(values, ctx):
    run, _pieces = services.deposition_run_record(
        actor=ctx.actor, bath_lot=values["bath_lot"], metal=values["metal"],
        electrons_per_atom=values["electrons_per_atom"], mode=values["mode"],
        electrode_area_cm2=values["electrode_area_cm2"], made_on=values["made_on"],
        pieces=values["pieces"], template=values.get("template"),
        base_slide_lot=values.get("base_slide_lot"), notes=_text(values, "notes"),
        **_pick(values, "current_efficiency", "setpoint_potential_V", "setpoint_current_mA",
                "target_height_over_diameter", "piece_area_cm2"))
    return run


def _first_piece_area(run):
    piece = run.substrates.order_by("id").first()
    return None if piece is None else piece.area_cm2


DEPOSITION_RUNS = Kind(
    "deposition_runs", "Deposition runs", DepositionRun, (
        CODE,
        Column("template", "Template", "ref", ref="templates", compare=False,
               aliases=("template code",), example="TPL-00001"),
        Column("base_slide_lot", "Base slide lot (flat film)", "ref", ref="reagent_lots",
               compare=False, aliases=("flat slide lot",)),
        Column("bath_lot", "Plating bath lot", "ref", ref="reagent_lots", required=True,
               compare=False, aliases=("bath", "bath lot", "plating bath"),
               example="RGT-00001"),
        Column("metal", "Metal", required=True, aliases=("metal deposited",), example="Au"),
        Column("electrons_per_atom", "Electrons per atom", "integer", required=True,
               aliases=("n", "electrons", "z"), example=1),
        Column("current_efficiency", "Current efficiency", "number",
               aliases=("efficiency", "faradaic efficiency"), example=1.0),
        Column("mode", "Mode", "choice", required=True,
               choices=tuple(DepositionRun.Mode.choices), example="potentiostatic"),
        Column("setpoint_potential_V", "Set potential", "number", "V",
               aliases=("potential", "setpoint potential"), example=-0.72),
        Column("setpoint_current_mA", "Set current", "number", "mA",
               aliases=("current", "setpoint current")),
        Column("electrode_area_cm2", "Electrode area", "number", "cm²", required=True,
               aliases=("area", "electrode area"), example=1.0),
        Column("target_height_over_diameter", "Target h/D", "number",
               aliases=("target h d", "target height over diameter"), example=0.5),
        Column("made_on", "Made on", "date", required=True, aliases=("date", "made"),
               example="2026-02-02"),
        Column("pieces", "Pieces cut", "integer", required=True, compare=False,
               aliases=("pieces", "number of pieces"), example=4),
        Column("piece_area_cm2", "Piece area", "number", "cm²", compare=False,
               aliases=("piece area",), example=0.25),
        NOTES,
    ), _run, export_value={"pieces": lambda r: r.substrates.count(),
                           "piece_area_cm2": _first_piece_area})


def _piece_number(label: str) -> str:
    return label.rsplit("/", 1)[-1].strip()


def _find_piece(values, ctx):
    """A run's pieces are made with the run: a row naming a run finds its piece by number."""
    run = values.get("deposition_run")
    if run is None:
        return None
    from inventory.errors import refusal

    number = _piece_number(values.get("piece_label") or "")
    for piece in run.substrates.all():
        if _piece_number(piece.piece_label) == number:
            return piece
    raise refusal("piece_label", f"{run.code} has no piece '{number}': pieces are made with "
                                 "their deposition run (give the number after the '/').",
                  "parent_missing")


def _purchased_piece(values, ctx):
    from inventory.errors import refusal

    if values.get("purchased_lot") is None:
        raise refusal("purchased_lot", "Give the deposition run the piece was cut from, or the "
                                       "purchased substrate lot.", "required")
    (piece,) = services.substrate_receive(actor=ctx.actor, purchased_lot=values["purchased_lot"],
                                          pieces=1, received_on=values["made_on"])
    changes = {name: values[name] for name in ("area_cm2", "notes") if values.get(name)}
    number = _piece_number(values.get("piece_label") or "")
    if number and piece.piece_label != f"{values['purchased_lot'].code}/{number}":
        changes["piece_label"] = f"{values['purchased_lot'].code}/{number}"
    if changes:
        piece = services.record_amend(actor=ctx.actor, record=piece, changes=changes,
                                      reason=ctx.source, expected_version=piece.version)
    return piece


SUBSTRATES = Kind(
    "substrates", "Substrates and pieces", Substrate, (
        CODE,
        Column("deposition_run", "Deposition run", "ref", ref="deposition_runs", compare=False,
               aliases=("run", "run code"), example="DEP-00001"),
        Column("piece_label", "Piece", compare=False, aliases=("piece", "piece number"),
               example="DEP-00001/1"),
        Column("purchased_lot", "Purchased substrate lot", "ref", ref="reagent_lots",
               compare=False, aliases=("purchased lot",)),
        Column("made_on", "Made or received on", "date", required=True, compare=False,
               aliases=("date", "made on", "received on"), example="2026-02-02"),
        Column("area_cm2", "Area", "number", "cm²", aliases=("area",), example=0.25),
        NOTES,
    ), _purchased_piece, find=_find_piece)


def _linker(values, ctx):
    return services.linker_layer_apply(
        actor=ctx.actor, linker_lot=values["linker_lot"], substrates=values["substrates"],
        concentration_mM=values["concentration_mM"], immersion_h=values["immersion_h"],
        made_on=values["made_on"], solvent_lot=values.get("solvent_lot"),
        notes=_text(values, "notes"))


LINKER_LAYERS = Kind(
    "linker_layers", "Linker layers", LinkerLayer, (
        CODE,
        Column("linker_lot", "Linker lot", "ref", ref="reagent_lots", required=True,
               compare=False, aliases=("thiol lot", "linker"), example="RGT-00005"),
        Column("solvent_lot", "Solvent lot", "ref", ref="reagent_lots", compare=False,
               aliases=("solvent",), example="RGT-00006"),
        Column("substrates", "Substrates", "refs", ref="substrates", required=True,
               compare=False, aliases=("pieces", "substrate codes"), example="SUB-00001"),
        Column("concentration_mM", "Concentration", "number", "mM", required=True,
               aliases=("concentration",), example=1.0),
        Column("immersion_h", "Immersion", "number", "h", required=True,
               aliases=("immersion time", "time"), example=18),
        Column("made_on", "Made on", "date", required=True, aliases=("date",),
               example="2026-02-03"),
        NOTES,
    ), _linker, export_value={"substrates": lambda r: [s.code for s in r.substrates.all()]})


def _attachment(values, ctx):
    return services.particle_attach(
        actor=ctx.actor, substrate=values["substrate"], batch=values["batch"],
        immersion_min=values["immersion_min"], made_on=values["made_on"],
        notes=_text(values, "notes"))


PARTICLE_ATTACHMENTS = Kind(
    "particle_attachments", "Particle attachments", ParticleAttachment, (
        CODE,
        Column("substrate", "Substrate", "ref", ref="substrates", required=True, compare=False,
               aliases=("piece",), example="SUB-00001"),
        Column("batch", "Colloid batch", "ref", ref="colloid_batches", required=True,
               compare=False, aliases=("colloid", "batch", "nanoparticle batch"),
               example="NPB-00001"),
        Column("immersion_min", "Immersion", "number", "min", required=True,
               aliases=("immersion time", "time"), example=60),
        Column("made_on", "Made on", "date", required=True, aliases=("date",),
               example="2026-02-04"),
        NOTES,
    ), _attachment)


def _qc_result(values, ctx):
    return exchange_services.imported_qc_result_record(
        actor=ctx.actor, substrate=values["substrate"], measured_on=values["measured_on"],
        verdict=values["verdict"], analyte=_text(values, "analyte"),
        notes=_text(values, "notes"), source=ctx.source,
        **_pick(values, "enhancement_factor", "rsd_percent", "laser_nm"))


def _find_qc_result(values, ctx):
    substrate = values.get("substrate")
    if substrate is None:
        return None
    return ImportedQcResult.objects.filter(substrate=substrate, measured_on=values["measured_on"],
                                           analyte=values.get("analyte") or "").first()


def _qc_rows():
    """Imported figures and the QC measurements computed here, as one QC log."""
    imported = list(ImportedQcResult.objects.select_related("substrate").order_by("id"))
    measured = list(QcMeasurement.objects.select_related("substrate", "analyte").order_by("id"))
    return imported + measured


QC_RESULTS = Kind(
    "qc_results", "QC results (imported figures)", ImportedQcResult, (
        Column("substrate", "Substrate", "ref", ref="substrates", required=True, compare=False,
               aliases=("piece", "sample"), example="SUB-00001"),
        Column("measured_on", "Measured on", "date", required=True, compare=False,
               aliases=("date", "qc date"), example="2026-02-05"),
        Column("enhancement_factor", "Enhancement factor", "number",
               aliases=("ef", "enhancement", "sers ef"), example=2.1e6),
        Column("rsd_percent", "RSD", "number", "%", aliases=("rsd", "relative sd",
                                                             "uniformity rsd"), example=8.5),
        Column("verdict", "Verdict", "choice", required=True,
               choices=(("passed", "passed"), ("failed", "failed"), ("passed", "pass"),
                        ("failed", "fail")), aliases=("result", "pass fail", "outcome"),
               example="passed"),
        Column("analyte", "Analyte", compare=False, aliases=("probe", "reference analyte"),
               example="Benzenethiol"),
        Column("laser_nm", "Laser wavelength", "number", "nm", aliases=("laser", "excitation"),
               example=785),
        NOTES,
    ), _qc_result, find=_find_qc_result, export_queryset=_qc_rows,
    export_value={"verdict": lambda r: r.verdict if isinstance(r, ImportedQcResult)
                  else ("passed" if r.passed else "failed"),
                  "analyte": lambda r: r.analyte if isinstance(r, ImportedQcResult)
                  else r.analyte.name})


KINDS: dict[str, Kind] = {kind.name: kind for kind in (
    SPHERE_LOTS, REAGENT_LOTS, COLLOID_BATCHES, TEMPLATES, DEPOSITION_RUNS, SUBSTRATES,
    LINKER_LAYERS, PARTICLE_ATTACHMENTS, QC_RESULTS)}


def export_value(kind: Kind, column: Column, record) -> object:
    """The value a record shows in ``column`` of its kind's sheet (codes for references)."""
    if column.field in kind.export_value:
        value = kind.export_value[column.field](record)
    else:
        value = getattr(record, column.field, None)
    if isinstance(value, Model):
        value = getattr(value, "code", str(value))
    if isinstance(value, list):
        value = "; ".join(value)
    if isinstance(value, float) and not math.isfinite(value):
        value = None
    return value


def export_rows(kind: Kind) -> list[list]:
    records = (kind.export_queryset() if kind.export_queryset
               else kind.model.objects.order_by("id"))
    return [[export_value(kind, column, record) for column in kind.columns] for record in records]


def example_row(kind: Kind) -> list:
    return [column.example.isoformat() if isinstance(column.example, date) else column.example
            for column in kind.columns]
