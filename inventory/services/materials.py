"""Materials: storage places, reagent and sphere lots, and shelf-life rules."""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date

from django.db import transaction
from simple_history.utils import bulk_update_with_history

from .. import ghs
from ..errors import refusal
from ..lifecycle import check_usable
from ..models import ReagentLot, ShelfLifeRule, SphereLot, StorageLocation
from ..roles import ADMINISTRATOR, MAKER, require_role
from ..shelf_life import (
    LIFECYCLE_KINDS,
    expiry_from_rule,
    rule_for,
    rules_by_scope,
    validate_rule_date,
)
from ._common import (
    CheckingMany,
    User,
    _prepare_new,
    _require_not_future,
    _require_role,
    _save_changed,
    _save_new,
    _save_setting,
)
from .creation import NewRecord, new_record_save


@transaction.atomic
def storage_location_create(*, actor: User | None, name: str, kind: str,
                            room: str = "") -> StorageLocation:
    require_role(actor, MAKER, action="Adding a storage location")
    return _save_new(StorageLocation(name=name, kind=kind, room=room), actor=actor)


def reagent_lot_check(
    *, actor: User | None, name: str, kind: str, supplier: str = "", supplier_lot: str = "",
    received_on: date | None = None, opened_on: date | None = None,
    prepared_on: date | None = None, prepared_from: Sequence[ReagentLot] = (),
    ghs_hazard_codes: str = "", quantity=None, quantity_unit: str = "",
    concentration_mM: float | None = None, storage: StorageLocation | None = None,
    notes: str = "", many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of receiving a reagent lot, on the unsaved lot (with its code); no write."""
    _require_role(actor, MAKER, action="Receiving a reagent lot", many=many)
    if received_on is None and prepared_on is None:
        raise refusal("received_on", "Give the date received (or prepared_on for a "
                                              "solution made in the lab).", "no_date")
    for field_name, day in (("received_on", received_on), ("opened_on", opened_on),
                            ("prepared_on", prepared_on)):
        if day is not None:
            _require_not_future(day, field=field_name)
    if opened_on and received_on and opened_on < received_on:
        raise refusal("opened_on", "A lot cannot be opened before it was received.", "date_order")
    used_on = prepared_on or received_on
    for source in prepared_from:
        check_usable(source, role="a source of a prepared lot", on_date=used_on,
                     field="prepared_from", state_read=many is not None)
    lot = ReagentLot(
        name=name, kind=kind, supplier=supplier, supplier_lot=supplier_lot,
        received_on=received_on, opened_on=opened_on, prepared_on=prepared_on,
        ghs_hazard_codes=ghs.normalise_codes(ghs_hazard_codes), quantity=quantity,
        quantity_unit=quantity_unit, concentration_mM=concentration_mM, storage=storage,
        notes=notes,
    )
    _prepare_new(lot, actor=actor, many=many)
    if not prepared_from:
        return NewRecord(lot)
    return NewRecord(lot, inputs=[(source, "prepared from") for source in prepared_from],
                     used_on=used_on, links={"prepared_from": list(prepared_from)})


@transaction.atomic
def reagent_lot_receive(*, actor: User | None, **values) -> ReagentLot:
    """Record a purchased lot (``received_on``) or a lab-prepared one (``prepared_on``);
    ``values`` are those of :func:`reagent_lot_check`."""
    return new_record_save(reagent_lot_check(actor=actor, **values), actor=actor)


@transaction.atomic
def reagent_lot_open(*, actor: User | None, lot: ReagentLot, opened_on: date) -> ReagentLot:
    """Record the day a lot was first opened; an opened-from rule then gives its expiry."""
    require_role(actor, MAKER, action="Opening a reagent lot")
    lot = ReagentLot.objects.select_for_update().get(pk=lot.pk)
    if lot.opened_on is not None:
        raise refusal("opened_on", f"{lot.code} was already opened on "
                                            f"{lot.opened_on.isoformat()}.", "already_open")
    _require_not_future(opened_on, field="opened_on")
    if lot.received_on and opened_on < lot.received_on:
        raise refusal("opened_on", "A lot cannot be opened before it was received.", "date_order")
    lot.opened_on = opened_on
    _save_changed(lot, actor=actor)
    return lot


def sphere_lot_check(
    *, actor: User | None, material: str, nominal_diameter_nm: float, solids_percent_w_v: float,
    received_on: date, size_cv_percent: float | None = None, supplier: str = "",
    supplier_lot: str = "", volume_mL: float | None = None,
    storage: StorageLocation | None = None, notes: str = "", many: CheckingMany | None = None,
) -> NewRecord:
    """Every rule of receiving a sphere lot, on the unsaved lot (with its code); no write."""
    _require_role(actor, MAKER, action="Receiving a sphere lot", many=many)
    _require_not_future(received_on, field="received_on")
    return NewRecord(_prepare_new(SphereLot(
        material=material, nominal_diameter_nm=nominal_diameter_nm,
        solids_percent_w_v=solids_percent_w_v, size_cv_percent=size_cv_percent,
        supplier=supplier, supplier_lot=supplier_lot, received_on=received_on,
        volume_mL=volume_mL, storage=storage, notes=notes,
    ), actor=actor, many=many))


@transaction.atomic
def sphere_lot_receive(*, actor: User | None, **values) -> SphereLot:
    """Record a sphere lot as received; ``values`` are those of :func:`sphere_lot_check`."""
    return new_record_save(sphere_lot_check(actor=actor, **values), actor=actor)


@transaction.atomic
def shelf_life_rule_set(
    *, actor: User | None, record_kind: str, shelf_life_days: int, counted_from: str,
    reagent_kind: str = "", is_example: bool = False, rationale: str = "",
) -> ShelfLifeRule:
    """Create or change a rule, then re-derive the expiry of every record it governs."""
    require_role(actor, ADMINISTRATOR, action="Setting a shelf-life rule")
    validate_rule_date(record_kind, counted_from)
    rule = _save_setting(
        ShelfLifeRule, actor=actor, scope={"record_kind": record_kind,
                                           "reagent_kind": reagent_kind},
        values={"shelf_life_days": shelf_life_days, "counted_from": counted_from,
                "is_example": is_example, "rationale": rationale}, reason=rationale)
    if record_kind in LIFECYCLE_KINDS:
        _rederive_expiry(record_kind, actor=actor, reason=f"expiry re-derived: rule {rule}")
    return rule


def _rederive_expiry(record_kind: str, *, actor: User | None, reason: str) -> int:
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
    bulk_update_with_history(changed, model, ["expires_on"], batch_size=1000,
                             default_user=actor, default_change_reason=reason)
    return len(changed)
