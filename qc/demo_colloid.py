"""Demo colloid QC: example limits and the invented UV-vis series of the three demo batches.

The spectra in fixtures/uvvis are INVENTED (modelled with the project's Mie model plus
seeded noise; see its README.txt).  The limit values are example values for the demo, not
recommendations: a lab sets its own.  With them the stable silver and the gold batch pass,
and the ageing silver batch breaches its absorbance-loss limit on day 21 and its peak-shift,
width and aggregation limits on day 35, which flags it.
"""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path

from django.conf import settings
from django.db import transaction

from inventory.demo import DemoScenario

from .services.colloid import colloid_limit_set_set, uvvis_record_import

__all__ = ["EXAMPLE_COLLOID_LIMITS", "UVVIS_DEMO_SERIES", "load_colloid_demo"]

UVVIS_DIR = Path(settings.SERSLEDGER_DEMO_FILES) / "uvvis"

# metal: (peak min, peak max, max FWHM, max shift, max loss, max aggregation index, why)
EXAMPLE_COLLOID_LIMITS = {
    "Ag": (390.0, 420.0, 35.0, 3.0, 0.15, 0.05,
           "Example values for ~40 nm citrate silver: band near 400 nm, narrow, little red tail."),
    "Au": (515.0, 535.0, 80.0, 3.0, 0.15, 0.10,
           "Example values for ~20 nm citrate gold: band near 520 nm."),
}

# scenario batch name: (file stem, dilution factor, days of the batch's life measured)
UVVIS_DEMO_SERIES = {
    "silver_good": ("ag_stable", 10.0, (0, 7, 21)),
    "gold": ("au_batch", 2.0, (0, 14)),
    "silver_ageing": ("ag_ageing", 10.0, (0, 7, 21, 35)),
}


@transaction.atomic
def load_colloid_demo(scenario: DemoScenario) -> None:
    """Add example colloid limits and attach the invented UV-vis series to the demo batches."""
    admin, maker = scenario.users["admin"], scenario.users["maker"]
    for metal, (low, high, fwhm, shift, loss, index, why) in EXAMPLE_COLLOID_LIMITS.items():
        colloid_limit_set_set(actor=admin, metal=metal, peak_min_nm=low, peak_max_nm=high,
                              fwhm_max_nm=fwhm, peak_shift_max_nm=shift,
                              absorbance_loss_max_fraction=loss, aggregation_index_max=index,
                              size_tolerance_percent=15.0, is_example=True, rationale=why)
    for name, (stem, dilution, days) in UVVIS_DEMO_SERIES.items():
        batch = scenario.batches[name]
        for day in days:
            path = UVVIS_DIR / f"{stem}_day{day:02d}.csv"
            uvvis_record_import(actor=maker, batch=batch, filename=path.name,
                                content=path.read_bytes(),
                                measured_on=batch.made_on + timedelta(days=day),
                                dilution_factor=dilution, path_length_cm=1.0,
                                notes="Invented demo spectrum (fixtures/uvvis).")
