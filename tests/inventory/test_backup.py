"""Backup → wipe → restore gives back every record and every file with the same SHA-256."""

import hashlib
import json
import os
import subprocess
import sys
from pathlib import Path

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
    with pytest.raises(CommandError, match="altered"):
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


# Restore trusts nothing in the backup folder: paths stay inside the media root, every file
# matches the digest the snapshot's own records hold, and a bad manifest is a plain refusal.

def _backup_with_one_file(chain, folder, content=b"1,2\n"):
    _run, (piece,) = chain.run(pieces=1)
    chain.release(piece)
    chain.s.dataset_register(actor=chain.maker, title="t", substrates=[piece],
                             acquired_on=chain.day(0), files=[("s.csv", content)])
    call_command("backup", str(folder))
    return json.loads((folder / "manifest.json").read_text())


def _rewrite_manifest(folder, manifest):
    (folder / "manifest.json").write_text(json.dumps(manifest))


def _tree(root) -> set[str]:
    return {p.relative_to(root).as_posix() for p in root.rglob("*")} if root.exists() else set()


def test_restore_refuses_a_path_that_leaves_the_media_root(sqlite_only, tx_chain, tmp_path,
                                                           settings):
    settings.MEDIA_ROOT = tmp_path / "lab" / "data" / "media"
    folder = tmp_path / "b4"
    manifest = _backup_with_one_file(tx_chain, folder)
    (folder / "media" / "../../escaped.txt").write_bytes(b"planted")  # tmp_path/escaped.txt
    manifest["files"]["../../escaped.txt"] = hashlib.sha256(b"planted").hexdigest()
    _rewrite_manifest(folder, manifest)
    before, lab_before = _state(), _tree(tmp_path / "lab")
    with pytest.raises(CommandError, match=r"\.\./\.\./escaped\.txt.*outside"):
        call_command("backup", str(folder), "--restore")
    assert not (tmp_path / "lab" / "escaped.txt").exists()  # where the restore would write
    assert _state() == before and _tree(tmp_path / "lab") == lab_before


def test_restore_checks_files_against_the_digests_the_database_holds(sqlite_only, tx_chain,
                                                                     tmp_path, settings):
    """Replacing a file and its manifest digest together is still caught: the snapshot's
    DatasetFile row keeps the digest taken at upload."""
    settings.MEDIA_ROOT = tmp_path / "media"
    folder = tmp_path / "b5"
    manifest = _backup_with_one_file(tx_chain, folder)
    (relative,) = manifest["files"]
    (folder / "media" / relative).write_bytes(b"9,9\n")
    manifest["files"][relative] = hashlib.sha256(b"9,9\n").hexdigest()
    _rewrite_manifest(folder, manifest)
    stored = tmp_path / "media" / relative
    stored.write_bytes(b"live copy\n")
    before = _state()
    with pytest.raises(CommandError, match=f"{relative}.*does not match the digest recorded"):
        call_command("backup", str(folder), "--restore")
    assert stored.read_bytes() == b"live copy\n" and _state() == before


@pytest.mark.parametrize("manifest_text", [
    "{not json", "[]", '{"files": {}}', '{"database_sha256": 5, "files": {}}',
    '{"database_sha256": "x", "files": ["a"]}', '{"database_sha256": "x", "files": {"a": 7}}',
])
def test_a_malformed_manifest_is_refused_in_plain_words(sqlite_only, tx_chain, tmp_path,
                                                        settings, manifest_text):
    settings.MEDIA_ROOT = tmp_path / "media"
    folder = tmp_path / "b6"
    _backup_with_one_file(tx_chain, folder)
    (folder / "manifest.json").write_text(manifest_text)
    with pytest.raises(CommandError, match="manifest"):
        call_command("backup", str(folder), "--restore")


def test_restore_of_a_broken_folder_exits_non_zero_without_a_traceback(tmp_path):
    (tmp_path / "b7").mkdir()
    (tmp_path / "b7" / "manifest.json").write_text('{"files": 3}')
    env = {k: v for k, v in os.environ.items() if k != "DATABASE_URL"}
    run = subprocess.run([sys.executable, "manage.py", "backup", str(tmp_path / "b7"),
                          "--restore"], capture_output=True, text=True, check=False,
                         cwd=Path(__file__).resolve().parents[2],
                         env=env | {"DJANGO_SETTINGS_MODULE": "sersledger.settings.test"})
    assert run.returncode == 1
    assert "Traceback" not in run.stderr and "manifest" in run.stderr


def test_a_file_no_record_refers_to_is_left_out(sqlite_only, tx_chain, tmp_path, settings,
                                                capsys):
    settings.MEDIA_ROOT = tmp_path / "media"
    folder = tmp_path / "b8"
    manifest = _backup_with_one_file(tx_chain, folder)
    (folder / "media" / "datasets" / "extra.csv").write_bytes(b"unvouched")
    manifest["files"]["datasets/extra.csv"] = hashlib.sha256(b"unvouched").hexdigest()
    _rewrite_manifest(folder, manifest)
    call_command("backup", str(folder), "--restore")
    assert not (tmp_path / "media" / "datasets" / "extra.csv").exists()
    assert "Left out 1 backed-up files that no record refers to: datasets/extra.csv" in \
        capsys.readouterr().out
