"""Load the invented demo laboratory (idempotent: a second run changes nothing)."""

from django.conf import settings
from django.core.management.base import BaseCommand
from django.db import transaction
from django.utils.module_loading import import_string
from rich.console import Console
from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

from inventory.demo import (
    DEMO_LAB,
    DEMO_PASSWORD,
    apply_rule_correction,
    demo_is_loaded,
    load_inventory_demo,
)
from inventory.demo_deposition import load_deposition_demo
from qc.demo_colloid import load_colloid_demo
from qc.demo_raman import load_raman_demo


class Command(BaseCommand):
    help = "Load the invented demo scenario (lots, runs, substrates, colloids, QC) once."

    def handle(self, *args, **options):
        if demo_is_loaded():
            self.stdout.write("The demo scenario is already loaded; nothing changed.")
            return
        # It takes about a minute (Mie fits of the UV-vis files, baselines of the QC maps):
        # a bar shows which part is running.
        parts = (("lots, templates, runs and substrates", None),
                 ("shelf-life rule correction", apply_rule_correction),
                 ("chronoamperograms", load_deposition_demo),
                 ("colloids and UV-vis spectra", load_colloid_demo),
                 ("Raman references and QC maps", load_raman_demo))
        console = Console(file=self.stdout._out, force_terminal=None)
        columns = (TextColumn("{task.description:<40}"), BarColumn(), TextColumn(
            "{task.completed}/{task.total}"), TimeElapsedColumn())
        with transaction.atomic(), Progress(*columns, console=console) as progress:
            task = progress.add_task("loading the demo", total=len(parts))
            scenario = None
            for description, load in parts:
                progress.update(task, description=description)
                scenario = load_inventory_demo() if load is None else (load(scenario)
                                                                       or scenario)
                progress.advance(task)
            for extension in settings.SERSLEDGER_DEMO_EXTENSIONS:
                import_string(extension)(scenario)
        self.stdout.write(self.style.SUCCESS(f"Loaded the demo scenario: {DEMO_LAB}."))
        self.stdout.write("Demo sign-in (demo only): rin.okafor (maker), tomas.lind (reviewer), "
                          f"lab.admin (administrator); password '{DEMO_PASSWORD}'.")
        ready = scenario.substrates["ready_a"].code
        blocked = scenario.substrates["old_linker"].code
        self.stdout.write(f"Try: python manage.py readiness {ready}   (ready)")
        self.stdout.write(f"     python manage.py readiness {blocked}   (not ready)")
