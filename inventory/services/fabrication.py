"""The fabrication chain: template, deposition run and pieces, colloid (the steps on a
substrate's surface, linker layer and particles, are in surface_steps)."""

from __future__ import annotations

import copy
from collections.abc import Sequence
from datetime import date

from django.db import transaction

from inventory.physics.errors import AnalysisInputError
from inventory.physics.template_geometry import (
    TYPICAL_SPHERE_DENSITY_G_CM3,
    close_packed_spheres_per_cm2,
    suspension_volume_for_monolayer,
)

from ..errors import refusal
from ..lifecycle import check_usable
from ..models import (
    CodedRecord,
    DepositionRun,
    NanoparticleBatch,
    ReagentKind,
    ReagentLot,
    SphereLot,
    Status,
    StorageLocation,
    Substrate,
    TemplateAssembly,
)
from ..roles import MAKER, require_role
from ._common import (
    CheckingMany,
    User,
    _prepare_new,
    _prepare_sibling,
    _read_once,
    _require_kind,
    _require_not_future,
    _require_role,
)
from .creation import NewRecord, new_record_save
from .deposition import (
    _apply,
    _prepare,
    entered_charge_check,
    entered_charge_reason,
    prepare_entered_charge,
)
from .deposition_target import _require_known_metal
from .lifecycle import lock, transition_prepare, transition_reason


def template_assembly_check(
    *, actor: User | None, sphere_lot: SphereLot, base_slide_lot: ReagentLot, method: str,
    slide_area_cm2: float, made_on: date, coverage_percent: float | None = None,
    suspension_volume_uL: float | None = None, sphere_density_g_cm3: float | None = None,
    suspension_excess_factor: float = 1.0, storage: StorageLocation | None = None,
    notes: str = "", many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of recording a template, on the unsaved template (with its code and its
    close-packed figures); no write.

    Spheres per cm² and the suspension volume one close-packed layer needs (times
    ``suspension_excess_factor``) are computed from the sphere lot by
    inventory.physics.template_geometry.  The density is the caller's, else the typical value for
    the lot's material; with neither the volume is left blank.  A ``suspension_volume_uL``
    the maker gives is kept as given; the computed one is stored beside it.
    """
    _require_role(actor, MAKER, action="Recording a template", many=many)
    _require_not_future(made_on, field="made_on")
    check_usable(sphere_lot, role="template spheres", on_date=made_on, field="sphere_lot",
                 state_read=many is not None)
    _require_kind(base_slide_lot, [ReagentKind.BASE_SLIDE], field="base_slide_lot")
    check_usable(base_slide_lot, role="a base slide", on_date=made_on, field="base_slide_lot",
                 state_read=many is not None)
    figures = _template_figures(sphere_lot, slide_area_cm2=slide_area_cm2,
                                sphere_density_g_cm3=sphere_density_g_cm3,
                                excess_factor=suspension_excess_factor)
    template = _prepare_new(TemplateAssembly(
        sphere_lot=sphere_lot, base_slide_lot=base_slide_lot, method=method,
        slide_area_cm2=slide_area_cm2, coverage_percent=coverage_percent,
        suspension_volume_uL=suspension_volume_uL, made_on=made_on, storage=storage,
        notes=notes, **figures,
    ), actor=actor, many=many)
    return NewRecord(template, inputs=[(sphere_lot, "spheres"), (base_slide_lot, "base slide")],
                     used_on=made_on)


@transaction.atomic
def template_assemble(*, actor: User | None, **values) -> TemplateAssembly:
    """Record a sphere monolayer on a base slide, with its close-packed figures; ``values``
    are those of :func:`template_assembly_check`."""
    return new_record_save(template_assembly_check(actor=actor, **values), actor=actor)


def _template_figures(sphere_lot: SphereLot, *, slide_area_cm2: float,
                      sphere_density_g_cm3: float | None, excess_factor: float) -> dict:
    """Close-packed sphere density and suspension need, as TemplateAssembly field values."""
    density = sphere_density_g_cm3
    if density is None:
        density = TYPICAL_SPHERE_DENSITY_G_CM3.get(sphere_lot.material)
    try:
        spheres_per_cm2 = close_packed_spheres_per_cm2(sphere_lot.nominal_diameter_nm)
        need = None if density is None else suspension_volume_for_monolayer(
            slide_area_cm2=slide_area_cm2, diameter_nm=sphere_lot.nominal_diameter_nm,
            solids_percent_w_v=sphere_lot.solids_percent_w_v, sphere_density_g_cm3=density,
            excess_factor=excess_factor)
    except AnalysisInputError as error:
        field = {"excess_factor": "suspension_excess_factor",
                 "diameter_nm": "sphere_lot", "solids_percent_w_v": "sphere_lot"}.get(
            error.field, error.field or "sphere_lot")
        raise refusal(field, error.message, "bad_value") from None
    return {
        "spheres_per_cm2": spheres_per_cm2,
        "sphere_density_g_cm3": density,
        "suspension_excess_factor": None if need is None else need.excess_factor,
        "suspension_volume_computed_uL": None if need is None else need.suspension_volume_uL,
    }


def deposition_run_check(
    *, actor: User | None, bath_lot: ReagentLot, metal: str, electrons_per_atom: int,
    mode: str, electrode_area_cm2: float, made_on: date, pieces: int,
    template: TemplateAssembly | None = None, base_slide_lot: ReagentLot | None = None,
    current_efficiency: float = 1.0, setpoint_potential_V: float | None = None,
    setpoint_current_mA: float | None = None, target_height_over_diameter: float | None = None,
    piece_area_cm2: float | None = None, storage: StorageLocation | None = None,
    notes: str = "", charge_C: float | None = None, many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of recording a deposition run, on the unsaved run (with its code); no write.

    The NewRecord holds the run with its inputs (the bath, the template or the base slide);
    the template consumed (a checked copy and its StatusChange); the ``pieces`` substrates
    cut from it; and, with ``charge_C`` (the charge the potentiostat reported), the run with
    the figures that follow from it as a second save of the run, and the flags of an
    off-target film.  ``template`` and the lots may be records read under a lock by a caller
    checking many (``many``).
    """
    _require_role(actor, MAKER, action="Recording a deposition run", many=many)
    _require_not_future(made_on, field="made_on")
    _require_known_metal(metal)
    if (template is None) == (base_slide_lot is None):
        raise refusal("template", "Give either a template or, for a flat film, a base "
                                           "slide lot (not both).", "template_or_flat")
    if not 1 <= pieces <= 200:
        raise refusal("pieces", "A run yields between 1 and 200 pieces.", "pieces_range")
    state_read = many is not None
    _require_kind(bath_lot, [ReagentKind.PLATING_BATH], field="bath_lot")
    check_usable(bath_lot, role="the plating bath", on_date=made_on, field="bath_lot",
                 state_read=state_read)
    inputs: list[tuple[CodedRecord, str]] = [(bath_lot, "plating bath")]
    if template is not None:
        check_usable(template, role="the template", on_date=made_on, field="template",
                     state_read=state_read)
        if template.status != Status.RELEASED:
            raise refusal(
                "template",
                f"{template.code} is {template.status}; release "
                "the template before plating through it.",
                "template_not_released",
            )
        if made_on < template.made_on:
            raise refusal("made_on", "A run cannot be made before its template.", "date_order")
        inputs.append((template, "template"))
    else:
        _require_kind(base_slide_lot, [ReagentKind.BASE_SLIDE], field="base_slide_lot")
        check_usable(base_slide_lot, role="a base slide", on_date=made_on,
                     field="base_slide_lot", state_read=state_read)
        inputs.append((base_slide_lot, "base slide"))
    run = DepositionRun(
        template=template, base_slide_lot=base_slide_lot, bath_lot=bath_lot, metal=metal,
        electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency, mode=mode,
        setpoint_potential_V=setpoint_potential_V, setpoint_current_mA=setpoint_current_mA,
        electrode_area_cm2=electrode_area_cm2,
        target_height_over_diameter=target_height_over_diameter, made_on=made_on, notes=notes,
    )
    if template is not None and many is not None:  # each sphere lot read once for all rows
        template.sphere_lot = _read_once(many, ("sphere lot", template.sphere_lot_id),
                                         lambda: template.sphere_lot)
    # The charge before the run's own checks, so a bad charge is what a row is refused for.
    entered = None if charge_C is None else prepare_entered_charge(run, charge_C)
    new = NewRecord(_prepare_new(run, actor=actor, many=many), inputs=inputs, used_on=made_on)
    if template is not None:
        _consume_template(new, template, actor=actor, many=many)
    first = _prepare_new(Substrate(
        deposition_run=run, piece_label=f"{run.code}/1", area_cm2=piece_area_cm2,
        made_on=made_on, storage=storage,
    ), actor=actor, many=many)
    others = [_prepare_sibling(first, many=many, piece_label=f"{run.code}/{number}")
              for number in range(2, pieces + 1)]  # they differ in code and label only
    new.after += [NewRecord(piece, inputs=[(run, "cut from")], used_on=made_on)
                  for piece in (first, *others)]
    if entered is not None:
        charged, flags = entered_charge_check(
            run, entered, pieces=[piece.record for piece in new.after], actor=actor, many=many)
        new.changed.append((charged, entered_charge_reason(entered.charge_C)))
        new.after += flags
    return new


def _consume_template(new: NewRecord, template: TemplateAssembly, *, actor: User | None,
                      many: CheckingMany | None) -> None:
    """Plating consumes the template: its checked copy and its StatusChange go with ``new``.

    One record at a time, the template's current row is read under a lock; a caller checking
    many read it so already.
    """
    consumed = copy.copy(template) if many is not None else lock(template)
    change = transition_prepare(consumed, Status.CONSUMED, reason=f"plated in {new.record.code}",
                                actor=actor, many=many)
    new.changed.append((consumed, transition_reason(Status.CONSUMED, change.reason)))
    new.rows.append(change)


@transaction.atomic
def deposition_run_record(
    *, actor: User | None, chronoamperogram: tuple[str, bytes] | None = None,
    time_unit: str | None = None, current_unit: str | None = None,
    cathodic_sign: str = DepositionRun.CathodicSign.NEGATIVE, start_s: float | None = None,
    end_s: float | None = None, **values,
) -> tuple[DepositionRun, list[Substrate]]:
    """Record a deposition run and the pieces it was cut into, atomically; ``values`` are
    those of :func:`deposition_run_check`.

    Through a template (which is consumed) or, without one, onto a flat base slide.  With
    ``chronoamperogram=(filename, content)`` the file is analysed and its numbers stored
    in the same transaction (see
    :func:`inventory.services.deposition.deposition_run_attach_chronoamperogram`, whose
    options the remaining keywords are): a bad file saves no run, no piece, and leaves the
    template unconsumed.  Without the file, ``charge_C`` is the charge the potentiostat
    reported, and the same figures follow from it
    (:func:`inventory.services.deposition.deposition_run_enter_charge`); a run takes one or
    the other, and a bad charge saves nothing either.
    """
    require_role(actor, MAKER, action="Recording a deposition run")
    if chronoamperogram is not None and values.get("charge_C") is not None:
        raise refusal("charge_C", "Give the chronoamperogram or the charge, not both: the "
                                  "file's charge is integrated from it.", "charge_or_file")
    new = deposition_run_check(actor=actor, **values)
    run = new.record
    # Analyse the file before writing anything, so a bad file leaves nothing behind.
    prepared = None if chronoamperogram is None else _prepare(
        run, *chronoamperogram, time_unit=time_unit, current_unit=current_unit,
        cathodic_sign=cathodic_sign, start_s=start_s, end_s=end_s)
    new_record_save(new, actor=actor)
    if new.changed and new.changed[-1][0].code == run.code:
        run.refresh_from_db()  # as its second save (an entered charge's figures) left it
    if prepared is not None:
        _apply(run, prepared, actor=actor)
    return run, [piece.record for piece in new.after if isinstance(piece.record, Substrate)]


def purchased_piece_check(
    *, actor: User | None, purchased_lot: ReagentLot, received_on: date, number: str = "1",
    area_cm2: float | None = None, storage: StorageLocation | None = None, notes: str = "",
    many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of registering piece ``number`` of a purchased substrate lot, on the unsaved
    piece (labelled ``<lot code>/<number>``, with its code); no write."""
    _require_role(actor, MAKER, action="Receiving purchased substrates", many=many)
    _require_kind(purchased_lot, [ReagentKind.PURCHASED_SUBSTRATE], field="purchased_lot")
    check_usable(purchased_lot, role="purchased substrates", on_date=received_on,
                 field="purchased_lot", state_read=many is not None)
    piece = _prepare_new(Substrate(
        purchased_lot=purchased_lot, piece_label=f"{purchased_lot.code}/{number}",
        stage=Substrate.Stage.PURCHASED, made_on=received_on, area_cm2=area_cm2,
        storage=storage, notes=notes,
    ), actor=actor, many=many)
    return NewRecord(piece, inputs=[(purchased_lot, "supplied as")], used_on=received_on)


@transaction.atomic
def purchased_piece_receive(*, actor: User | None, **values) -> Substrate:
    """Register one piece of a purchased substrate lot; ``values`` are those of
    :func:`purchased_piece_check`."""
    return new_record_save(purchased_piece_check(actor=actor, **values), actor=actor)


@transaction.atomic
def substrate_receive(*, actor: User | None, purchased_lot: ReagentLot, pieces: int,
                      received_on: date, storage: StorageLocation | None = None
                      ) -> list[Substrate]:
    """Register ``pieces`` pieces of a purchased substrate lot (numbered from 1) as
    substrates."""
    return [purchased_piece_receive(actor=actor, purchased_lot=purchased_lot,
                                    received_on=received_on, number=str(number),
                                    storage=storage)
            for number in range(1, pieces + 1)]


def nanoparticle_batch_check(
    *, actor: User | None, metal: str, synthesis_method: str, volume_mL: float, made_on: date,
    source_lots: Sequence[ReagentLot] = (), target_diameter_nm: float | None = None,
    storage: StorageLocation | None = None, notes: str = "", many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of recording a colloid batch, on the unsaved batch (with its code)."""
    _require_role(actor, MAKER, action="Recording a colloid batch", many=many)
    _require_not_future(made_on, field="made_on")
    for lot in source_lots:
        check_usable(lot, role="a colloid reagent", on_date=made_on, field="source_lots",
                     state_read=many is not None)
    batch = _prepare_new(NanoparticleBatch(
        metal=metal, synthesis_method=synthesis_method, volume_mL=volume_mL, made_on=made_on,
        target_diameter_nm=target_diameter_nm, storage=storage, notes=notes,
    ), actor=actor, many=many)
    if not source_lots:
        return NewRecord(batch)
    return NewRecord(batch, inputs=[(lot, lot.get_kind_display().lower()) for lot in source_lots],
                     used_on=made_on, links={"source_lots": list(source_lots)})


@transaction.atomic
def nanoparticle_batch_make(*, actor: User | None, **values) -> NanoparticleBatch:
    """Record a colloid batch; ``values`` are those of :func:`nanoparticle_batch_check`."""
    return new_record_save(nanoparticle_batch_check(actor=actor, **values), actor=actor)
