"""Consistent backups of the embedded database and the uploaded files, and their restore.

SQLite: the online backup API (``sqlite3.Connection.backup``) copies a consistent snapshot
while the lab keeps working.  Uploaded files are copied beside it and listed in a manifest
with their SHA-256 digests.  The restore trusts nothing in the backup folder: before it
replaces anything it checks the manifest's shape, keeps every path inside the media folder,
and checks each file against the digest that the snapshot's own record took at upload (an
edited manifest cannot vouch for an edited file).
PostgreSQL: use ``pg_dump --format=custom`` / ``pg_restore --clean`` for the database (see
DEVELOPERS.md) and this module's file copy for the media folder.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path, PurePosixPath

from django.apps import apps
from django.conf import settings
from django.db import connection, models

MANIFEST = "manifest.json"
DATABASE_FILE = "database.sqlite3"


class BackupError(RuntimeError):
    """The backup or restore cannot be done as asked; nothing was changed."""


@dataclass(frozen=True)
class BackupSummary:
    folder: Path
    files: int
    database_bytes: int
    left_out: tuple[str, ...] = ()  # backed-up files no record refers to; not restored


def _sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _require_sqlite() -> sqlite3.Connection:
    if connection.vendor != "sqlite":
        raise BackupError("This backup command handles SQLite; for PostgreSQL use pg_dump "
                          "(see DEVELOPERS.md).")
    if connection.in_atomic_block:
        # SQLite's backup API waits forever on a database with an open transaction.
        raise BackupError("Run backup and restore outside a transaction.")
    connection.ensure_connection()
    return connection.connection


def backup_write(folder: Path, *, media_root: Path | None = None) -> BackupSummary:
    """Write the database snapshot, the uploaded files and a manifest into ``folder``."""
    folder = Path(folder)
    if folder.exists() and any(folder.iterdir()):
        raise BackupError(f"{folder} is not empty; choose a new folder for each backup.")
    media_root = Path(media_root or settings.MEDIA_ROOT)
    source = _require_sqlite()
    folder.mkdir(parents=True, exist_ok=True)
    target = sqlite3.connect(folder / DATABASE_FILE)
    try:
        source.backup(target)
    finally:
        target.close()
    files = {}
    if media_root.exists():
        for path in sorted(p for p in media_root.rglob("*") if p.is_file()):
            relative = path.relative_to(media_root).as_posix()
            destination = folder / "media" / relative
            destination.parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(path, destination)
            files[relative] = _sha256(destination)
    manifest = {
        "written_at": datetime.now(UTC).isoformat(timespec="seconds"),
        "database_sha256": _sha256(folder / DATABASE_FILE),
        "files": files,
    }
    (folder / MANIFEST).write_text(json.dumps(manifest, indent=2, sort_keys=True))
    return BackupSummary(folder, len(files), (folder / DATABASE_FILE).stat().st_size)


def _manifest(folder: Path) -> dict:
    """The manifest, or a refusal saying in plain words what is wrong with it."""
    try:
        manifest = json.loads((folder / MANIFEST).read_text())
    except (OSError, ValueError) as error:
        raise BackupError(f"{folder} has no readable {MANIFEST}: {error}") from None
    if not isinstance(manifest, dict):
        raise BackupError(f"{MANIFEST} in {folder} is not a JSON object; not restoring.")
    if not isinstance(manifest.get("database_sha256"), str):
        raise BackupError(f"{MANIFEST} in {folder} does not give the database snapshot's "
                          "SHA-256 (database_sha256); not restoring.")
    files = manifest.get("files")
    if not isinstance(files, dict) or not all(
            isinstance(path, str) and isinstance(digest, str) for path, digest in files.items()):
        raise BackupError(f"{MANIFEST} in {folder} must list files as "
                          '{"relative/path": "sha256"}; not restoring.')
    return manifest


def _inside(root: Path, relative: str) -> Path:
    """``root / relative``, refused unless it stays inside ``root`` (no ``..``, no absolute
    path, no symbolic link leading out)."""
    parts = PurePosixPath(relative).parts
    target = (root / relative).resolve()
    if (not relative or PurePosixPath(relative).is_absolute() or ".." in parts
            or not target.is_relative_to(root.resolve())):
        raise BackupError(f"The manifest names {relative!r}, a path outside the media folder; "
                          "not restoring.")
    return target


def _digest_columns() -> list[tuple[str, str, str]]:
    """(table, file column, digest column) of every model keeping an uploaded file beside
    its SHA-256; the digest field is ``<name>_sha256``, ``<stem>_sha256`` for ``<stem>_file``,
    or ``sha256``."""
    found = []
    for model in apps.get_models():
        if model._meta.proxy or not model._meta.managed:
            continue
        names = {f.name: f for f in model._meta.concrete_fields}
        for field in model._meta.concrete_fields:
            if not isinstance(field, models.FileField):
                continue
            stem = field.name.removesuffix("_file")
            digest = next((names[n] for n in (f"{field.name}_sha256", f"{stem}_sha256", "sha256")
                           if n in names), None)
            if digest is None:
                raise BackupError(f"{model._meta.label}.{field.name} keeps files without a "
                                  "digest, so a restore could not check them.")
            found.append((model._meta.db_table, field.column, digest.column))
    return found


def _recorded_digests(snapshot: Path) -> dict[str, str]:
    """File path -> SHA-256 as the snapshot's own records hold them (taken at upload)."""
    recorded: dict[str, str] = {}
    try:
        database = sqlite3.connect(f"{snapshot.resolve().as_uri()}?mode=ro", uri=True)
        try:
            for table, file_column, digest_column in _digest_columns():
                rows = database.execute(
                    f'SELECT "{file_column}", "{digest_column}" FROM "{table}" '
                    f"WHERE \"{file_column}\" <> ''")
                recorded.update(rows.fetchall())
        finally:
            database.close()
    except sqlite3.Error as error:
        raise BackupError(f"The database snapshot cannot be read ({error}); not restoring.") \
            from None
    return recorded


def _verified_manifest(folder: Path, media_root: Path) -> tuple[dict, list[str]]:
    """Check everything before anything is written: the manifest's shape, every path, the
    snapshot's digest, and each file against the digest its record holds in the snapshot.

    Returns the manifest and the files no record refers to (left out of the restore, as
    nothing vouches for them)."""
    manifest = _manifest(folder)
    snapshot = folder / DATABASE_FILE
    if not snapshot.is_file():
        raise BackupError(f"{folder} has no {DATABASE_FILE}; not restoring.")
    if _sha256(snapshot) != manifest["database_sha256"]:
        raise BackupError("The database snapshot does not match its digest; not restoring.")
    stored = folder / "media"
    for relative in manifest["files"]:
        _inside(media_root, relative)
        _inside(stored, relative)
    recorded = _recorded_digests(snapshot)
    for relative, digest in recorded.items():
        path = _inside(stored, relative)
        if relative not in manifest["files"] or not path.is_file():
            raise BackupError(f"File {relative} is missing from the backup; not restoring.")
        actual = _sha256(path)
        if actual != digest:
            raise BackupError(f"File {relative} does not match the digest recorded in the "
                              "database at upload (altered); not restoring.")
        if actual != manifest["files"][relative]:
            raise BackupError(f"File {relative} is missing or altered; not restoring.")
    unrecorded = sorted(set(manifest["files"]) - set(recorded))
    return manifest, unrecorded


def backup_restore(folder: Path, *, media_root: Path | None = None) -> BackupSummary:
    """Verify every path and digest first, then replace the database contents and the
    media files the restored records refer to."""
    folder = Path(folder)
    media_root = Path(media_root or settings.MEDIA_ROOT)
    manifest, unrecorded = _verified_manifest(folder, media_root)
    live = _require_sqlite()
    snapshot = sqlite3.connect(folder / DATABASE_FILE)
    try:
        snapshot.backup(live)
    finally:
        snapshot.close()
    restored = [relative for relative in manifest["files"] if relative not in unrecorded]
    for relative in restored:
        destination = _inside(media_root, relative)
        destination.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(folder / "media" / relative, destination)
    return BackupSummary(folder, len(restored), (folder / DATABASE_FILE).stat().st_size,
                         left_out=tuple(unrecorded))
