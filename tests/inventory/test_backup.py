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
    _run, pieces = chain.run(pieces=2)
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
    assert (
        hashlib.sha256(stored_path.read_bytes()).hexdigest() == hashlib.sha256(content).hexdigest()
    )


def test_restore_refuses_an_altered_backup(sqlite_only, tx_chain, tmp_path, settings):
    settings.MEDIA_ROOT = tmp_path / "media"
    chain = tx_chain
    _run, (piece,) = chain.run(pieces=1)
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


def _media_digests(root) -> dict[str, str]:
    return {path.relative_to(root).as_posix(): hashlib.sha256(path.read_bytes()).hexdigest()
            for path in sorted(root.rglob("*")) if path.is_file()}


def _audit_state():
    from inventory.models import Signature

    return (
        sorted(Signature.objects.values_list("record_code", "meaning", "signer_username",
                                             "content_sha256", "signed_at")),
        sorted(ReagentLot.history.values_list("code", "version", "history_type",
                                              "history_change_reason", "history_user_id")),
        sorted(Substrate.history.values_list("code", "version", "status")),
    )


def test_backup_keeps_history_signatures_and_every_file_digest(sqlite_only, tx_chain, tmp_path,
                                                               settings):
    from inventory.models import Signature
    from inventory.services import record_amend, record_release
    from inventory.signatures import SignatureIntent
    from tests.conftest import PASSWORDS

    settings.MEDIA_ROOT = tmp_path / "media"
    chain = tx_chain
    lot = chain.lot("solvent", release=False)
    lot = record_release(actor=chain.reviewer, record=lot, signature=SignatureIntent(
        password=PASSWORDS["reviewer"], meaning="approved"))
    record_amend(actor=chain.maker, record=lot, changes={"supplier": "Acme"},
                 reason="Supplier missing at receipt.", expected_version=lot.version)
    _run, (piece,) = chain.run(pieces=1)
    chain.release(piece)
    chain.s.dataset_register(actor=chain.maker, title="t", substrates=[piece],
                             acquired_on=chain.day(0), files=[("a.csv", b"1,2\n"),
                                                              ("b.txt", b"3,4\n")])
    before, audit_before = _state(), _audit_state()
    files_before = _media_digests(tmp_path / "media")
    assert len(files_before) == 2 and audit_before[0] and len(audit_before[1]) > 3
    call_command("backup", str(tmp_path / "b3"))

    # wipe: history, signatures (SQLite keeps DELETE for its own flush), records, files
    ReagentLot.history.all().delete()
    Substrate.history.all().delete()
    with connection.cursor() as cursor:
        cursor.execute(f"DELETE FROM {Signature._meta.db_table}")
    LineageEdge.objects.all().delete()
    DatasetFile.objects.all().delete()
    for path in (tmp_path / "media").rglob("*"):
        if path.is_file():
            path.unlink()
    assert _audit_state() != audit_before and not _media_digests(tmp_path / "media")

    call_command("backup", str(tmp_path / "b3"), "--restore")
    assert _state() == before and _audit_state() == audit_before
    assert _media_digests(tmp_path / "media") == files_before
