"""Several people saving at once: every save succeeds, on SQLite and on PostgreSQL.

SQLite allows one writer at a time.  A transaction that starts by reading and then writes
cannot wait for the write lock (SQLite answers "database is locked" at once, to avoid a
deadlock), so the SQLite connection opens every transaction with BEGIN IMMEDIATE and uses
write-ahead logging (readers never block the writer); writers then queue for the busy timeout.
SQLite documents both behaviours: https://sqlite.org/lang_transaction.html and
https://sqlite.org/wal.html.
"""

from __future__ import annotations

import os
import subprocess
import sys
import threading
from datetime import date
from pathlib import Path

import pytest
from django.db import connection, connections

THREADS = 8
SAVES_PER_THREAD = 5
ROOT = Path(__file__).resolve().parents[2]


def save_concurrently() -> tuple[list[str], list[str]]:
    """THREADS threads each receive SAVES_PER_THREAD reagent lots through the service."""
    from inventory import services

    codes: list[str] = []
    errors: list[str] = []
    barrier = threading.Barrier(THREADS)

    def worker(n: int) -> None:
        try:
            barrier.wait()
            for i in range(SAVES_PER_THREAD):
                try:
                    lot = services.reagent_lot_receive(actor=None, name=f"lot {n}.{i}",
                                                       kind="solvent",
                                                       received_on=date(2026, 1, 1))
                    codes.append(lot.code)
                except Exception as error:  # noqa: BLE001  (counted, as a 500 would be)
                    errors.append(f"{type(error).__name__}: {error}")
        finally:
            connections.close_all()

    threads = [threading.Thread(target=worker, args=(n,)) for n in range(THREADS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    return codes, errors


def _sqlite_file_run() -> None:
    """Run in a fresh process: migrate a file database, then save from several threads."""
    import django

    django.setup()
    from django.core.management import call_command

    call_command("migrate", verbosity=0)
    assert connection.vendor == "sqlite" and not connection.is_in_memory_db()
    codes, errors = save_concurrently()
    print(len(codes), len(set(codes)), len(errors))
    for error in sorted(set(errors)):
        print(error)


def test_sqlite_file_database_lets_concurrent_writers_wait(tmp_path):
    env = {k: v for k, v in os.environ.items() if k != "DATABASE_URL"}
    env |= {"DJANGO_SETTINGS_MODULE": "sersledger.settings.test", "TMPDIR": str(tmp_path)}
    run = subprocess.run(
        [sys.executable, "-c",
         ("from tests.inventory.test_concurrent_writers import _sqlite_file_run; "
          "_sqlite_file_run()")],
        capture_output=True, text=True, env=env, cwd=ROOT, timeout=300, check=False)
    assert run.returncode == 0, run.stderr[-3000:]
    counts, *messages = run.stdout.splitlines()
    total = THREADS * SAVES_PER_THREAD
    assert [int(n) for n in counts.split()] == [total, total, 0], messages


@pytest.mark.postgres_only
@pytest.mark.django_db(transaction=True)
def test_postgresql_lets_concurrent_writers_through():
    if connection.vendor != "postgresql":
        pytest.skip("the SQLite file database is tested in its own process above")
    codes, errors = save_concurrently()
    total = THREADS * SAVES_PER_THREAD
    assert not errors and len(codes) == total and len(set(codes)) == total
