"""manage.py import_sheet: exit 0 ok, 1 row errors, 2 refused file; --json prints the report."""

from __future__ import annotations

import json

import pytest
from django.core.management import call_command
from django.core.management.base import CommandError

from inventory.models import SphereLot

from .sheets import csv_bytes

pytestmark = pytest.mark.django_db

HEADER = ["Material", "Nominal diameter (nm)", "Solids (%)", "Received on"]


def call(*args):
    import io

    out = io.StringIO()
    try:
        call_command("import_sheet", *args, stdout=out)
        code = 0
    except CommandError as error:
        code = error.returncode
    return code, out.getvalue()


def test_dry_run_then_import_with_json(tmp_path, maker, today):
    path = tmp_path / "lots.csv"
    path.write_bytes(csv_bytes([HEADER, ["polystyrene", 600, 10, "2026-05-01"]]))
    code, out = call("sphere_lots", str(path), "--dry-run", "--json", "--user", "maker")
    assert code == 0 and json.loads(out)["created"][0]["row"] == 2
    assert SphereLot.objects.count() == 0
    code, out = call("sphere_lots", str(path), "--json", "--user", "maker")
    assert code == 0 and json.loads(out)["committed"] is True
    assert SphereLot.objects.get().created_by == maker


def test_row_errors_exit_1_and_save_nothing(tmp_path, maker, today):
    path = tmp_path / "lots.csv"
    path.write_bytes(csv_bytes([HEADER, ["polystyrene", 600, 10, "2026-05-01"],
                                ["polystyrene", "six hundred", 10, "2026-05-01"]]))
    code, out = call("sphere_lots", str(path), "--json", "--user", "maker")
    report = json.loads(out)
    assert code == 1 and not report["ok"] and SphereLot.objects.count() == 0
    assert report["errors"] == [{"row": 3, "column": "Nominal diameter (nm)",
                                 "reason": "'six hundred' is not a number",
                                 "code": "not_a_number"}]


def test_a_refused_file_exits_2_in_the_one_error_shape(tmp_path, maker, today):
    path = tmp_path / "photo.png"
    path.write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00")
    code, out = call("sphere_lots", str(path), "--json", "--user", "maker")
    assert code == 2
    (error,) = json.loads(out)["errors"]
    assert (error["field"], error["code"]) == ("file", "not_a_spreadsheet")
