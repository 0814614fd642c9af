"""The hand-written bulk writes (``inventory.services._rows``) against Django's own.

The reference is Django in the same test: ``bulk_create`` and django-simple-history's
``bulk_history_create`` for new rows, ``Model.save`` for a changed one.  Both write the same
records, and what each stores must be the same value for value (keys, codes and clocks
aside), on SQLite and on PostgreSQL.
"""

from __future__ import annotations

from datetime import date

import pytest
from django.contrib.auth import get_user_model
from simple_history.utils import bulk_create_with_history, get_history_manager_for_model

from inventory.models import DepositionRun, ReagentLot, SphereLot, Substrate
from inventory.services import reagent_lot_receive
from inventory.services._rows import history_rows_insert, rows_insert, rows_update

pytestmark = pytest.mark.django_db

# The two sets differ only in these (and the supplier lot, which carries the set's tag).
CLOCKS_AND_KEYS = {"id", "code", "created_at", "updated_at", "history_id", "history_date"}


def _untagged(rows: list[dict]) -> list[dict]:
    return [{**row, "supplier_lot": row["supplier_lot"][1:]} for row in rows]


def _stored(model, pks) -> list[dict]:
    rows = model.objects.filter(pk__in=pks).order_by("pk")
    return [{f.attname: getattr(row, f.attname) for f in model._meta.concrete_fields
             if f.attname not in CLOCKS_AND_KEYS} for row in rows]


def _history(model, pks) -> list[dict]:
    history = get_history_manager_for_model(model).model
    rows = history.objects.filter(id__in=pks).order_by("id", "history_id")
    return [{f.attname: getattr(row, f.attname) for f in history._meta.concrete_fields
             if f.attname not in CLOCKS_AND_KEYS} for row in rows]


def _lots(user, tag: str) -> list[SphereLot]:
    """Unsaved lots with every kind of value: text, numbers, None, a date, a user."""
    lots = [SphereLot(code=f"SPH-{tag}{n:03d}", material=("polystyrene", "silica")[n % 2],
                      nominal_diameter_nm=200.0 + n, size_cv_percent=None if n % 3 else 2.5,
                      solids_percent_w_v=10, supplier=f"Invented Colloids {n}",
                      supplier_lot=f"{tag}-{n}", received_on=date(2026, 1, 1 + n),
                      volume_mL=5.5, notes="" if n % 2 else "é ü, 50 %",
                      created_by=user if n % 2 else None, updated_by=user)
            for n in range(7)]
    for n, lot in enumerate(lots):
        lot._history_user, lot._change_reason = user, f"row {n}" if n % 3 else None
    return lots


def test_new_rows_and_their_history_match_djangos_bulk_create():
    user = get_user_model().objects.create_user("maker")
    ours, django_s = _lots(user, "A"), _lots(user, "B")
    rows_insert(SphereLot, ours)
    history_rows_insert(SphereLot, ours, update=False, actor=user)
    bulk_create_with_history(django_s, SphereLot, default_user=user)

    assert all(lot.pk and not lot._state.adding for lot in ours)
    assert [lot.pk for lot in ours] == sorted(lot.pk for lot in ours)  # keys follow the order
    stored = _stored(SphereLot, [lot.pk for lot in ours])
    assert _untagged(stored) == _untagged(_stored(SphereLot, [lot.pk for lot in django_s]))
    assert [row["supplier_lot"] for row in stored] == [f"A-{n}" for n in range(7)]
    ours_history = _history(SphereLot, [lot.pk for lot in ours])
    assert _untagged(ours_history) == _untagged(
        _history(SphereLot, [lot.pk for lot in django_s]))
    assert {row["history_type"] for row in ours_history} == {"+"}
    assert {row["history_user_id"] for row in ours_history} == {user.pk}
    # The times are stored as times (not text), equal to what Django wrote within the test.
    first = SphereLot.objects.get(pk=ours[0].pk)
    assert abs((first.created_at - SphereLot.objects.get(pk=django_s[0].pk).created_at)
               .total_seconds()) < 60


def test_a_foreign_key_to_a_record_inserted_just_before_takes_its_new_key():
    bath = reagent_lot_receive(actor=None, name="bath", kind="plating_bath",
                               received_on=date(2026, 1, 2))
    slide = ReagentLot.objects.create(code="LOT-9001", name="slide", kind="base_slide",
                                      received_on=date(2026, 1, 2))
    run = DepositionRun(code="RUN-9001", bath_lot=bath, base_slide_lot=slide, metal="Au",
                        electrons_per_atom=1, mode="potentiostatic", electrode_area_cm2=1.0,
                        made_on=date(2026, 2, 1))
    pieces = [Substrate(code=f"SUB-900{n}", deposition_run=run, piece_label=f"RUN-9001/{n}",
                        made_on=date(2026, 2, 1)) for n in (1, 2)]
    rows_insert(DepositionRun, [run])
    rows_insert(Substrate, pieces)
    assert {piece.deposition_run_id for piece in pieces} == {run.pk}
    assert set(Substrate.objects.filter(deposition_run=run).values_list("code", flat=True)) \
        == {"SUB-9001", "SUB-9002"}


def test_a_changed_row_matches_save():
    user = get_user_model().objects.create_user("maker")
    ours, django_s = _lots(user, "C")[:2], _lots(user, "D")[:2]
    for lot in ours + django_s:
        lot.save()
    for lot in ours + django_s:
        lot.notes, lot.volume_mL, lot.size_cv_percent = "opened", 4.25, None
        lot.version += 1
        lot._change_reason = "used"
    rows_update(SphereLot, ours)
    history_rows_insert(SphereLot, ours, update=True, actor=user)
    for lot in django_s:
        lot.save()
    assert _untagged(_stored(SphereLot, [lot.pk for lot in ours])) == _untagged(
        _stored(SphereLot, [lot.pk for lot in django_s]))
    ours_history = [row for row in _history(SphereLot, [lot.pk for lot in ours])
                    if row["history_type"] == "~"]
    theirs_history = [row for row in _history(SphereLot, [lot.pk for lot in django_s])
                      if row["history_type"] == "~"]
    assert len(ours_history) == 2
    assert _untagged(ours_history) == _untagged(theirs_history)


def test_many_rows_go_in_batches_within_every_database_s_parameter_bound():
    """3,000 lots of ~25 columns are 75,000 values: more than PostgreSQL takes in one
    statement (65,535) and SQLite (999); all are written, keys in order."""
    lots = [SphereLot(code=f"SPH-E{n:05d}", material="silica", nominal_diameter_nm=300.0,
                      solids_percent_w_v=5, supplier_lot=f"E-{n}", received_on=date(2026, 1, 5))
            for n in range(3_000)]
    rows_insert(SphereLot, lots)
    history_rows_insert(SphereLot, lots, update=False, actor=None)
    keys = [lot.pk for lot in lots]
    assert keys == sorted(keys) and len(set(keys)) == 3_000
    assert SphereLot.objects.filter(code__startswith="SPH-E").count() == 3_000
    assert get_history_manager_for_model(SphereLot).filter(id__in=keys).count() == 3_000
