"""An uploaded file as the services take it: its name, where its bytes are, size and SHA-256.

A big upload (a Raman map of tens of megabytes) is never held in memory: Django streams it
to a temporary file, :meth:`RawUpload.of_path` hashes it there in chunks, once, and the
services store it from that path (:meth:`RawUpload.opened`: storage copies it in chunks)
and hand the path to the readers.  A small file given as bytes (scripts, tests, the demo)
is kept as it is (:meth:`RawUpload.of_bytes`).

Every upload meets the same size limit and list of readable types (:func:`check_upload`),
and a failed step removes the files it stored (:func:`files_removed_if_failed`).
"""

from __future__ import annotations

import hashlib
import shutil
import tempfile
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath

from django.conf import settings
from django.core.files import File
from django.core.files.base import ContentFile
from django.db.models import FileField, Model

from ..errors import refusal

CHUNK_BYTES = 1 << 20  # read and hash 1 MiB at a time


@dataclass(frozen=True, kw_only=True)
class RawUpload:
    """One uploaded file: on disk (``path``) or, when small, in memory (``data``)."""

    name: str
    size_bytes: int
    sha256: str
    path: Path | None = None
    data: bytes | None = field(default=None, repr=False)

    @classmethod
    def of_bytes(cls, name: str, data: bytes) -> RawUpload:
        data = bytes(data)
        return cls(name=name, size_bytes=len(data), sha256=hashlib.sha256(data).hexdigest(),
                   data=data)

    @classmethod
    def of_path(cls, name: str, path: str | Path, *, sha256: str | None = None) -> RawUpload:
        """The file at ``path``, hashed in chunks unless its digest is already known."""
        path = Path(path)
        if sha256 is None:
            digest = hashlib.sha256()
            with path.open("rb") as handle:
                while chunk := handle.read(CHUNK_BYTES):
                    digest.update(chunk)
            sha256 = digest.hexdigest()
        return cls(name=name, size_bytes=path.stat().st_size, sha256=sha256, path=path)

    @classmethod
    def of_django_file(cls, upload) -> RawUpload:
        """A Django upload: by its temporary file when it has one, else read (it is small)."""
        if hasattr(upload, "temporary_file_path"):
            return cls.of_path(upload.name, upload.temporary_file_path())
        upload.seek(0)
        return cls.of_bytes(upload.name, upload.read())

    def __len__(self) -> int:
        """The size in bytes (what the upload checks compare with the lab's limit)."""
        return self.size_bytes

    def chunks(self) -> Iterator[bytes]:
        if self.path is None:
            yield self.data or b""
            return
        with self.path.open("rb") as handle:
            while chunk := handle.read(CHUNK_BYTES):
                yield chunk

    def is_blank(self) -> bool:
        """Empty or only whitespace (read only as far as the first other byte)."""
        return all(chunk.isspace() for chunk in self.chunks()) or self.size_bytes == 0

    def read_bytes(self) -> bytes:
        """The whole file in memory: only for readers that need it (small or unusual files)."""
        return self.data if self.path is None else self.path.read_bytes()

    def source(self) -> Path | bytes:
        """What a reader takes: the path on disk, or the bytes of a small file."""
        return self.path if self.path is not None else self.read_bytes()

    @contextmanager
    def opened(self) -> Iterator[File]:
        """The file for a model's ``FileField``: storage copies it from disk in chunks."""
        if self.path is None:
            yield ContentFile(self.data or b"", name=self.name)
            return
        with self.path.open("rb") as handle:
            yield File(handle, name=self.name)


@contextmanager
def stored_file_on_disk(stored, *, name: str, sha256: str) -> Iterator[RawUpload]:
    """A stored ``FieldFile`` as a ``RawUpload`` on local disk, with its known digest.

    Storage with local paths (the file system) is read in place; any other (object storage)
    is copied to a temporary file first, in chunks, and the copy removed afterwards.
    """
    try:
        local = Path(stored.path)
    except NotImplementedError:
        local = None
    if local is not None:
        yield RawUpload.of_path(name, local, sha256=sha256)
        return
    with tempfile.NamedTemporaryFile(suffix=Path(name).suffix) as copy:
        with stored.open("rb") as handle:
            shutil.copyfileobj(handle, copy, CHUNK_BYTES)
        copy.flush()
        yield RawUpload.of_path(name, copy.name, sha256=sha256)


# Instrument exports the readers understand: text tables and JCAMP-DX (IUPAC).
INSTRUMENT_FILE_EXTENSIONS = (".csv", ".txt", ".tsv", ".dat", ".asc", ".dx", ".jdx", ".jcamp")


def check_upload(content: bytes, *, field: str, filename: str,
                 extensions: Sequence[str] | None = INSTRUMENT_FILE_EXTENSIONS) -> None:
    """Refuse an upload over ``SERSLEDGER_MAX_UPLOAD_BYTES`` or of a type nobody reads.

    Checked in the services so a script, the API and the pages meet the same limit.
    """
    limit = settings.SERSLEDGER_MAX_UPLOAD_BYTES
    if len(content) > limit:
        raise refusal(field, f"{filename or 'The file'} is {len(content) / 1e6:.1f} MB; the "
                             f"limit is {limit / 1e6:.1f} MB.", "file_too_large")
    suffix = PurePosixPath(filename.replace("\\", "/")).suffix.lower()
    if extensions is not None and suffix not in extensions:
        raise refusal(field, f"{filename or 'The file'}: a {suffix or 'nameless'} file is not "
                             f"read here; send one of {', '.join(extensions)}.", "file_type")


@contextmanager
def files_removed_if_failed(*records: Model) -> Iterator[None]:
    """If the block fails, delete the files ``records`` already stored.

    The rows roll back with the transaction, but storage is not transactional: without
    this an interrupted import would leave orphan files behind.
    """
    try:
        yield
    except BaseException:
        for record in records:
            for field in record._meta.concrete_fields:
                stored = getattr(record, field.name) if isinstance(field, FileField) else None
                if stored and getattr(stored, "_committed", False) and stored.name:
                    stored.storage.delete(stored.name)
        raise
