"""Big QC files analysed by a worker on the task database backend (django-tasks)."""

from __future__ import annotations

import threading
from datetime import timedelta

import pytest
from django.core.exceptions import ValidationError
from django.db import connection, connections
from django.utils import timezone

from inventory.readiness import substrate_check_readiness
from qc.models import QcImport, QcMeasurement
from qc.services import (
    background,
    qc_imports_resume,
    qc_measurement_submit,
    substrate_release_check,
)
from tests.qc_lab import MAP_SETTINGS, RAMAN, QcLab, run_db_worker

GOOD = "good_substrate_map.csv"


@pytest.fixture
def lab(chain, administrator, settings):
    settings.SERSLEDGER_INLINE_ANALYSIS_BYTES = 0  # every file goes to a worker
    settings.SERSLEDGER_READINESS_PROVIDERS = ["qc.readiness.qc_reasons"]
    return QcLab(chain, administrator)


def _submit(lab, substrate, name=GOOD, content=None, capture=None):
    with capture(execute=True):
        return qc_measurement_submit(
            actor=lab.chain.maker, substrate=substrate, analyte_lot=lab.lot, filename=name,
            content=content if content is not None else (RAMAN / name).read_bytes(),
            measured_on=lab.chain.day(1), reference=lab.reference, surface_area_assumed_one=True,
            **MAP_SETTINGS)


def _reasons(lab, substrate):
    return {r.code for r in substrate_check_readiness(substrate.code).reasons}


def test_a_big_file_waits_for_a_worker_and_is_not_ready_until_judged(
        lab, django_capture_on_commit_callbacks):
    substrate = lab.chain.decorated_substrate()
    pending = _submit(lab, substrate, capture=django_capture_on_commit_callbacks)
    assert isinstance(pending, QcImport) and pending.state == QcImport.State.QUEUED
    assert not QcMeasurement.objects.filter(substrate=substrate).exists()
    assert "qc_pending" in _reasons(lab, substrate)
    with pytest.raises(ValidationError) as refused:
        substrate_release_check(substrate)
    assert refused.value.error_dict["substrate"][0].code == "qc_pending"
    run_db_worker()
    pending.refresh_from_db()
    assert pending.state == QcImport.State.DONE and pending.progress_percent == 100, pending.error
    assert pending.measurement.substrate == substrate and pending.measurement.passed
    assert "qc_pending" not in _reasons(lab, substrate)


def test_two_workers_never_write_one_import_twice(lab, django_capture_on_commit_callbacks):
    substrate = lab.chain.decorated_substrate()
    pending = _submit(lab, substrate, capture=django_capture_on_commit_callbacks)
    assert background._claim(pending.pk, "worker-a")  # a holds it and is still working
    assert background.qc_import_run(pending.pk, worker="worker-b") is None
    assert not QcMeasurement.objects.filter(substrate=substrate).exists()
    # a goes quiet past its lease: c takes over and finishes; d then finds nothing to do
    QcImport.objects.filter(pk=pending.pk).update(
        claimed_at=timezone.now() - timedelta(hours=1))
    assert background.qc_import_run(pending.pk, worker="worker-c")
    assert background.qc_import_run(pending.pk, worker="worker-d") is None
    assert QcMeasurement.objects.filter(substrate=substrate).count() == 1


def test_a_worker_killed_mid_task_leaves_it_pending_and_a_retry_completes_it(
        lab, django_capture_on_commit_callbacks, monkeypatch):
    substrate = lab.chain.decorated_substrate()
    pending = _submit(lab, substrate, capture=django_capture_on_commit_callbacks)

    def killed(*args, **kwargs):
        raise KeyboardInterrupt("worker killed")  # not an Exception: nothing catches it

    monkeypatch.setattr(background, "qc_import_record", killed)
    with pytest.raises(KeyboardInterrupt):
        background.qc_import_run(pending.pk, worker="doomed")
    monkeypatch.undo()
    pending.refresh_from_db()
    assert pending.state == QcImport.State.JUDGING and pending.measurement is None
    assert "qc_pending" in _reasons(lab, substrate)
    QcImport.objects.filter(pk=pending.pk).update(
        claimed_at=timezone.now() - timedelta(hours=1))
    assert qc_imports_resume() == 1
    run_db_worker()
    pending.refresh_from_db()
    assert pending.state == QcImport.State.DONE and pending.attempts == 2
    assert QcMeasurement.objects.filter(substrate=substrate).count() == 1


def test_a_bad_big_file_fails_with_its_line_and_saves_nothing(
        lab, django_capture_on_commit_callbacks):
    substrate = lab.chain.decorated_substrate()
    lines = (RAMAN / GOOD).read_text().splitlines()
    header = next(i for i, line in enumerate(lines) if line and not line.startswith("#"))
    cells = lines[header + 2].split(",")
    cells[4] = "oops"
    lines[header + 2] = ",".join(cells)
    pending = _submit(lab, substrate, content="\n".join(lines).encode(),
                      capture=django_capture_on_commit_callbacks)
    run_db_worker()
    pending.refresh_from_db()
    assert pending.state == QcImport.State.FAILED
    assert f"line {header + 3}" in pending.error["raw_file"][0]
    assert not QcMeasurement.objects.filter(substrate=substrate).exists()
    assert "qc_pending" not in _reasons(lab, substrate)


def test_a_small_file_is_still_judged_at_once(lab, settings):
    settings.SERSLEDGER_INLINE_ANALYSIS_BYTES = 10 ** 9
    substrate = lab.chain.decorated_substrate()
    result = qc_measurement_submit(
        actor=lab.chain.maker, substrate=substrate, analyte_lot=lab.lot, filename=GOOD,
        content=(RAMAN / GOOD).read_bytes(), measured_on=lab.chain.day(1),
        reference=lab.reference, surface_area_assumed_one=True, **MAP_SETTINGS)
    assert isinstance(result, QcMeasurement) and not QcImport.objects.exists()


@pytest.mark.postgres_only
@pytest.mark.django_db(transaction=True)
def test_two_workers_at_the_same_moment_write_one_measurement(lab):
    """Two workers with their own connections claim one import at once (PostgreSQL row
    locks; SQLite's in-memory test database has one writer, so the race cannot happen)."""
    if connection.vendor != "postgresql":
        pytest.skip("needs concurrent writers: PostgreSQL")
    substrate = lab.chain.decorated_substrate()
    pending = qc_measurement_submit(
        actor=lab.chain.maker, substrate=substrate, analyte_lot=lab.lot, filename=GOOD,
        content=(RAMAN / GOOD).read_bytes(), measured_on=lab.chain.day(1),
        reference=lab.reference, surface_area_assumed_one=True, **MAP_SETTINGS)
    barrier = threading.Barrier(2)
    results: list = []

    def worker(name: str) -> None:
        try:
            barrier.wait()
            results.append(background.qc_import_run(pending.pk, worker=name))
        finally:
            connections.close_all()

    threads = [threading.Thread(target=worker, args=(name,)) for name in ("a", "b")]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    codes = [code for code in results if code is not None]
    assert len(results) == 2 and len(codes) == 1  # one wrote it, the other found it taken
    assert list(QcMeasurement.objects.filter(substrate=substrate)
                .values_list("code", flat=True)) == codes
    pending.refresh_from_db()
    assert pending.state == QcImport.State.DONE and pending.attempts == 1
