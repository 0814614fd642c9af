"""enter_charge RUN_ID CHARGE_C: record the charge a potentiostat reported for a run without a
file, and print the figures worked out from it (the same object as the API's charge action)."""

from __future__ import annotations

from inventory.api.results import chronoamperogram_summary
from inventory.models import DepositionRun
from inventory.services.deposition import deposition_run_enter_charge

from .import_chronoamperogram import Command as AttachCommand


class Command(AttachCommand):
    help = ("Enter the deposition charge the potentiostat reported for a run that has no "
            "chronoamperogram, store the film height and h/D worked out from it, and flag "
            "the run and its pieces if h/D is outside the lab's tolerance.")

    def add_inputs(self, parser):
        parser.add_argument("run", help="deposition run ID, e.g. DEP-00001")
        parser.add_argument("charge_C", help="the charge in coulombs, e.g. 0.112")
        parser.add_argument("--reason", default="", help="why, kept in the run's history")

    def record(self, *, actor, options) -> dict:
        run = self.get_record(DepositionRun, options["run"], "deposition run")
        result = deposition_run_enter_charge(actor=actor, run=run, charge_C=options["charge_C"],
                                             reason=options["reason"])
        return chronoamperogram_summary(result)
