"""Demo deposition numbers: an example tolerance and the invented chronoamperograms.

The files in fixtures/chronoamperograms are INVENTED (see its README.md): both imitate Au(I)
deposition (1 electron per atom, 100 % efficiency) through 600 nm spheres on a 1.00 cm²
electrode, cathodic current negative — the demo runs' own settings.  The fresh run gets the
file made for h/D = 0.50 (its target), so its pieces stay ready; the older run gets the one
made for h/D = 0.30, which the example tolerance flags on the run and on every piece.
The tolerance value is an example for the demo, not a recommendation: a lab sets its own.
"""

from __future__ import annotations

from pathlib import Path

from django.conf import settings
from django.db import transaction

from .demo import DemoScenario
from .services.deposition import (
    deposition_run_attach_chronoamperogram,
    deposition_tolerance_set,
)

__all__ = ["CHRONOAMPEROGRAM_DEMO_FILES", "EXAMPLE_GOLD_TOLERANCE", "load_deposition_demo"]

CHRONOAMPEROGRAM_DIR = Path(settings.SERSLEDGER_DEMO_FILES) / "chronoamperograms"

#: Example value: 0.05 in h/D is 30 nm of film height on the demo's 600 nm spheres.
EXAMPLE_GOLD_TOLERANCE = 0.05

#: scenario run name → invented file attached to it
CHRONOAMPEROGRAM_DEMO_FILES = {
    "fresh": "au_600nm_hd050.csv",
    "older": "au_600nm_hd030.txt",
}


@transaction.atomic
def load_deposition_demo(scenario: DemoScenario) -> None:
    """Set the example gold tolerance and attach the invented files to the demo runs."""
    deposition_tolerance_set(
        actor=scenario.users["admin"], metal="Au",
        max_abs_deviation_height_over_diameter=EXAMPLE_GOLD_TOLERANCE, is_example=True,
        rationale="Example value: 30 nm of film height on 600 nm spheres.")
    for name, filename in CHRONOAMPEROGRAM_DEMO_FILES.items():
        path = CHRONOAMPEROGRAM_DIR / filename
        deposition_run_attach_chronoamperogram(
            actor=scenario.users["maker"], run=scenario.runs[name], filename=path.name,
            content=path.read_bytes())
