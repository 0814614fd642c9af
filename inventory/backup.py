"""Consistent backups of the embedded database and the uploaded files, and their restore.

SQLite: the online backup API (``sqlite3.Connection.backup``) copies a consistent snapshot
while the lab keeps working.  Uploaded files are copied beside it and listed in a manifest
with their SHA-256 digests, which the restore verifies before it replaces anything.
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
from pathlib import Path

from django.conf import settings
from django.db import connection

MANIFEST = "manifest.json"
DATABASE_FILE = "database.sqlite3"


class BackupError(RuntimeError):
    """The backup or restore cannot be done as asked; nothing was changed."""


@dataclass(frozen=True)
class BackupSummary:
    folder: Path
    files: int
    database_bytes: int


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


def _verified_manifest(folder: Path) -> dict:
    try:
        manifest = json.loads((folder / MANIFEST).read_text())
    except (OSError, ValueError) as error:
        raise BackupError(f"{folder} has no readable {MANIFEST}: {error}") from None
    if _sha256(folder / DATABASE_FILE) != manifest["database_sha256"]:
        raise BackupError("The database snapshot does not match its digest; not restoring.")
    for relative, digest in manifest["files"].items():
        path = folder / "media" / relative
        if not path.is_file() or _sha256(path) != digest:
            raise BackupError(f"File {relative} is missing or altered; not restoring.")
    return manifest


def backup_restore(folder: Path, *, media_root: Path | None = None) -> BackupSummary:
    """Verify every digest first, then replace the database contents and the media files."""
    folder = Path(folder)
    manifest = _verified_manifest(folder)
    media_root = Path(media_root or settings.MEDIA_ROOT)
    live = _require_sqlite()
    snapshot = sqlite3.connect(folder / DATABASE_FILE)
    try:
        snapshot.backup(live)
    finally:
        snapshot.close()
    for relative in manifest["files"]:
        destination = media_root / relative
        destination.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(folder / "media" / relative, destination)
    return BackupSummary(folder, len(manifest["files"]),
                         (folder / DATABASE_FILE).stat().st_size)
