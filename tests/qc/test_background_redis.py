"""The same background import through Redis (RQ), as a lab on several machines runs it.

Runs where a Redis server answers at ``SERSLEDGER_TEST_REDIS_URL`` (CI starts one on
127.0.0.1:6379 and uses database 15, which nothing else uses); skipped elsewhere.  The RQ
worker runs in this process (``SimpleWorker``, burst mode), so it sees the test's database.
"""

from __future__ import annotations

import os

import pytest
from django.contrib import admin

from qc.models import QcImport
from qc.services import qc_measurement_submit
from tests.qc_lab import MAP_SETTINGS, RAMAN, QcLab

REDIS_URL = os.environ.get("SERSLEDGER_TEST_REDIS_URL", "")
pytestmark = pytest.mark.skipif(not REDIS_URL, reason="no SERSLEDGER_TEST_REDIS_URL")


@pytest.fixture
def admin_registry_restored():
    """Adding django_rq to INSTALLED_APPS re-runs admin autodiscovery, which registers
    django_rq's unmanaged dashboard model on the shared admin site; the setting is restored
    after the test but the registration is not, so a later test that walks the admin site
    (on the same xdist worker, in pytest-randomly's order) queried a table that does not exist.
    """
    saved = dict(admin.site._registry)
    yield
    admin.site._registry.clear()
    admin.site._registry.update(saved)


def test_a_big_file_is_judged_by_an_rq_worker(chain, administrator, settings,
                                              admin_registry_restored,
                                              django_capture_on_commit_callbacks):
    import django_rq
    from django_tasks_rq import Job
    from rq import SimpleWorker

    settings.INSTALLED_APPS = [*settings.INSTALLED_APPS, "django_rq", "django_tasks_rq"]
    settings.RQ_QUEUES = {"default": {"URL": REDIS_URL}}
    settings.TASKS = {"default": {"BACKEND": "django_tasks_rq.RQBackend",
                                  "QUEUES": ["default"]}}
    settings.SERSLEDGER_INLINE_ANALYSIS_BYTES = 0
    queue_name = "default"
    django_rq.get_queue(queue_name, job_class=Job).empty()  # nothing left from another run
    lab = QcLab(chain, administrator)
    substrate = chain.decorated_substrate()
    with django_capture_on_commit_callbacks(execute=True):
        pending = qc_measurement_submit(
            actor=chain.maker, substrate=substrate, analyte_lot=lab.lot,
            filename="good_substrate_map.csv",
            content=(RAMAN / "good_substrate_map.csv").read_bytes(),
            measured_on=chain.day(1), reference=lab.reference, surface_area_assumed_one=True,
            **MAP_SETTINGS)
    queue = django_rq.get_queue(queue_name, job_class=Job)
    assert queue.count == 1
    SimpleWorker([queue], connection=queue.connection, job_class=Job).work(burst=True)
    pending.refresh_from_db()
    assert pending.state == QcImport.State.DONE and pending.measurement.passed
    queue.delete(delete_jobs=True)
