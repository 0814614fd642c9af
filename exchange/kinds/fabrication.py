"""Sheet kinds of the fabrication chain: templates, deposition runs, substrates and pieces,
linker layers and particle attachments."""

from __future__ import annotations

import math

from inventory import services
from inventory.errors import refusal
from inventory.models import (
    DepositionRun,
    LinkerLayer,
    ParticleAttachment,
    Substrate,
    TemplateAssembly,
)

from .base import CODE, NOTES, Column, Kind, pick, text_of


def _template_values(values) -> dict:
    return dict(
        sphere_lot=values["sphere_lot"], base_slide_lot=values["base_slide_lot"],
        method=values["method"], slide_area_cm2=values["slide_area_cm2"],
        made_on=values["made_on"], notes=text_of(values, "notes"),
        **pick(values, "coverage_percent", "suspension_volume_uL"))


def _template(values, ctx):
    return services.template_assemble(actor=ctx.actor, **_template_values(values))


def _template_new(values, ctx):
    return services.template_assembly_check(actor=ctx.actor, many=ctx.many,
                                            **_template_values(values))


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
    ), _template, prepare=_template_new)


def _run_values(values) -> dict:
    return dict(
        bath_lot=values["bath_lot"], metal=values["metal"],
        electrons_per_atom=values["electrons_per_atom"], mode=values["mode"],
        electrode_area_cm2=values["electrode_area_cm2"], made_on=values["made_on"],
        pieces=values["pieces"], template=values.get("template"),
        base_slide_lot=values.get("base_slide_lot"), notes=text_of(values, "notes"),
        **pick(values, "current_efficiency", "setpoint_potential_V", "setpoint_current_mA",
                "target_height_over_diameter", "piece_area_cm2", "charge_C"))


def _run(values, ctx):
    run, _pieces = services.deposition_run_record(actor=ctx.actor, **_run_values(values))
    return run


def _run_new(values, ctx):
    """The run, its pieces, the template it consumes and an entered charge, all checked."""
    return services.deposition_run_check(actor=ctx.actor, many=ctx.many, **_run_values(values))


def _run_charge(run, values, ctx, created: bool) -> list[str]:
    """A row naming an existing run gives it the sheet's charge through the service that
    records an entered charge, which refuses to overrule a charge integrated from a file."""
    charge = values.get("charge_C")
    if created or charge is None or (
            run.charge_C is not None and math.isclose(run.charge_C, charge, rel_tol=1e-9)):
        return []
    before = "—" if run.charge_C is None else f"{run.charge_C:g}"
    services.deposition_run_enter_charge(actor=ctx.actor, run=run, charge_C=charge,
                                         reason=ctx.source)
    return [f"{DEPOSITION_RUNS.column('charge_C').header}: {before} → {charge:g}"]


def _first_piece_area(run):
    piece = min(run.substrates.all(), key=lambda p: p.id, default=None)  # prefetched
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
        # The charge the potentiostat reported (mC and the like converted); the film height
        # and h/D follow from it.  Compared by _run_charge, not by the generic amendment.
        Column("charge_C", "Charge", "number", "C", compare=False,
               aliases=("deposition charge", "charge passed", "total charge",
                        "integrated charge", "charge deposited", "q"), example=0.112),
        Column("made_on", "Made on", "date", required=True, aliases=("date", "made"),
               example="2026-02-02"),
        Column("pieces", "Pieces cut", "integer", required=True, compare=False,
               aliases=("pieces", "number of pieces"), example=4),
        Column("piece_area_cm2", "Piece area", "number", "cm²", compare=False,
               aliases=("piece area",), example=0.25),
        NOTES,
    ), _run, extra=_run_charge, prepare=_run_new,
    export_value={"pieces": lambda r: len(r.substrates.all()),
                  "piece_area_cm2": _first_piece_area},
    export_prefetch=("substrates",))


def _piece_number(label: str) -> str:
    return label.rsplit("/", 1)[-1].strip()


def _find_piece(values, ctx):
    """A run's pieces are made with the run: a row naming a run finds its piece by number."""
    run = values.get("deposition_run")
    if run is None:
        return None

    number = _piece_number(values.get("piece_label") or "")
    for piece in run.substrates.all():
        if _piece_number(piece.piece_label) == number:
            return piece
    raise refusal("piece_label", f"{run.code} has no piece '{number}': pieces are made with "
                                 "their deposition run (give the number after the '/').",
                  "parent_missing")


def _purchased_piece_values(values) -> dict:
    """A row without a run: the piece of a purchased lot, numbered as the row says (else 1)."""
    if values.get("purchased_lot") is None:
        raise refusal("purchased_lot", "Give the deposition run the piece was cut from, or the "
                                       "purchased substrate lot.", "required")
    return dict(purchased_lot=values["purchased_lot"], received_on=values["made_on"],
                number=_piece_number(values.get("piece_label") or "") or "1",
                notes=text_of(values, "notes"), **pick(values, "area_cm2"))


def _purchased_piece(values, ctx):
    return services.purchased_piece_receive(actor=ctx.actor, **_purchased_piece_values(values))


def _purchased_piece_new(values, ctx):
    return services.purchased_piece_check(actor=ctx.actor, many=ctx.many,
                                          **_purchased_piece_values(values))


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
    ), _purchased_piece, find=_find_piece, prepare=_purchased_piece_new)


def _linker_values(values) -> dict:
    return dict(
        linker_lot=values["linker_lot"], substrates=values["substrates"],
        concentration_mM=values["concentration_mM"], immersion_h=values["immersion_h"],
        made_on=values["made_on"], solvent_lot=values.get("solvent_lot"),
        notes=text_of(values, "notes"))


def _linker(values, ctx):
    return services.linker_layer_apply(actor=ctx.actor, **_linker_values(values))


def _linker_new(values, ctx):
    return services.linker_layer_check(actor=ctx.actor, many=ctx.many, **_linker_values(values))


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
    ), _linker, prepare=_linker_new,
    export_value={"substrates": lambda r: [s.code for s in r.substrates.all()]})


def _attachment_values(values) -> dict:
    return dict(substrate=values["substrate"], batch=values["batch"],
                immersion_min=values["immersion_min"], made_on=values["made_on"],
                notes=text_of(values, "notes"))


def _attachment(values, ctx):
    return services.particle_attach(actor=ctx.actor, **_attachment_values(values))


def _attachment_new(values, ctx):
    return services.particle_attachment_check(actor=ctx.actor, many=ctx.many,
                                              **_attachment_values(values))


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
    ), _attachment, prepare=_attachment_new)
