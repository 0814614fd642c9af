"""Every write in the inventory: each function validates, saves atomically and returns.

Pages, the API, commands and the demo loader call these and nothing else, so a rule holds
the same way everywhere.  Errors are ``ValidationError`` with a field and a stable code.
"""

from __future__ import annotations

import hashlib
from datetime import date
from typing import Iterable, Sequence

from django.contrib.auth.models import AbstractBaseUser
from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction
from django.utils import timezone

from . import ghs
from .codes import code_next
from .lifecycle import check_transition, check_usable
from .models import (
    CodedRecord,
    Dataset,
    DatasetFile,
    DepositionRun,
    Flag,
    LifecycleRecord,
    LineageEdge,
    LinkerLayer,
    NanoparticleBatch,
    ParticleAttachment,
    ReagentKind,
    ReagentLot,
    ShelfLifeRule,
    SphereLot,
    Status,
    StatusChange,
    StorageLocation,
    Substrate,
    TemplateAssembly,
)
from .shelf_life import (
    LIFECYCLE_KINDS,
    expiry_from_rule,
    refresh_expiry,
    rule_for,
    rules_by_scope,
    validate_rule_date,
)

User = AbstractBaseUser


def _today() -> date:
    return timezone.localdate()


def _save_new(record: CodedRecord, *, actor: User | None) -> CodedRecord:
    """Give ``record`` its code, check every field and constraint, and insert it."""
    record.code = code_next(record.CODE_PREFIX)
    record.created_by = actor
    record.updated_by = actor
    if isinstance(record, LifecycleRecord):
        refresh_expiry(record)
    record.full_clean()
    record.save()
    return record


def _link(parents: Iterable[tuple[CodedRecord, str]], child: CodedRecord, *, used_on: date,
          actor: User | None) -> None:
    LineageEdge.objects.bulk_create([
        LineageEdge(parent_code=parent.code, child_code=child.code, role=role,
                    used_on=used_on, created_by=actor)
        for parent, role in parents
    ])


def _require_kind(lot: ReagentLot, kinds: Sequence[str], *, field: str) -> None:
    if lot.kind not in kinds:
        wanted = " or ".join(ReagentKind(k).label.lower() for k in kinds)
        raise ValidationError({field: f"{lot.code} is a {lot.get_kind_display().lower()} lot, "
                                      f"not {wanted}."}, code="wrong_reagent_kind")


def _require_not_future(day: date, *, field: str) -> None:
    if day > _today():
        raise ValidationError({field: f"{day.isoformat()} is in the future."}, code="future_date")


# --- materials --------------------------------------------------------------------------

@transaction.atomic
def storage_location_create(*, actor: User | None, name: str, kind: str,
                            room: str = "") -> StorageLocation:
    return _save_new(StorageLocation(name=name, kind=kind, room=room), actor=actor)


@transaction.atomic
def reagent_lot_receive(
    *, actor: User | None, name: str, kind: str, supplier: str = "", supplier_lot: str = "",
    received_on: date | None = None, opened_on: date | None = None,
    prepared_on: date | None = None, prepared_from: Sequence[ReagentLot] = (),
    ghs_hazard_codes: str = "", quantity=None, quantity_unit: str = "",
    concentration_mM: float | None = None, storage: StorageLocation | None = None,
    notes: str = "",
) -> ReagentLot:
    """Record a purchased lot (``received_on``) or a lab-prepared one (``prepared_on``)."""
    if received_on is None and prepared_on is None:
        raise ValidationError({"received_on": "Give the date received (or prepared_on for a "
                                              "solution made in the lab)."}, code="no_date")
    for field_name, day in (("received_on", received_on), ("opened_on", opened_on),
                            ("prepared_on", prepared_on)):
        if day is not None:
            _require_not_future(day, field=field_name)
    if opened_on and received_on and opened_on < received_on:
        raise ValidationError({"opened_on": "A lot cannot be opened before it was received."},
                              code="date_order")
    used_on = prepared_on or received_on
    for source in prepared_from:
        check_usable(source, role="a source of a prepared lot", on_date=used_on,
                     field="prepared_from")
    lot = ReagentLot(
        name=name, kind=kind, supplier=supplier, supplier_lot=supplier_lot,
        received_on=received_on, opened_on=opened_on, prepared_on=prepared_on,
        ghs_hazard_codes=ghs.normalise_codes(ghs_hazard_codes), quantity=quantity,
        quantity_unit=quantity_unit, concentration_mM=concentration_mM, storage=storage,
        notes=notes,
    )
    _save_new(lot, actor=actor)
    if prepared_from:
        lot.prepared_from.set(prepared_from)
        _link([(source, "prepared from") for source in prepared_from], lot,
              used_on=used_on, actor=actor)
    return lot


@transaction.atomic
def reagent_lot_open(*, actor: User | None, lot: ReagentLot, opened_on: date) -> ReagentLot:
    """Record the day a lot was first opened; an opened-from rule then gives its expiry."""
    lot = ReagentLot.objects.select_for_update().get(pk=lot.pk)
    if lot.opened_on is not None:
        raise ValidationError({"opened_on": f"{lot.code} was already opened on "
                                            f"{lot.opened_on.isoformat()}."}, code="already_open")
    _require_not_future(opened_on, field="opened_on")
    if lot.received_on and opened_on < lot.received_on:
        raise ValidationError({"opened_on": "A lot cannot be opened before it was received."},
                              code="date_order")
    lot.opened_on = opened_on
    _save_changed(lot, actor=actor)
    return lot


@transaction.atomic
def sphere_lot_receive(
    *, actor: User | None, material: str, nominal_diameter_nm: float, solids_percent_w_v: float,
    received_on: date, size_cv_percent: float | None = None, supplier: str = "",
    supplier_lot: str = "", volume_mL: float | None = None,
    storage: StorageLocation | None = None, notes: str = "",
) -> SphereLot:
    _require_not_future(received_on, field="received_on")
    return _save_new(SphereLot(
        material=material, nominal_diameter_nm=nominal_diameter_nm,
        solids_percent_w_v=solids_percent_w_v, size_cv_percent=size_cv_percent,
        supplier=supplier, supplier_lot=supplier_lot, received_on=received_on,
        volume_mL=volume_mL, storage=storage, notes=notes,
    ), actor=actor)


def _save_changed(record: CodedRecord, *, actor: User | None) -> None:
    record.updated_by = actor
    record.version += 1
    if isinstance(record, LifecycleRecord):
        refresh_expiry(record)
    record.full_clean()
    record.save()


# --- lifecycle --------------------------------------------------------------------------

@transaction.atomic
def record_transition(*, actor: User | None, record: LifecycleRecord, to_status: str,
                      reason: str = "") -> LifecycleRecord:
    """Move a record through its lifecycle, refusing illegal moves; keeps a StatusChange."""
    locked = type(record).objects.select_for_update().get(pk=record.pk)
    check_transition(locked, to_status, reason)
    StatusChange.objects.create(record_code=locked.code, from_status=locked.status,
                                to_status=to_status, reason=reason, changed_by=actor)
    locked.status = to_status
    _save_changed(locked, actor=actor)
    return locked


# --- fabrication ------------------------------------------------------------------------

@transaction.atomic
def template_assemble(
    *, actor: User | None, sphere_lot: SphereLot, base_slide_lot: ReagentLot, method: str,
    slide_area_cm2: float, made_on: date, coverage_percent: float | None = None,
    suspension_volume_uL: float | None = None, storage: StorageLocation | None = None,
    notes: str = "",
) -> TemplateAssembly:
    _require_not_future(made_on, field="made_on")
    check_usable(sphere_lot, role="template spheres", on_date=made_on, field="sphere_lot")
    _require_kind(base_slide_lot, [ReagentKind.BASE_SLIDE], field="base_slide_lot")
    check_usable(base_slide_lot, role="a base slide", on_date=made_on, field="base_slide_lot")
    template = _save_new(TemplateAssembly(
        sphere_lot=sphere_lot, base_slide_lot=base_slide_lot, method=method,
        slide_area_cm2=slide_area_cm2, coverage_percent=coverage_percent,
        suspension_volume_uL=suspension_volume_uL, made_on=made_on, storage=storage,
        notes=notes,
    ), actor=actor)
    _link([(sphere_lot, "spheres"), (base_slide_lot, "base slide")], template,
          used_on=made_on, actor=actor)
    return template


@transaction.atomic
def deposition_run_record(
    *, actor: User | None, bath_lot: ReagentLot, metal: str, electrons_per_atom: int,
    mode: str, electrode_area_cm2: float, made_on: date, pieces: int,
    template: TemplateAssembly | None = None, base_slide_lot: ReagentLot | None = None,
    current_efficiency: float = 1.0, setpoint_potential_V: float | None = None,
    setpoint_current_mA: float | None = None, target_height_over_diameter: float | None = None,
    piece_area_cm2: float | None = None, storage: StorageLocation | None = None,
    notes: str = "",
) -> tuple[DepositionRun, list[Substrate]]:
    """Record a deposition run and the ``pieces`` substrates it was cut into, atomically.

    Through a template (which is consumed) or, without one, onto a flat base slide.
    """
    _require_not_future(made_on, field="made_on")
    if (template is None) == (base_slide_lot is None):
        raise ValidationError({"template": "Give either a template or, for a flat film, a base "
                                           "slide lot (not both)."}, code="template_or_flat")
    if not 1 <= pieces <= 200:
        raise ValidationError({"pieces": "A run yields between 1 and 200 pieces."},
                              code="pieces_range")
    _require_kind(bath_lot, [ReagentKind.PLATING_BATH], field="bath_lot")
    check_usable(bath_lot, role="the plating bath", on_date=made_on, field="bath_lot")
    inputs: list[tuple[CodedRecord, str]] = [(bath_lot, "plating bath")]
    if template is not None:
        check_usable(template, role="the template", on_date=made_on, field="template")
        if template.status != Status.RELEASED:
            raise ValidationError({"template": f"{template.code} is {template.status}; release "
                                               "the template before plating through it."},
                                  code="template_not_released")
        if made_on < template.made_on:
            raise ValidationError({"made_on": "A run cannot be made before its template."},
                                  code="date_order")
        inputs.append((template, "template"))
    else:
        _require_kind(base_slide_lot, [ReagentKind.BASE_SLIDE], field="base_slide_lot")
        check_usable(base_slide_lot, role="a base slide", on_date=made_on, field="base_slide_lot")
        inputs.append((base_slide_lot, "base slide"))
    run = _save_new(DepositionRun(
        template=template, base_slide_lot=base_slide_lot, bath_lot=bath_lot, metal=metal,
        electrons_per_atom=electrons_per_atom, current_efficiency=current_efficiency, mode=mode,
        setpoint_potential_V=setpoint_potential_V, setpoint_current_mA=setpoint_current_mA,
        electrode_area_cm2=electrode_area_cm2,
        target_height_over_diameter=target_height_over_diameter, made_on=made_on, notes=notes,
    ), actor=actor)
    _link(inputs, run, used_on=made_on, actor=actor)
    if template is not None:
        record_transition(actor=actor, record=template, to_status=Status.CONSUMED,
                          reason=f"plated in {run.code}")
    substrates = []
    for number in range(1, pieces + 1):
        piece = _save_new(Substrate(
            deposition_run=run, piece_label=f"{run.code}/{number}", area_cm2=piece_area_cm2,
            made_on=made_on, storage=storage,
        ), actor=actor)
        substrates.append(piece)
    LineageEdge.objects.bulk_create([
        LineageEdge(parent_code=run.code, child_code=piece.code, role="cut from",
                    used_on=made_on, created_by=actor) for piece in substrates
    ])
    return run, substrates


@transaction.atomic
def substrate_receive(*, actor: User | None, purchased_lot: ReagentLot, pieces: int,
                      received_on: date, storage: StorageLocation | None = None
                      ) -> list[Substrate]:
    """Register pieces of a purchased substrate lot as substrates."""
    _require_kind(purchased_lot, [ReagentKind.PURCHASED_SUBSTRATE], field="purchased_lot")
    check_usable(purchased_lot, role="purchased substrates", on_date=received_on,
                 field="purchased_lot")
    substrates = [
        _save_new(Substrate(purchased_lot=purchased_lot, piece_label=f"{purchased_lot.code}/{n}",
                            stage=Substrate.Stage.PURCHASED, made_on=received_on,
                            storage=storage), actor=actor)
        for n in range(1, pieces + 1)
    ]
    for piece in substrates:
        _link([(purchased_lot, "supplied as")], piece, used_on=received_on, actor=actor)
    return substrates


def _check_substrates_usable(substrates: Sequence[Substrate], *, role: str, on_date: date,
                             field: str = "substrates") -> None:
    if not substrates:
        raise ValidationError({field: "Choose at least one substrate."}, code="required")
    for substrate in substrates:
        check_usable(substrate, role=role, on_date=on_date, field=field)
        if on_date < substrate.made_on:
            raise ValidationError({"made_on": f"{substrate.code} was made on "
                                              f"{substrate.made_on.isoformat()}, after this step."},
                                  code="date_order")


@transaction.atomic
def linker_layer_apply(
    *, actor: User | None, linker_lot: ReagentLot, substrates: Sequence[Substrate],
    concentration_mM: float, immersion_h: float, made_on: date,
    solvent_lot: ReagentLot | None = None, notes: str = "",
) -> LinkerLayer:
    """A thiol monolayer self-assembled on one or more substrates in one immersion."""
    _require_not_future(made_on, field="made_on")
    _require_kind(linker_lot, [ReagentKind.LINKER_THIOL], field="linker_lot")
    check_usable(linker_lot, role="the linker", on_date=made_on, field="linker_lot")
    inputs: list[tuple[CodedRecord, str]] = [(linker_lot, "linker")]
    if solvent_lot is not None:
        _require_kind(solvent_lot, [ReagentKind.SOLVENT], field="solvent_lot")
        check_usable(solvent_lot, role="the solvent", on_date=made_on, field="solvent_lot")
        inputs.append((solvent_lot, "solvent"))
    _check_substrates_usable(substrates, role="a linker substrate", on_date=made_on)
    for substrate in substrates:
        if substrate.stage == Substrate.Stage.PARTICLES:
            raise ValidationError({"substrates": f"{substrate.code} already carries particles."},
                                  code="wrong_stage")
    layer = _save_new(LinkerLayer(
        linker_lot=linker_lot, solvent_lot=solvent_lot, concentration_mM=concentration_mM,
        immersion_h=immersion_h, made_on=made_on, notes=notes,
    ), actor=actor)
    layer.substrates.set(substrates)
    _link(inputs, layer, used_on=made_on, actor=actor)
    LineageEdge.objects.bulk_create([
        LineageEdge(parent_code=layer.code, child_code=s.code, role="linker layer",
                    used_on=made_on, created_by=actor) for s in substrates
    ])
    Substrate.objects.filter(pk__in=[s.pk for s in substrates]).update(
        stage=Substrate.Stage.LINKER, updated_by=actor, updated_at=timezone.now())
    return layer


@transaction.atomic
def nanoparticle_batch_make(
    *, actor: User | None, metal: str, synthesis_method: str, volume_mL: float, made_on: date,
    source_lots: Sequence[ReagentLot] = (), target_diameter_nm: float | None = None,
    storage: StorageLocation | None = None, notes: str = "",
) -> NanoparticleBatch:
    _require_not_future(made_on, field="made_on")
    for lot in source_lots:
        check_usable(lot, role="a colloid reagent", on_date=made_on, field="source_lots")
    batch = _save_new(NanoparticleBatch(
        metal=metal, synthesis_method=synthesis_method, volume_mL=volume_mL, made_on=made_on,
        target_diameter_nm=target_diameter_nm, storage=storage, notes=notes,
    ), actor=actor)
    if source_lots:
        batch.source_lots.set(source_lots)
        _link([(lot, lot.get_kind_display().lower()) for lot in source_lots], batch,
              used_on=made_on, actor=actor)
    return batch


@transaction.atomic
def particle_attach(*, actor: User | None, substrate: Substrate, batch: NanoparticleBatch,
                    immersion_min: float, made_on: date, notes: str = "") -> ParticleAttachment:
    """Bind particles of ``batch`` onto a substrate that carries a linker layer."""
    _require_not_future(made_on, field="made_on")
    _check_substrates_usable([substrate], role="a substrate for particles", on_date=made_on,
                             field="substrate")
    if substrate.stage != Substrate.Stage.LINKER:
        raise ValidationError({"substrate": f"{substrate.code} has no linker layer yet "
                                            f"(stage: {substrate.get_stage_display()})."},
                              code="wrong_stage")
    check_usable(batch, role="the colloid", on_date=made_on, field="batch")
    if made_on < batch.made_on:
        raise ValidationError({"made_on": "Particles cannot be bound before the colloid was made."},
                              code="date_order")
    attachment = _save_new(ParticleAttachment(
        substrate=substrate, batch=batch, immersion_min=immersion_min, made_on=made_on,
        notes=notes,
    ), actor=actor)
    _link([(batch, "colloid")], attachment, used_on=made_on, actor=actor)
    _link([(attachment, "particles")], substrate, used_on=made_on, actor=actor)
    Substrate.objects.filter(pk=substrate.pk).update(
        stage=Substrate.Stage.PARTICLES, updated_by=actor, updated_at=timezone.now())
    substrate.stage = Substrate.Stage.PARTICLES
    return attachment


# --- datasets ---------------------------------------------------------------------------

def sha256_of(content: bytes) -> str:
    return hashlib.sha256(content).hexdigest()


@transaction.atomic
def dataset_register(
    *, actor: User | None, title: str, substrates: Sequence[Substrate], acquired_on: date,
    files: Sequence[tuple[str, bytes]] = (), instrument: str = "", operator: str = "",
    consume_substrates: bool = False, notes: str = "",
) -> Dataset:
    """Record data made on substrates; files are stored with their SHA-256 digests."""
    _require_not_future(acquired_on, field="acquired_on")
    _check_substrates_usable(substrates, role="a measured substrate", on_date=acquired_on)
    digests = [sha256_of(content) for _, content in files]
    if len(set(digests)) != len(digests):
        raise ValidationError({"files": "The same file was given twice."}, code="duplicate_file")
    dataset = _save_new(Dataset(title=title, instrument=instrument, operator=operator,
                                acquired_on=acquired_on, notes=notes), actor=actor)
    dataset.substrates.set(substrates)
    for (name, content), digest in zip(files, digests):
        DatasetFile.objects.create(dataset=dataset, file=ContentFile(content, name=name),
                                   original_name=name, size_bytes=len(content), sha256=digest)
    _link([(s, "measured on") for s in substrates], dataset, used_on=acquired_on, actor=actor)
    if consume_substrates:
        for substrate in substrates:
            if substrate.status == Status.RELEASED:
                record_transition(actor=actor, record=substrate, to_status=Status.CONSUMED,
                                  reason=f"used for {dataset.code}")
    return dataset


# --- flags ------------------------------------------------------------------------------

@transaction.atomic
def flag_raise(*, actor: User | None, target: CodedRecord, category: str, message: str) -> Flag:
    """Record a deviation on any record; an open flag blocks readiness downstream."""
    if not message.strip():
        raise ValidationError({"message": "Say what deviates."}, code="required")
    return _save_new(Flag(target_code=target.code, category=category, message=message),
                     actor=actor)


@transaction.atomic
def flag_resolve(*, actor: User | None, flag: Flag, resolution: str) -> Flag:
    flag = Flag.objects.select_for_update().get(pk=flag.pk)
    if flag.state != Flag.State.OPEN:
        raise ValidationError({"state": f"{flag.code} is already resolved."}, code="resolved")
    if not resolution.strip():
        raise ValidationError({"resolution": "Say how the deviation was resolved."},
                              code="required")
    flag.state = Flag.State.RESOLVED
    flag.resolution = resolution
    flag.resolved_by = actor
    flag.resolved_at = timezone.now()
    _save_changed(flag, actor=actor)
    return flag


# --- shelf life -------------------------------------------------------------------------

@transaction.atomic
def shelf_life_rule_set(
    *, actor: User | None, record_kind: str, shelf_life_days: int, counted_from: str,
    reagent_kind: str = "", is_example: bool = False, rationale: str = "",
) -> ShelfLifeRule:
    """Create or change a rule, then re-derive the expiry of every record it governs."""
    validate_rule_date(record_kind, counted_from)
    rule = ShelfLifeRule.objects.filter(record_kind=record_kind,
                                        reagent_kind=reagent_kind).first()
    if rule is None:
        rule = ShelfLifeRule(record_kind=record_kind, reagent_kind=reagent_kind,
                             created_by=actor)
    else:
        rule.version += 1
    rule.shelf_life_days = shelf_life_days
    rule.counted_from = counted_from
    rule.is_example = is_example
    rule.rationale = rationale
    rule.updated_by = actor
    rule.full_clean()
    rule.save()
    if record_kind in LIFECYCLE_KINDS:
        _rederive_expiry(record_kind)
    return rule


def _rederive_expiry(record_kind: str) -> int:
    """Recompute ``expires_on`` for every record of a kind; returns how many changed."""
    from django.apps import apps

    model = apps.get_model("inventory", record_kind)
    rules = rules_by_scope()
    changed = []
    for record in model.objects.iterator(chunk_size=2000):
        new_expiry = expiry_from_rule(record, rule_for(record, rules))
        if new_expiry != record.expires_on:
            record.expires_on = new_expiry
            changed.append(record)
    model.objects.bulk_update(changed, ["expires_on"], batch_size=1000)
    return len(changed)
