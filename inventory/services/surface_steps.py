"""Steps on a substrate's surface: a linker layer, then particles bound onto it.

Each step is split like a create service (``creation``): ``<step>_check`` applies every rule
and returns a ``NewRecord`` that also carries the substrate moved to its next stage (a
checked copy, ``NewRecord.changed``) and the lineage edges from the step to the substrate
(``NewRecord.rows``); the service saves it with ``new_record_save``, a sheet import writes
many with ``new_records_insert``.
"""

from __future__ import annotations

import copy
from collections.abc import Sequence
from datetime import date

from django.db import transaction

from ..errors import refusal
from ..lifecycle import check_usable
from ..models import (
    CodedRecord,
    LinkerLayer,
    NanoparticleBatch,
    ParticleAttachment,
    ReagentKind,
    ReagentLot,
    Substrate,
)
from ..roles import MAKER
from ._common import (
    CheckingMany,
    User,
    _check_substrates_usable,
    _lineage_edges,
    _prepare_changed,
    _prepare_new,
    _require_kind,
    _require_not_future,
    _require_role,
)
from .creation import NewRecord, new_record_save


def linker_layer_check(
    *, actor: User | None, linker_lot: ReagentLot, substrates: Sequence[Substrate],
    concentration_mM: float, immersion_h: float, made_on: date,
    solvent_lot: ReagentLot | None = None, notes: str = "", many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of recording a linker layer, on the unsaved layer (with its code) and
    checked copies of its substrates at the linker stage; nothing written."""
    _require_role(actor, MAKER, action="Recording a linker layer", many=many)
    _require_not_future(made_on, field="made_on")
    state_read = many is not None
    _require_kind(linker_lot, [ReagentKind.LINKER_THIOL], field="linker_lot")
    check_usable(linker_lot, role="the linker", on_date=made_on, field="linker_lot",
                 state_read=state_read)
    inputs: list[tuple[CodedRecord, str]] = [(linker_lot, "linker")]
    if solvent_lot is not None:
        _require_kind(solvent_lot, [ReagentKind.SOLVENT], field="solvent_lot")
        check_usable(solvent_lot, role="the solvent", on_date=made_on, field="solvent_lot",
                     state_read=state_read)
        inputs.append((solvent_lot, "solvent"))
    _check_substrates_usable(substrates, role="a linker substrate", on_date=made_on,
                             state_read=state_read)
    for substrate in substrates:
        if substrate.stage == Substrate.Stage.PARTICLES:
            raise refusal(
                "substrates", f"{substrate.code} already carries particles.", "wrong_stage"
            )
    layer = _prepare_new(LinkerLayer(
        linker_lot=linker_lot, solvent_lot=solvent_lot, concentration_mM=concentration_mM,
        immersion_h=immersion_h, made_on=made_on, notes=notes,
    ), actor=actor, many=many)
    new = NewRecord(layer, inputs=inputs, used_on=made_on, links={"substrates": list(substrates)})
    for substrate in substrates:
        new.rows += _lineage_edges([(layer, "linker layer")], substrate, used_on=made_on,
                                   actor=actor)
        new.changed.append((_substrate_at_stage(substrate, Substrate.Stage.LINKER, actor=actor,
                                                many=many), f"linker layer {layer.code}"))
    return new


@transaction.atomic
def linker_layer_apply(*, actor: User | None, **values) -> LinkerLayer:
    """A thiol monolayer self-assembled on one or more substrates in one immersion;
    ``values`` are those of :func:`linker_layer_check`."""
    return new_record_save(linker_layer_check(actor=actor, **values), actor=actor)


def _substrate_at_stage(substrate: Substrate, stage: str, *, actor: User | None,
                        many: CheckingMany | None) -> Substrate:
    """The substrate moved to ``stage`` with a new version, checked; nothing written.

    One step at a time, the caller's substrate is read afresh and changed (so it holds what
    is saved); a sheet import read it under a lock in this transaction and changes a copy,
    written with the others (``NewRecord.changed``).
    """
    if many is None:
        substrate.refresh_from_db()
        moved = substrate
    else:
        moved = copy.copy(substrate)
    before = copy.copy(moved)
    moved.stage = stage
    _prepare_changed(moved, actor=actor, many=many, before=before)
    return moved


def particle_attachment_check(
    *, actor: User | None, substrate: Substrate, batch: NanoparticleBatch,
    immersion_min: float, made_on: date, notes: str = "", many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of binding particles onto a substrate, on the unsaved attachment (with its
    code) and a checked copy of the substrate at the particles stage; nothing written."""
    _require_role(actor, MAKER, action="Recording a particle attachment", many=many)
    _require_not_future(made_on, field="made_on")
    state_read = many is not None
    _check_substrates_usable([substrate], role="a substrate for particles", on_date=made_on,
                             field="substrate", state_read=state_read)
    if substrate.stage != Substrate.Stage.LINKER:
        raise refusal(
            "substrate",
            f"{substrate.code} has no linker layer yet (stage: {substrate.get_stage_display()}).",
            "wrong_stage",
        )
    check_usable(batch, role="the colloid", on_date=made_on, field="batch",
                 state_read=state_read)
    if made_on < batch.made_on:
        raise refusal(
            "made_on", "Particles cannot be bound before the colloid was made.", "date_order"
        )
    attachment = _prepare_new(ParticleAttachment(
        substrate=substrate, batch=batch, immersion_min=immersion_min, made_on=made_on,
        notes=notes,
    ), actor=actor, many=many)
    moved = _substrate_at_stage(substrate, Substrate.Stage.PARTICLES, actor=actor, many=many)
    return NewRecord(attachment, inputs=[(batch, "colloid")], used_on=made_on,
                     changed=[(moved, f"particles {attachment.code}")],
                     rows=_lineage_edges([(attachment, "particles")], substrate,
                                         used_on=made_on, actor=actor))


@transaction.atomic
def particle_attach(*, actor: User | None, **values) -> ParticleAttachment:
    """Bind particles of a colloid batch onto a substrate that carries a linker layer;
    ``values`` are those of :func:`particle_attachment_check`."""
    return new_record_save(particle_attachment_check(actor=actor, **values), actor=actor)
