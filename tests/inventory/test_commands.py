"""The command-line interface: demo loading, readiness exit codes, lineage and expiry."""

import json

import pytest
from django.core.management import call_command

from inventory.demo import DEMO_PASSWORD  # noqa: F401  (documented demo credential)
from inventory.models import Substrate


@pytest.fixture
def demo(db, today):
    call_command("load_demo")
    from inventory.demo import demo_is_loaded

    assert demo_is_loaded()


def _readiness(code, capsys, *extra):
    with pytest.raises(SystemExit) as exit_info:
        call_command("readiness", code, *extra)
    return exit_info.value.code, capsys.readouterr()


def test_load_demo_is_idempotent(demo, capsys):
    count = Substrate.objects.count()
    call_command("load_demo")
    assert Substrate.objects.count() == count
    assert "already loaded" in capsys.readouterr().out


def test_readiness_exit_codes(demo, capsys):
    status, out = _readiness("SUB-00001", capsys)
    assert status == 0 and "READY" in out.out
    status, out = _readiness("SUB-00005", capsys)
    assert status == 1 and "NOT READY" in out.out and "linker_layer_too_old" in out.out
    status, out = _readiness("SUB-99999", capsys)
    assert status == 2 and "No record" in out.err


def test_readiness_json(demo, capsys):
    status, out = _readiness("SUB-00005", capsys, "--json")
    payload = json.loads(out.out)
    assert status == 1 and payload["ready"] is False
    assert {"linker_layer_too_old", "open_flag"} <= {r["code"] for r in payload["reasons"]}


def test_lineage_prints_both_directions(demo, capsys):
    call_command("lineage", "SUB-00002")
    out = capsys.readouterr().out
    assert "Made from:" in out and "Used in:" in out
    assert "spheres: SPH-00001" in out and "measured on: DS-00001" in out


def test_expiring_lists_the_expired_linker(demo, capsys):
    call_command("expiring", "--days", "30")
    out = capsys.readouterr().out
    assert "EXPIRED" in out and "reagent lot" in out
