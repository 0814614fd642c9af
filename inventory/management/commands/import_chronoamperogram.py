"""import_chronoamperogram RUN_ID FILE: attach a deposition record and print its numbers."""

from __future__ import annotations

from inventory.api.results import chronoamperogram_summary
from inventory.management.cli import RecordingCommand
from inventory.models import DepositionRun
from inventory.services.deposition import (
    deposition_run_attach_chronoamperogram,
)


class Command(RecordingCommand):
    help = ("Attach a chronoamperogram to a deposition run, store its charge, film height and "
            "h/D, and flag the run and its pieces if h/D is outside the lab's tolerance.")

    def add_inputs(self, parser):
        parser.add_argument("run", help="deposition run ID, e.g. DEP-00001")
        parser.add_argument("file", help="the potentiostat's text export")
        parser.add_argument("--time-unit", help="time unit if the header gives none (s, ms, min)")
        parser.add_argument("--current-unit", help="current unit if the header gives none "
                                                   "(A, mA, uA, nA)")
        parser.add_argument("--cathodic-sign", default="negative",
                            choices=[c.value for c in DepositionRun.CathodicSign],
                            help="sign of deposition current in the file (default negative)")
        parser.add_argument("--start-s", type=float, help="start of the charge window, s")
        parser.add_argument("--end-s", type=float, help="end of the charge window, s")

    def record(self, *, actor, options) -> dict:
        run = self.get_record(DepositionRun, options["run"], "deposition run")
        filename, content = self.read_file(options["file"])
        result = deposition_run_attach_chronoamperogram(
            actor=actor, run=run, filename=filename, content=content,
            time_unit=options["time_unit"], current_unit=options["current_unit"],
            cathodic_sign=options["cathodic_sign"], start_s=options["start_s"],
            end_s=options["end_s"])
        return chronoamperogram_summary(result)

    def show(self, summary: dict) -> None:
        source = summary["file"] or "no file: the charge as the potentiostat reported it"
        self.stdout.write(f"{summary['run']}: {source}")
        for key, label in (("charge_C", "charge, C"), ("target_charge_C", "target charge, C"),
                           ("film_height_nm", "film height, nm"),
                           ("height_over_diameter", "h/D"), ("target", "target h/D"),
                           ("deviation", "deviation in h/D")):
            value = summary[key]
            self.stdout.write(f"  {label}: {'—' if value is None else f'{value:.4g}'}")
        for note in summary["notes"]:
            self.stdout.write(f"  {note}")
        for flag in summary["flags"]:
            self.stdout.write(f"  FLAG {flag['code']} on {flag['target']}")


