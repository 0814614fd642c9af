"""Process-insight part of the invented demo: a quarter of a lab's substrates, with planted truths.

Everything here is INVENTED.  Thirty deposition runs of four pieces each go through linker
and particles and are QC-tested with generated benzenethiol maps.  The planted truths the
insight page must find again (``PLANTED``):

* an optimum film height at h/D = 0.55 (log10 EF falls off as −8·(h/D − 0.55)²);
* colloids that age: −0.012 in log10 EF per day of colloid age at use;
* one bad sphere lot (``BAD_SPHERE_LOT``): −0.35 in log10 EF;
* noise: σ = 0.05 in log10 EF; linker immersion time varies (12–24 h) with no effect.

Each map is drawn from the same model as ``fixtures/raman/generate.py`` (Lorentzian bands,
curved background, Poisson noise), its band heights scaled to the planted EF; each run's
chronoamperogram is a constant current carrying the charge that gives its planted h/D
(``inventory.physics.electrodeposition.charge_for_target_height_C``).  Called by ``load_demo``
through ``settings.SERSLEDGER_DEMO_EXTENSIONS`` after the QC demo.
"""

from __future__ import annotations

from datetime import timedelta

import numpy as np
from django.db import transaction

from inventory import services
from inventory.demo import DemoScenario
from inventory.models import DepositionRun, NanoparticleBatch, ReagentKind, Status, Substrate
from inventory.physics.electrodeposition import charge_for_target_height_C
from inventory.physics.template_geometry import segment_void_surface_area_factor
from qc.models import ReferenceMeasurement
from qc.services.raman import qc_measurement_import

__all__ = ["BAD_SPHERE_LOT", "PLANTED", "load_insight_demo"]

SEED = 20261203
RUNS, PIECES = 30, 4
SPHERE_DIAMETER_NM = 600.0
BAD_SPHERE_LOT = "PS600-207"  # the supplier lot number of the invented bad lot
SPHERE_LOTS = ("PS600-204", "PS600-205", "PS600-206", BAD_SPHERE_LOT, "PS600-208")
PLANTED = {"optimum_height_over_diameter": 0.55, "curvature_per_unit2": 8.0,
           "colloid_ageing_log10_per_day": -0.012, "bad_lot_log10": -0.35,
           "noise_log10": 0.05, "log10_ef_at_optimum": 6.45}
# log10 EF the QC pipeline gives a map whose band height is 3000 counts, with the demo's
# reference and a metal-area factor of 1 (measured once with this generator; the recovery
# test checks the outcome).
LOG10_EF_AT_3000_COUNTS = 6.48
SHIFT_CM1 = np.linspace(900.0, 1200.0, 160)
GRID = 5  # 25 points: the lab's default minimum for a map to judge uniformity (min_map_points)
MAP_SETTINGS = dict(laser_nm=785.0, power_mW=2.0, integration_s=1.0, accumulations=1,
                    objective="50× (demo)")


def _map_csv(rng, band_height: float) -> bytes:
    """A GRID × GRID benzenethiol map (1073 cm⁻¹ band) with Poisson noise, as CSV bytes."""
    n = GRID * GRID
    lorentz = lambda p, w: 1.0 / (1.0 + ((SHIFT_CM1 - p) / (w / 2.0)) ** 2)  # noqa: E731
    shape = 0.55 * lorentz(999.0, 9.0) + 0.30 * lorentz(1022.0, 9.0) + lorentz(1073.0, 12.0)
    heights = band_height * rng.lognormal(0.0, 0.07, n)
    background = rng.uniform(0.9, 1.1, (n, 1)) * (1500 + 0.8 * (SHIFT_CM1 - 900.0))
    counts = rng.poisson(background + heights[:, None] * shape[None, :])
    ys, xs = np.mgrid[0:GRID, 0:GRID] * 2.0
    lines = ["x_um,y_um," + ",".join(f"{s:.2f}" for s in SHIFT_CM1)]
    lines += [f"{x:.1f},{y:.1f}," + ",".join(str(int(v)) for v in row)
              for x, y, row in zip(xs.ravel(), ys.ravel(), counts, strict=True)]
    return ("\n".join(lines) + "\n").encode()


def _chronoamperogram_csv(height_over_diameter: float) -> bytes:
    """Constant −2 mA for as long as the charge for this h/D takes (1.00 cm², Au(I))."""
    charge_C = charge_for_target_height_C(
        target_height_over_diameter=height_over_diameter, sphere_diameter_nm=SPHERE_DIAMETER_NM,
        electrode_area_cm2=1.0, metal="Au", electrons_per_atom=1)
    duration_s = charge_C / 2e-3
    times = np.linspace(0.0, duration_s, 201)
    return ("time/s,current/mA\n" + "".join(f"{t:.3f},-2.000\n" for t in times)).encode()


def planted_log10_ef(height_over_diameter, colloid_age_d, bad_lot, noise=0.0):
    p = PLANTED
    return (p["log10_ef_at_optimum"]
            - p["curvature_per_unit2"]
            * (height_over_diameter - p["optimum_height_over_diameter"]) ** 2
            + p["colloid_ageing_log10_per_day"] * colloid_age_d
            + p["bad_lot_log10"] * bad_lot + noise)


@transaction.atomic
def load_insight_demo(scenario: DemoScenario) -> None:
    """Add the insight runs to a loaded demo (after the QC demo, which defines the limits)."""
    rng = np.random.default_rng(SEED)
    maker = scenario.users["maker"]
    day = lambda n: scenario.today - timedelta(days=n)  # noqa: E731

    def release(record):
        return services.record_transition(actor=None, record=record, to_status=Status.RELEASED,
                                          reason="Demo starting state (invented).")

    receive = services.reagent_lot_receive
    slides = release(receive(actor=maker, name="Gold-coated glass slides (insight series)",
                             kind=ReagentKind.BASE_SLIDE, supplier="Invented Optics",
                             supplier_lot="GS-6120", received_on=day(80)))
    bath = release(receive(actor=maker, name="Gold sulfite plating bath, Au(I) (insight series)",
                           kind=ReagentKind.PLATING_BATH, supplier="Invented Plating Supplies",
                           supplier_lot="HL-AU-2301", received_on=day(80),
                           ghs_hazard_codes="H290 H319 H412"))
    linkers = {opened: release(receive(
        actor=maker, name="1,6-Hexanedithiol", kind=ReagentKind.LINKER_THIOL,
        supplier="Invented Fine Chemicals", supplier_lot=f"HDT-9{opened:03d}",
        received_on=day(opened), opened_on=day(opened),
        ghs_hazard_codes="H302 H315 H319 H335")) for opened in (66, 44, 22)}
    spheres = [release(services.sphere_lot_receive(
        actor=maker, material="polystyrene", nominal_diameter_nm=SPHERE_DIAMETER_NM,
        size_cv_percent=2.5, solids_percent_w_v=10.0, supplier="Invented Colloids",
        supplier_lot=lot, received_on=day(80))) for lot in SPHERE_LOTS]
    batches = {made: release(services.nanoparticle_batch_make(
        actor=maker, metal="Ag", synthesis_method=NanoparticleBatch.Method.CITRATE,
        volume_mL=250, made_on=day(made), target_diameter_nm=40,
        source_lots=[scenario.lots["silver_nitrate"], scenario.lots["citrate"]]))
        for made in (64, 43, 22)}
    reference = ReferenceMeasurement.objects.filter(voided_at__isnull=True).order_by("id").first()
    ratios = rng.uniform(0.25, 0.85, RUNS)
    for index in range(RUNS):
        made = max(60 - 2 * index, 4)  # about one run every other day
        sphere_lot = spheres[index % len(spheres)]
        template = release(services.template_assemble(
            actor=maker, sphere_lot=sphere_lot, base_slide_lot=slides,
            method="interface_transfer", slide_area_cm2=2.5, made_on=day(made + 1),
            coverage_percent=float(np.round(rng.uniform(85, 97), 1))))
        run, pieces = services.deposition_run_record(
            actor=maker, template=template, bath_lot=bath, metal="Au", electrons_per_atom=1,
            mode="galvanostatic", setpoint_current_mA=2.0, electrode_area_cm2=1.0,
            made_on=day(made), pieces=PIECES, piece_area_cm2=0.25,
            target_height_over_diameter=float(round(ratios[index], 3)),
            chronoamperogram=(f"insight_run_{index + 1:02d}.csv",
                              _chronoamperogram_csv(float(ratios[index]))))
        linker_day, attach_day = made - 1, made - 1 - int(rng.integers(0, 2))
        linker_lot = linkers[min(o for o in linkers if o >= linker_day)]  # opened < 25 d ago
        services.linker_layer_apply(
            actor=maker, linker_lot=linker_lot, substrates=pieces, concentration_mM=1.0,
            immersion_h=float(np.round(rng.uniform(12, 24), 1)), made_on=day(linker_day),
            solvent_lot=scenario.lots["ethanol"])
        batch_made = min(m for m in batches if m >= attach_day)  # the newest colloid
        age_d = batch_made - attach_day
        bad = sphere_lot.supplier_lot == BAD_SPHERE_LOT
        # QC divides by the film's metal area (derived from its h/D); scale the band so the
        # enhancement factor QC reports is the planted one.
        run = DepositionRun.objects.get(pk=run.pk)
        area_factor = segment_void_surface_area_factor(
            sphere_diameter_nm=run.sphere_diameter_nm, film_height_nm=run.film_height_nm).value
        for piece in pieces:
            piece = Substrate.objects.get(pk=piece.pk)
            services.particle_attach(actor=maker, substrate=piece, batch=batches[batch_made],
                                     immersion_min=60, made_on=day(attach_day))
            log10_ef = planted_log10_ef(ratios[index], age_d, bad,
                                        rng.normal(0.0, PLANTED["noise_log10"]))
            height = area_factor * 3000.0 * 10 ** (log10_ef - LOG10_EF_AT_3000_COUNTS)
            qc_measurement_import(
                actor=maker, substrate=Substrate.objects.get(pk=piece.pk),
                analyte_lot=scenario.lots["analyte"], filename=f"insight_{piece.code}.csv",
                content=_map_csv(rng, height), measured_on=day(attach_day - 1),
                reference=reference, surface_density_rel_u=0.2,
                notes="Invented insight-demo map.", **MAP_SETTINGS)
