"""Every import path is all-or-nothing: size and type limits, re-uploads recognised by
SHA-256, an interrupted import leaves no row and no file, and random or malformed bytes
give a clear ValidationError (never a crash, never a partial save).  Property tests use
hypothesis, derandomised so CI runs repeat."""

from __future__ import annotations

from pathlib import Path

import pytest
from django.conf import settings
from django.core.exceptions import ValidationError
from hypothesis import HealthCheck, given
from hypothesis import settings as hypothesis_settings
from hypothesis import strategies as st

from inventory.models import Dataset, DatasetFile, DepositionRun, LineageEdge
from inventory.services import dataset_register, deposition_run_attach_chronoamperogram
from qc.models import QcMeasurement, ReferenceMeasurement, UvVisRecord
from qc.services import uvvis_record_import

from .test_raman_services import GOOD_MAP, QcWorld

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures"
FUZZ = hypothesis_settings(max_examples=40, derandomize=True, deadline=None,
                           suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                  HealthCheck.too_slow])
# Random bytes, and text that looks almost like an instrument export.
_TEXTISH = st.text(alphabet="0123456789+-.,;\t \n#eE()nmXY/abc", max_size=400)
malformed = st.one_of(st.binary(max_size=400), _TEXTISH.map(lambda t: t.encode("utf-8")))


def _stored_files() -> set[Path]:
    root = Path(settings.MEDIA_ROOT)
    return {p for p in root.rglob("*") if p.is_file()} if root.exists() else set()


def _counts() -> tuple[int, ...]:
    return (QcMeasurement.objects.count(), ReferenceMeasurement.objects.count(),
            UvVisRecord.objects.count(), Dataset.objects.count(), DatasetFile.objects.count(),
            LineageEdge.objects.count(),
            DepositionRun.objects.exclude(chronoamperogram_sha256="").count())


@pytest.fixture
def world(chain):
    return QcWorld(chain)


@pytest.fixture
def colloid(chain):
    return chain.batch(days_ago=3)


# --- size and type limits ------------------------------------------------------------


def test_an_upload_over_the_limit_is_refused_naming_the_field(world, settings):
    settings.SERSLEDGER_MAX_UPLOAD_BYTES = len(GOOD_MAP) - 1
    piece = world.chain.decorated_substrate()
    with pytest.raises(ValidationError) as refused:
        world.measure(piece, GOOD_MAP)
    (error,) = refused.value.error_dict["raw_file"]
    assert error.code == "file_too_large" and "limit" in error.message


def test_an_unreadable_file_type_is_refused(world, colloid, chain):
    piece = world.chain.decorated_substrate()
    with pytest.raises(ValidationError) as refused:
        world.measure(piece, GOOD_MAP, filename="map.xlsx")
    assert refused.value.error_dict["raw_file"][0].code == "file_type"
    with pytest.raises(ValidationError) as uv:
        uvvis_record_import(actor=chain.maker, batch=colloid, filename="uv.exe",
                            content=b"400,0.1\n", measured_on=chain.day(1))
    assert uv.value.error_dict["raw_file"][0].code == "file_type"


def test_dataset_files_of_any_type_but_within_the_size_limit(chain, settings):
    piece = chain.decorated_substrate()
    settings.SERSLEDGER_MAX_UPLOAD_BYTES = 10
    with pytest.raises(ValidationError) as refused:
        dataset_register(actor=chain.maker, title="t", substrates=[piece],
                         acquired_on=chain.day(0), files=[("photo.png", b"x" * 11)])
    assert refused.value.error_dict["files"][0].code == "file_too_large"
    dataset = dataset_register(actor=chain.maker, title="t", substrates=[piece],
                               acquired_on=chain.day(0), files=[("photo.png", b"x" * 10)])
    assert dataset.files.get().size_bytes == 10


# --- the same file again -----------------------------------------------------------


def test_the_same_qc_file_twice_is_recognised(world):
    piece = world.chain.decorated_substrate()
    first = world.measure(piece, GOOD_MAP, days_ago=2)
    with pytest.raises(ValidationError) as refused:
        world.measure(piece, GOOD_MAP, days_ago=1)
    (error,) = refused.value.error_dict["raw_file"]
    assert error.code == "duplicate_file" and first.code in error.message


def test_the_same_dataset_file_twice_is_recognised(chain):
    piece = chain.decorated_substrate()
    first = dataset_register(actor=chain.maker, title="a", substrates=[piece],
                             acquired_on=chain.day(0), files=[("s.csv", b"1,2\n")])
    with pytest.raises(ValidationError) as refused:
        dataset_register(actor=chain.maker, title="b", substrates=[piece],
                         acquired_on=chain.day(0), files=[("copy.csv", b"1,2\n")])
    assert first.code in refused.value.error_dict["files"][0].message


# --- interrupted imports leave nothing behind -----------------------------------------


def _interrupt(monkeypatch, module: str) -> None:
    def power_cut(*args, **kwargs):
        raise RuntimeError("power cut after the record was written")
    monkeypatch.setattr(f"{module}._link", power_cut)


def test_an_interrupted_qc_import_leaves_no_row_and_no_file(world, monkeypatch):
    piece = world.chain.decorated_substrate()
    before_rows, before_files = _counts(), _stored_files()
    _interrupt(monkeypatch, "qc.services.raman")
    with pytest.raises(RuntimeError, match="power cut"):
        world.measure(piece, GOOD_MAP)
    assert _counts() == before_rows and _stored_files() == before_files


def test_an_interrupted_uvvis_import_leaves_no_row_and_no_file(chain, colloid, monkeypatch):
    content = (FIXTURES / "uvvis" / "ag_stable_day00.csv").read_bytes()
    before_rows, before_files = _counts(), _stored_files()
    _interrupt(monkeypatch, "qc.services.colloid")
    with pytest.raises(RuntimeError, match="power cut"):
        uvvis_record_import(actor=chain.maker, batch=colloid, filename="ag.csv",
                            content=content, measured_on=chain.day(2))
    assert _counts() == before_rows and _stored_files() == before_files


def test_an_interrupted_dataset_leaves_no_row_and_no_file(chain, monkeypatch):
    piece = chain.decorated_substrate()
    before_rows, before_files = _counts(), _stored_files()
    _interrupt(monkeypatch, "inventory.services.records")
    with pytest.raises(RuntimeError, match="power cut"):
        dataset_register(actor=chain.maker, title="t", substrates=[piece],
                         acquired_on=chain.day(0), files=[("a.csv", b"1\n"), ("b.csv", b"2\n")])
    assert _counts() == before_rows and _stored_files() == before_files


# --- random and malformed bytes --------------------------------------------------------


def _only_a_clear_refusal(call, field: str) -> None:
    before_rows, before_files = _counts(), _stored_files()
    try:
        call()
    except ValidationError as error:
        assert set(error.error_dict) == {field}, error  # the file is named as the fault
        messages = [e.message for errors in error.error_dict.values() for e in errors]
        assert all(message.strip() for message in messages)
        assert _counts() == before_rows and _stored_files() == before_files
        return
    assert _counts() != before_rows  # accepted: then it was stored whole


@FUZZ
@given(content=malformed)
def test_qc_import_of_random_bytes(world, content):
    piece = world.piece if hasattr(world, "piece") else world.chain.decorated_substrate()
    world.piece = piece
    _only_a_clear_refusal(lambda: world.measure(piece, content), "raw_file")


@FUZZ
@given(content=malformed)
def test_uvvis_import_of_random_bytes(chain, colloid, content):
    _only_a_clear_refusal(lambda: uvvis_record_import(
        actor=chain.maker, batch=colloid, filename="uv.csv", content=content,
        measured_on=chain.day(1)), "raw_file")


@FUZZ
@given(content=malformed)
def test_chronoamperogram_of_random_bytes(chain, content):
    run, _ = chain.run(pieces=1) if not hasattr(chain, "fuzz_run") else (chain.fuzz_run, None)
    chain.fuzz_run = run
    _only_a_clear_refusal(lambda: deposition_run_attach_chronoamperogram(
        actor=chain.maker, run=run, filename="ca.txt", content=content), "chronoamperogram")
