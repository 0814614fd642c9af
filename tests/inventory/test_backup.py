"""Backup → wipe → restore gives back every record and every file with the same SHA-256."""

import hashlib

import pytest
from django.core.management import CommandError, call_command
from django.db import connection

from inventory.models import DatasetFile, LineageEdge, ReagentLot, Substrate


@pytest.fixture
def sqlite_only(transactional_db):
    if connection.vendor != "sqlite":
        pytest.skip("the backup command covers SQLite; PostgreSQL uses pg_dump (DEVELOPERS.md)")


@pytest.fixture
def tx_chain(transactional_db, maker, reviewer, today):
    from tests.conftest import ChainBuilder

    return ChainBuilder(maker, reviewer, today)


def _state():
    return (
        sorted(ReagentLot.objects.values_list("code", "status", "expires_on")),
        sorted(Substrate.objects.values_list("code", "status", "stage")),
        LineageEdge.objects.count(),
        sorted(DatasetFile.objects.values_list("original_name", "sha256")),
    )


def test_backup_wipe_restore_round_trip(sqlite_only, tx_chain, tmp_path, settings):
    settings.MEDIA_ROOT = tmp_path / "media"
    chain = tx_chain
    run, pieces = chain.run(pieces=2)
    chain.release(pieces[0])
    content = b"raman_shift_cm1,intensity_counts\n1000,5\n1001,7\n"
    chain.s.dataset_register(actor=chain.maker, title="t", substrates=[pieces[0]],
                             acquired_on=chain.day(0), files=[("s.csv", content)])
    before = _state()
    call_command("backup", str(tmp_path / "b1"))

    # wipe: records and the uploaded file
    stored = DatasetFile.objects.get()
    stored_path = tmp_path / "media" / stored.file.name
    stored_path.unlink()
    LineageEdge.objects.all().delete()
    DatasetFile.objects.all().delete()
    assert _state() != before

    call_command("backup", str(tmp_path / "b1"), "--restore")
    assert _state() == before
    assert hashlib.sha256(stored_path.read_bytes()).hexdigest() == hashlib.sha256(content).hexdigest()


def test_restore_refuses_an_altered_backup(sqlite_only, tx_chain, tmp_path, settings):
    settings.MEDIA_ROOT = tmp_path / "media"
    chain = tx_chain
    run, (piece,) = chain.run(pieces=1)
    chain.release(piece)
    chain.s.dataset_register(actor=chain.maker, title="t", substrates=[piece],
                             acquired_on=chain.day(0), files=[("s.csv", b"1,2\n")])
    call_command("backup", str(tmp_path / "b2"))
    tampered = next((tmp_path / "b2" / "media").rglob("*.csv"))
    tampered.write_bytes(b"1,3\n")
    count = Substrate.objects.count()
    with pytest.raises(CommandError, match="missing or altered"):
        call_command("backup", str(tmp_path / "b2"), "--restore")
    assert Substrate.objects.count() == count


def test_backup_refuses_a_non_empty_folder(sqlite_only, tmp_path):
    (tmp_path / "old").mkdir()
    (tmp_path / "old" / "x").write_text("x")
    with pytest.raises(CommandError, match="not empty"):
        call_command("backup", str(tmp_path / "old"))
