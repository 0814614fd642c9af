"""Commands end a refusal with one plain sentence and a non-zero exit, never a traceback
(CommandError is what manage.py prints as 'CommandError: …' with exit status 1)."""

from __future__ import annotations

from pathlib import Path

import pytest
from django.core.management import CommandError, call_command

from inventory.models import DepositionRun
from qc.models import QcMeasurement, UvVisRecord

from .test_raman_command import _run as run_import_qc
from .test_raman_services import QcWorld

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures"


def test_import_qc_as_a_viewer_is_refused_in_words(chain, viewer, tmp_path):
    world = QcWorld(chain)
    path = tmp_path / "map.csv"
    path.write_bytes((FIXTURES / "raman" / "good_substrate_map.csv").read_bytes())
    with pytest.raises(CommandError, match="maker"):
        run_import_qc(world, chain.decorated_substrate(), path, "--user", viewer.username)
    assert QcMeasurement.objects.count() == 0


def test_import_chronoamperogram_as_a_viewer_is_refused_in_words(chain, viewer):
    run, _pieces = chain.run(pieces=1)
    with pytest.raises(CommandError, match="maker"):
        call_command("import_chronoamperogram", run.code,
                     str(FIXTURES / "chronoamperograms" / "au_600nm_hd050.csv"),
                     "--user", viewer.username)
    assert not DepositionRun.objects.get(pk=run.pk).chronoamperogram


@pytest.mark.parametrize("days", ["1000000000", "3000000"])
def test_expiring_with_days_past_the_calendar_is_refused(db, days):
    with pytest.raises(CommandError, match="--days"):
        call_command("expiring", "--days", days)


@pytest.mark.parametrize("option, value", [("--dilution", "1e308"), ("--dilution", "nan"),
                                           ("--dilution", "inf"), ("--path-cm", "1e-300"),
                                           ("--path-cm", "-1")])
def test_import_uvvis_with_an_absurd_number_is_refused(chain, option, value):
    batch = chain.batch(days_ago=10)
    with pytest.raises(CommandError, match="Refused, nothing saved"):
        call_command("import_uvvis", batch.code, str(FIXTURES / "uvvis" / "ag_stable_day00.csv"),
                     option, value, "--measured-on", chain.day(10).isoformat(),
                     "--user", chain.maker.username)
    assert UvVisRecord.objects.count() == 0
