"""A big QC upload is streamed: hashed once from disk, stored from disk, read from a path.

The worker never holds the raw file in memory (issue 22: the 82 MB upload was held for its
SHA-256 and the stored copy, and hashed three times).
"""

from __future__ import annotations

import hashlib

import pytest
from django.core.files.base import ContentFile
from django.core.files.storage import InMemoryStorage

from inventory.services.uploads import RawUpload, stored_file_on_disk
from qc.analysis import readers
from qc.models import QcImport
from qc.services import background
from tests.qc_lab import RAMAN, run_db_worker

pytestmark = pytest.mark.django_db

GOOD = "good_substrate_map.csv"


@pytest.fixture
def big(settings):
    settings.SERSLEDGER_INLINE_ANALYSIS_BYTES = 0  # every file goes to a worker
    settings.FILE_UPLOAD_MAX_MEMORY_SIZE = 1024  # Django streams the upload to a temporary file


def _digests_taken(monkeypatch) -> list[str]:
    """Every SHA-256 digest computed from here on (by anything in the process)."""
    taken: list[str] = []
    real = hashlib.sha256

    class Counting:
        def __init__(self, data=b"", **kwargs):
            self._digest = real(data, **kwargs)

        def update(self, data):
            self._digest.update(data)

        def hexdigest(self):
            taken.append(self._digest.hexdigest())
            return taken[-1]

        def digest(self):
            taken.append(self._digest.hexdigest())
            return self._digest.digest()

    monkeypatch.setattr(hashlib, "sha256", Counting)
    return taken


def _never_whole(monkeypatch) -> None:
    def whole(*args, **kwargs):
        raise AssertionError("the raw upload was read into memory whole")

    monkeypatch.setattr(RawUpload, "read_bytes", whole)
    monkeypatch.setattr(readers, "decode_text", whole)  # the text readers' way in


def _post(clients, qc_lab, substrate, capture):
    with capture(execute=False):
        response = clients["maker"].post("/api/v1/qc-measurements/",
                                          qc_lab.upload_fields(substrate, GOOD),
                                          format="multipart")
    assert response.status_code == 202, response.json()
    return QcImport.objects.get(pk=response.json()["id"])


def test_a_big_upload_is_hashed_once_stored_and_analysed_from_disk_never_held_whole(
        qc_lab, clients, big, monkeypatch, django_capture_on_commit_callbacks):
    raw = (RAMAN / GOOD).read_bytes()
    digest = hashlib.sha256(raw).hexdigest()  # the reference: Python's one-shot SHA-256
    taken = _digests_taken(monkeypatch)
    _never_whole(monkeypatch)
    substrate = qc_lab.chain.decorated_substrate()
    with django_capture_on_commit_callbacks(execute=True):
        response = clients["maker"].post("/api/v1/qc-measurements/",
                                          qc_lab.upload_fields(substrate, GOOD),
                                          format="multipart")
    assert response.status_code == 202, response.json()
    pending = QcImport.objects.get(pk=response.json()["id"])
    with pending.upload.open("rb") as stored:
        assert stored.read() == raw
    run_db_worker()
    pending.refresh_from_db()
    assert pending.state == QcImport.State.DONE, pending.error
    assert taken.count(digest) == 1  # hashed once, from request to stored measurement
    measurement = pending.measurement
    with measurement.raw_file.open("rb") as stored:
        assert hashlib.sha256(stored.read()).hexdigest() == digest
    assert measurement.raw_sha256 == pending.upload_sha256 == digest


def test_the_worker_is_handed_a_path_and_digest_not_the_bytes(
        qc_lab, clients, big, django_capture_on_commit_callbacks):
    substrate = qc_lab.chain.decorated_substrate()
    pending = _post(clients, qc_lab, substrate, django_capture_on_commit_callbacks)
    with background.request_of(pending) as request:
        assert request.content is None and request.upload.data is None
        assert request.upload.path.read_bytes() == (RAMAN / GOOD).read_bytes()
        assert request.upload.sha256 == pending.upload_sha256
        assert request.upload.size_bytes == pending.upload_bytes


def test_a_file_judged_by_a_worker_is_refused_when_uploaded_again(
        qc_lab, clients, big, django_capture_on_commit_callbacks):
    substrate = qc_lab.chain.decorated_substrate()
    _post(clients, qc_lab, substrate, django_capture_on_commit_callbacks)
    again = clients["maker"].post("/api/v1/qc-measurements/",
                                  qc_lab.upload_fields(substrate, GOOD), format="multipart")
    assert again.status_code == 400  # still waiting for the worker
    assert {e["code"] for e in again.json()["errors"]} == {"duplicate_file"}
    run_db_worker()
    after = clients["maker"].post("/api/v1/qc-measurements/",
                                  qc_lab.upload_fields(substrate, GOOD), format="multipart")
    assert after.status_code == 400  # judged: the same digest is the same measurement
    assert {e["code"] for e in after.json()["errors"]} == {"duplicate_file"}
    assert QcImport.objects.count() == 1


def test_a_path_is_hashed_in_chunks_to_the_published_digest(tmp_path):
    # FIPS 180-2, appendix B.1: SHA-256("abc").
    small = tmp_path / "abc.txt"
    small.write_bytes(b"abc")
    assert RawUpload.of_path("abc.txt", small).sha256 == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad")
    # FIPS 180-2, appendix B.3: one million "a" (the chunked path: a few 1 MiB reads).
    many = tmp_path / "a.txt"
    many.write_bytes(b"a" * 1_000_000)
    big = RawUpload.of_path("a.txt", many)
    assert big.sha256 == "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0"
    assert len(big) == 1_000_000 and big.data is None


@pytest.mark.parametrize(("content", "blank"), [(b"", True), (b" \n\t\r\n", True),
                                                (b"  1,2\n", False)])
def test_blank_uploads_are_told_without_reading_them_whole(tmp_path, content, blank):
    path = tmp_path / "f.csv"
    path.write_bytes(content)
    assert RawUpload.of_path("f.csv", path).is_blank() is blank
    assert RawUpload.of_bytes("f.csv", content).is_blank() is blank


def test_a_stored_file_without_a_local_path_is_copied_to_disk_for_the_reader(tmp_path):
    storage = InMemoryStorage()
    raw = (RAMAN / GOOD).read_bytes()
    name = storage.save("qc/pending/map.csv", ContentFile(raw))
    with stored_file_on_disk(_FieldFileOf(storage, name), name=GOOD, sha256="d" * 64) as local:
        copied = local.path
        assert copied.read_bytes() == raw and local.sha256 == "d" * 64
    assert not copied.exists()  # the copy is removed afterwards


class _FieldFileOf:
    """What ``stored_file_on_disk`` uses of a FieldFile: ``path`` and ``open``."""

    def __init__(self, storage, name):
        self.storage, self.name = storage, name

    @property
    def path(self):
        raise NotImplementedError("This backend doesn't support absolute paths.")  # as S3's

    def open(self, mode="rb"):
        return self.storage.open(self.name, mode)


def test_a_big_dataset_file_is_hashed_once_and_stored_from_disk_never_held_whole(
        chain, clients, settings, monkeypatch):
    """Dataset files (raw data of any size) take the same way as a big map: streamed by
    Django to a temporary file, hashed there in chunks once, copied to storage in chunks."""
    settings.FILE_UPLOAD_MAX_MEMORY_SIZE = 1024
    substrate = chain.decorated_substrate()
    content = b"shift,counts\n" + b"".join(b"%d,%d\n" % (n, n * 7 % 1000) for n in range(4000))
    digest = hashlib.sha256(content).hexdigest()  # the reference: Python's one-shot SHA-256
    taken = _digests_taken(monkeypatch)
    monkeypatch.setattr(RawUpload, "read_bytes", lambda *a, **k: pytest.fail("read whole"))
    monkeypatch.setattr(RawUpload, "of_bytes", lambda *a, **k: pytest.fail("held in memory"))
    response = clients["maker"].post("/api/v1/datasets/", {
        "title": "Long screen", "substrates": [substrate.code],
        "acquired_on": chain.day(0).isoformat(),
        "files": [ContentFile(content, name="screen.csv")]}, format="multipart")
    assert response.status_code == 201, response.json()
    [stored] = response.json()["files"]
    assert (stored["sha256"], stored["size_bytes"]) == (digest, len(content))
    assert taken == [digest]  # hashed once
    from inventory.models import DatasetFile

    with DatasetFile.objects.get(sha256=digest).file.open("rb") as handle:
        assert handle.read() == content


def test_a_refused_dataset_leaves_no_stored_file(chain, clients, settings, tmp_path):
    """The same file twice is refused under ``files``; no row and no file is left."""
    from inventory.models import Dataset

    settings.MEDIA_ROOT = str(tmp_path)
    settings.FILE_UPLOAD_MAX_MEMORY_SIZE = 1024
    substrate = chain.decorated_substrate()
    content = b"x,y\n" + b"1,2\n" * 1000
    response = clients["maker"].post("/api/v1/datasets/", {
        "title": "Twice", "substrates": [substrate.code], "acquired_on": chain.day(0).isoformat(),
        "files": [ContentFile(content, name="a.csv"), ContentFile(content, name="b.csv")]},
        format="multipart")
    assert response.status_code == 400
    assert [(e["field"], e["code"]) for e in response.json()["errors"]] == [
        ("files", "duplicate_file")]
    assert not Dataset.objects.exists()
    assert not [p for p in tmp_path.rglob("*") if p.is_file()]
