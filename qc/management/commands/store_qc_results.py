"""store_qc_results: store the plotted arrays of Raman measurements imported before them."""

from __future__ import annotations

from tqdm import tqdm

from inventory.management.cli import RecordingCommand
from qc.models import QcMeasurement, ReferenceMeasurement
from qc.services import measurement_results_store


class Command(RecordingCommand):
    help = ("Store, once, the arrays the plots of older Raman QC and reference measurements "
            "draw (re-running the analysis on their kept raw files), so pages never re-read "
            "raw files.")

    def record(self, *, actor, options) -> dict:
        pending = [m for model in (ReferenceMeasurement, QcMeasurement)
                   for m in model.objects.filter(results_sha256="").only("pk")]
        stored = 0
        for measurement in tqdm(pending, desc="measurements", unit="record",
                                disable=not pending or options["json"], file=self.stderr):
            stored += measurement_results_store(actor=actor, measurement=measurement)
        return {"stored": stored, "pending": len(pending)}

    def show(self, summary: dict) -> None:
        self.stdout.write(f"Stored results for {summary['stored']} of {summary['pending']} "
                          "measurement(s).")
