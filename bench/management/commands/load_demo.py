"""Load the invented demo laboratory (idempotent: a second run changes nothing)."""

from django.conf import settings
from django.core.management.base import BaseCommand
from django.db import transaction
from django.utils.module_loading import import_string

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
        with transaction.atomic():
            scenario = load_inventory_demo()
            apply_rule_correction(scenario)
            load_deposition_demo(scenario)
            load_colloid_demo(scenario)
            load_raman_demo(scenario)
            for extension in settings.SERSLEDGER_DEMO_EXTENSIONS:
                import_string(extension)(scenario)
        self.stdout.write(self.style.SUCCESS(f"Loaded the demo scenario: {DEMO_LAB}."))
        self.stdout.write("Demo sign-in (demo only): rin.okafor (maker), tomas.lind (reviewer), "
                          f"lab.admin (administrator); password '{DEMO_PASSWORD}'.")
        ready = scenario.substrates["ready_a"].code
        blocked = scenario.substrates["old_linker"].code
        self.stdout.write(f"Try: python manage.py readiness {ready}   (ready)")
        self.stdout.write(f"     python manage.py readiness {blocked}   (not ready)")
