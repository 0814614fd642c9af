"""store_qc_results: store the plotted arrays of Raman measurements imported before them."""

from __future__ import annotations

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError
from tqdm import tqdm

from inventory.management.cli import refusal_sentences, user_for_command
from qc.models import QcMeasurement, ReferenceMeasurement
from qc.services import measurement_results_store


class Command(BaseCommand):
    help = ("Store, once, the arrays the plots of older Raman QC and reference measurements "
            "draw (re-running the analysis on their kept raw files), so pages never re-read "
            "raw files.")

    def add_arguments(self, parser):
        parser.add_argument("--user", help="username recorded as the actor")

    def handle(self, *args, **options):
        actor = user_for_command(options["user"])
        pending = [m for model in (ReferenceMeasurement, QcMeasurement)
                   for m in model.objects.filter(results_sha256="").only("pk")]
        stored = 0
        try:
            for measurement in tqdm(pending, desc="measurements", unit="record",
                                    disable=not pending, file=self.stderr):
                stored += measurement_results_store(actor=actor, measurement=measurement)
        except ValidationError as error:
            raise CommandError(refusal_sentences(error)) from None
        self.stdout.write(f"Stored results for {stored} of {len(pending)} measurement(s).")
