"""Sheet kinds of materials: sphere lots, reagent lots, colloid batches with a UV-vis reading."""

from __future__ import annotations

from inventory import services
from inventory.errors import refusal
from inventory.models import NanoparticleBatch, ReagentKind, ReagentLot, SphereLot
from qc.services.colloid import silver_calibration_active

from .. import services as exchange_services
from ..models import SheetUvVisReading
from .base import CODE, NOTES, Column, Kind, pick, text_of


def _sphere_lot_values(values) -> dict:
    return dict(
        material=values["material"], nominal_diameter_nm=values["nominal_diameter_nm"],
        solids_percent_w_v=values["solids_percent_w_v"], received_on=values["received_on"],
        supplier=text_of(values, "supplier"), supplier_lot=text_of(values, "supplier_lot"),
        notes=text_of(values, "notes"), **pick(values, "size_cv_percent", "volume_mL"))


def _sphere_lot(values, ctx):
    return services.sphere_lot_receive(actor=ctx.actor, **_sphere_lot_values(values))


def _sphere_lot_new(values, ctx):
    return services.sphere_lot_check(actor=ctx.actor, many=ctx.many,
                                     **_sphere_lot_values(values))


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
    ), _sphere_lot, lot_number=("supplier", "supplier_lot"), prepare=_sphere_lot_new)


def _reagent_lot_values(values) -> dict:
    return dict(
        name=values["name"], kind=values["kind"],
        supplier=text_of(values, "supplier"), supplier_lot=text_of(values, "supplier_lot"),
        ghs_hazard_codes=text_of(values, "ghs_hazard_codes"),
        quantity_unit=text_of(values, "quantity_unit"), notes=text_of(values, "notes"),
        prepared_from=values.get("prepared_from") or (),
        **pick(values, "received_on", "opened_on", "prepared_on", "quantity",
                "concentration_mM"))


def _reagent_lot(values, ctx):
    return services.reagent_lot_receive(actor=ctx.actor, **_reagent_lot_values(values))


def _reagent_lot_new(values, ctx):
    return services.reagent_lot_check(actor=ctx.actor, many=ctx.many,
                                      **_reagent_lot_values(values))


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
    ), _reagent_lot, lot_number=("supplier", "supplier_lot"), prepare=_reagent_lot_new,
    export_value={"prepared_from": lambda r: [p.code for p in r.prepared_from.all()]})


# ---------------------------------------------------------------------------------------
# Colloids with their optional UV-vis reading
# ---------------------------------------------------------------------------------------

UVVIS_FIELDS = ("uvvis_measured_on", "uvvis_peak_nm", "uvvis_peak_absorbance",
                "uvvis_absorbance_450", "uvvis_dilution_factor", "uvvis_path_length_cm")


def _colloid_values(values) -> dict:
    return dict(
        metal=values["metal"], synthesis_method=values["synthesis_method"],
        volume_mL=values["volume_mL"], made_on=values["made_on"],
        source_lots=values.get("source_lots") or (), notes=text_of(values, "notes"),
        **pick(values, "target_diameter_nm"))


def _colloid(values, ctx):
    return services.nanoparticle_batch_make(actor=ctx.actor, **_colloid_values(values))


def _reading_values(values, ctx) -> dict | None:
    """The row's UV-vis reading as the reading service's values (None without a peak)."""
    if values.get("uvvis_peak_nm") is None:
        return None
    for name in ("uvvis_measured_on", "uvvis_peak_absorbance"):
        if values.get(name) is None:
            raise refusal(name, "A UV-vis reading needs its date and the absorbance at the "
                                "peak.", "required")
    return dict(
        measured_on=values["uvvis_measured_on"], peak_nm=values["uvvis_peak_nm"],
        peak_absorbance=values["uvvis_peak_absorbance"],
        absorbance_450=values.get("uvvis_absorbance_450"),
        dilution_factor=values.get("uvvis_dilution_factor") or 1.0,
        path_length_cm=values.get("uvvis_path_length_cm") or 1.0, source=ctx.source,
        silver_table=ctx.read_once("silver table", silver_calibration_active))


def _colloid_reading(batch, values, ctx, created: bool) -> list[str]:
    """Add the row's UV-vis reading (if it has one and the batch lacks it)."""
    reading = _reading_values(values, ctx)
    if reading is None:
        return []
    if not created and SheetUvVisReading.objects.filter(
            batch=batch, measured_on=reading["measured_on"],
            peak_nm=reading["peak_nm"]).exists():
        return []
    exchange_services.sheet_uvvis_reading_record(actor=ctx.actor, batch=batch, **reading)
    return ["UV-vis reading added"]


def _colloid_new(values, ctx):
    """The batch and its reading, checked in the order the per-row path checks them."""
    new = services.nanoparticle_batch_check(actor=ctx.actor, many=ctx.many,
                                            **_colloid_values(values))
    reading = _reading_values(values, ctx)
    if reading is not None:
        new.after.append(exchange_services.sheet_uvvis_reading_check(
            actor=ctx.actor, batch=new.record, many=ctx.many, **reading))
    return new


def _first(records):
    return min(records, key=lambda r: (r.measured_on, r.id), default=None)


def _first_reading(batch) -> dict:
    """The batch's first UV-vis figures (a sheet reading or a file's), as sheet columns.

    Read from the readings the export prefetched (``export_prefetch``), once per batch.
    """
    if hasattr(batch, "_first_reading"):
        return batch._first_reading
    batch._first_reading = _first_reading_of(batch)
    return batch._first_reading


def _first_reading_of(batch) -> dict:
    sheet = _first(batch.sheet_uvvis_readings.all())
    if sheet is not None:
        scale = sheet.dilution_factor / sheet.path_length_cm
        return {"uvvis_measured_on": sheet.measured_on, "uvvis_peak_nm": sheet.peak_nm,
                "uvvis_peak_absorbance": sheet.peak_absorbance_1cm / scale,
                "uvvis_absorbance_450": None if sheet.absorbance_450_1cm is None
                else sheet.absorbance_450_1cm / scale,
                "uvvis_dilution_factor": sheet.dilution_factor,
                "uvvis_path_length_cm": sheet.path_length_cm}
    record = _first(batch.uvvis_records.all())
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
    ), _colloid, extra=_colloid_reading, prepare=_colloid_new,
    export_value={"source_lots": lambda r: [lot.code for lot in r.source_lots.all()],
                  **{name: _reading_value(name) for name in UVVIS_FIELDS}},
    export_prefetch=("sheet_uvvis_readings", "uvvis_records"))
