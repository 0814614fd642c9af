"""The demo scenario: an invented laboratory and invented lots, for trying the product.

"Harbour Lane Surface Optics" does not exist; every supplier lot number, person and value
below is invented for the demo.  Dates are relative to the day the demo is loaded so that
the scenario stays meaningful: some things are fresh, some are expiring, some are too old.
Shelf-life rules created here are marked ``is_example``: a real lab sets its own.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, timedelta

from django.contrib.auth import get_user_model
from django.contrib.auth.models import Group
from django.db import transaction
from django.utils import timezone

from . import services
from .models import (
    NanoparticleBatch,
    ReagentKind,
    RecordKind,
    Status,
    StorageLocation,
    Substrate,
)
from .roles import ROLES, ensure_role_groups

DEMO_LAB = "Harbour Lane Surface Optics (invented demo lab)"
DEMO_PASSWORD = "demo-bench-2026"
MARKER_LOCATION = "Demo fridge F1"


@dataclass
class DemoScenario:
    """Handles to the records other demo parts (QC, colloids) build on."""

    today: date
    users: dict = field(default_factory=dict)
    lots: dict = field(default_factory=dict)
    substrates: dict = field(default_factory=dict)
    batches: dict = field(default_factory=dict)
    runs: dict = field(default_factory=dict)


def demo_is_loaded() -> bool:
    return StorageLocation.objects.filter(name=MARKER_LOCATION).exists()


def _users() -> dict:
    """The demo's people, each in the role group their work needs (admin is a superuser)."""
    ensure_role_groups()
    User = get_user_model()
    people = {
        "maker": ("rin.okafor", "Rin", "Okafor", False),
        "reviewer": ("tomas.lind", "Tomas", "Lind", False),
        "admin": ("lab.admin", "Lab", "Administrator", True),
    }
    users = {}
    for role, (username, first, last, is_super) in people.items():
        user, created = User.objects.get_or_create(
            username=username, defaults={"first_name": first, "last_name": last,
                                         "is_staff": is_super, "is_superuser": is_super})
        if created:
            user.set_password(DEMO_PASSWORD)
            user.save()
        if role in ROLES:
            user.groups.add(Group.objects.get(name=role))
        users[role] = user
    return users


EXAMPLE_RULES = [
    # (record kind, reagent kind, days, counted from, why) -- example values only.
    (RecordKind.SUBSTRATE, "", 60, "made", "structured films oxidise and collect carbon"),
    (RecordKind.TEMPLATE_ASSEMBLY, "", 14, "made", "monolayers pick up dust once dried"),
    (RecordKind.SPHERE_LOT, "", 365, "received", "sphere suspensions settle and grow bacteria"),
    (RecordKind.NANOPARTICLE_BATCH, "", 60, "made", "citrate colloids age in the fridge"),
    (RecordKind.LINKER_LAYER, "", 7, "made", "thiol monolayers oxidise in air"),
    (RecordKind.REAGENT_LOT, "", 730, "received", "general chemical shelf life"),
    (RecordKind.REAGENT_LOT, ReagentKind.LINKER_THIOL, 90, "opened", "thiols oxidise once opened"),
    (RecordKind.REAGENT_LOT, ReagentKind.PLATING_BATH, 180, "received", "bath supplier guidance"),
    (RecordKind.REAGENT_LOT, ReagentKind.REDUCTANT, 30, "prepared", "borohydride hydrolyses"),
]


@transaction.atomic
def load_inventory_demo(*, today: date | None = None) -> DemoScenario:
    """Build the invented lab's fabrication chain; call once (see demo_is_loaded)."""
    today = today or timezone.localdate()
    day = lambda n: today - timedelta(days=n)  # noqa: E731  n days ago
    s = DemoScenario(today=today, users=_users())
    maker = s.users["maker"]

    for kind, reagent_kind, days, counted_from, why in EXAMPLE_RULES:
        services.shelf_life_rule_set(actor=s.users["admin"], record_kind=kind,
                                     reagent_kind=reagent_kind, shelf_life_days=days,
                                     counted_from=counted_from, is_example=True,
                                     rationale=f"Example value: {why}.")

    fridge = services.storage_location_create(actor=maker, name=MARKER_LOCATION,
                                              kind=StorageLocation.Kind.FRIDGE, room="B.104")
    desiccator = services.storage_location_create(actor=maker, name="Demo desiccator D2",
                                                  kind=StorageLocation.Kind.DESICCATOR,
                                                  room="B.104")
    flammables = services.storage_location_create(actor=maker, name="Demo flammables cabinet",
                                                  kind=StorageLocation.Kind.FLAMMABLES,
                                                  room="B.102")

    def release(record):
        # The invented starting state is set by the system (unsigned); people sign in the demo.
        return services.record_transition(actor=None, record=record, to_status=Status.RELEASED,
                                          reason="Demo starting state (invented).")

    receive = services.reagent_lot_receive
    s.lots["bath"] = release(receive(
        actor=maker, name="Gold sulfite plating bath, Au(I)", kind=ReagentKind.PLATING_BATH,
        supplier="Invented Plating Supplies", supplier_lot="HL-AU-2207", received_on=day(40),
        ghs_hazard_codes="H290 H319 H412", storage=desiccator,
        notes="Cyanide-free Au(I) bath; 1 electron per gold atom."))
    s.lots["cyanide_bath"] = release(receive(
        actor=maker, name="Gold cyanide plating bath, Au(I)", kind=ReagentKind.PLATING_BATH,
        supplier="Invented Plating Supplies", supplier_lot="HL-AUCN-0931", received_on=day(20),
        ghs_hazard_codes="H300 H310 H330 EUH032 H410", storage=desiccator,
        notes="Contains cyanide: use only in the fume hood; never mix with acids."))
    s.lots["slides"] = release(receive(
        actor=maker, name="Gold-coated glass slides (200 nm Au on Cr)",
        kind=ReagentKind.BASE_SLIDE, supplier="Invented Optics", supplier_lot="GS-5512",
        received_on=day(50), quantity=25, quantity_unit="slides", storage=desiccator))
    s.lots["old_linker"] = release(receive(
        actor=maker, name="1,6-Hexanedithiol", kind=ReagentKind.LINKER_THIOL,
        supplier="Invented Fine Chemicals", supplier_lot="HDT-7781", received_on=day(45),
        opened_on=day(44), ghs_hazard_codes="H302 H315 H319 H335", storage=fridge))
    s.lots["linker"] = release(receive(
        actor=maker, name="1,6-Hexanedithiol", kind=ReagentKind.LINKER_THIOL,
        supplier="Invented Fine Chemicals", supplier_lot="HDT-8023", received_on=day(12),
        opened_on=day(10), ghs_hazard_codes="H302 H315 H319 H335", storage=fridge))
    s.lots["ethanol"] = release(receive(
        actor=maker, name="Ethanol, absolute", kind=ReagentKind.SOLVENT,
        supplier="Invented Fine Chemicals", supplier_lot="ETOH-1120", received_on=day(60),
        ghs_hazard_codes="H225 H319", storage=flammables))
    s.lots["thf"] = release(receive(
        actor=maker, name="Tetrahydrofuran (template removal)", kind=ReagentKind.SOLVENT,
        supplier="Invented Fine Chemicals", supplier_lot="THF-3304", received_on=day(60),
        ghs_hazard_codes="H225 H302 H319 H335 H351", storage=flammables))
    s.lots["silver_nitrate"] = release(receive(
        actor=maker, name="Silver nitrate", kind=ReagentKind.METAL_SALT,
        supplier="Invented Fine Chemicals", supplier_lot="AGN-4410", received_on=day(90),
        ghs_hazard_codes="H272 H290 H314 H410", storage=desiccator))
    s.lots["gold_salt"] = release(receive(
        actor=maker, name="Tetrachloroauric(III) acid trihydrate", kind=ReagentKind.METAL_SALT,
        supplier="Invented Fine Chemicals", supplier_lot="HAU-0815", received_on=day(90),
        ghs_hazard_codes="H290 H302 H314 H317 H373 H411", storage=desiccator))
    s.lots["citrate"] = release(receive(
        actor=maker, name="Trisodium citrate dihydrate", kind=ReagentKind.STABILISER,
        supplier="Invented Fine Chemicals", supplier_lot="CIT-2290", received_on=day(90),
        storage=desiccator))
    s.lots["analyte"] = release(receive(
        actor=maker, name="Benzenethiol (reference analyte)", kind=ReagentKind.REFERENCE_ANALYTE,
        supplier="Invented Fine Chemicals", supplier_lot="BT-5150", received_on=day(80),
        ghs_hazard_codes="H226 H301 H310 H330 H315 H319 H410", storage=fridge))

    spheres = release(services.sphere_lot_receive(
        actor=maker, material="polystyrene", nominal_diameter_nm=600, size_cv_percent=2.5,
        solids_percent_w_v=10.0, supplier="Invented Colloids", supplier_lot="PS600-118",
        received_on=day(70), volume_mL=15, storage=fridge))
    s.lots["spheres"] = spheres

    def template(made_days_ago):
        return release(services.template_assemble(
            actor=maker, sphere_lot=spheres, base_slide_lot=s.lots["slides"],
            method="interface_transfer", slide_area_cm2=2.5, made_on=day(made_days_ago),
            coverage_percent=92.0))

    def run(name, made_days_ago, pieces, target=0.5, bath="bath"):
        deposition, pieces_made = services.deposition_run_record(
            actor=maker, template=template(made_days_ago + 1), bath_lot=s.lots[bath],
            metal="Au", electrons_per_atom=1, mode="potentiostatic",
            setpoint_potential_V=-0.72, electrode_area_cm2=1.0, made_on=day(made_days_ago),
            pieces=pieces, piece_area_cm2=0.25, target_height_over_diameter=target,
            storage=desiccator)
        s.runs[name] = deposition
        return pieces_made

    fresh = run("fresh", 6, 4)
    older = run("older", 20, 3)
    flat_run, flat_pieces = services.deposition_run_record(
        actor=maker, base_slide_lot=s.lots["slides"], bath_lot=s.lots["bath"], metal="Au",
        electrons_per_atom=1, mode="galvanostatic", setpoint_current_mA=0.5,
        electrode_area_cm2=1.0, made_on=day(10), pieces=2, piece_area_cm2=0.5)
    s.runs["flat"] = flat_run

    # Colloids: a good silver batch, a gold batch, and a silver batch that is ageing.
    s.batches["silver_good"] = release(services.nanoparticle_batch_make(
        actor=maker, metal="Ag", synthesis_method=NanoparticleBatch.Method.CITRATE,
        volume_mL=100, made_on=day(21), target_diameter_nm=40, storage=fridge,
        source_lots=[s.lots["silver_nitrate"], s.lots["citrate"]]))
    s.batches["gold"] = release(services.nanoparticle_batch_make(
        actor=maker, metal="Au", synthesis_method=NanoparticleBatch.Method.CITRATE,
        volume_mL=100, made_on=day(14), target_diameter_nm=20, storage=fridge,
        source_lots=[s.lots["gold_salt"], s.lots["citrate"]]))
    s.batches["silver_ageing"] = release(services.nanoparticle_batch_make(
        actor=maker, metal="Ag", synthesis_method=NanoparticleBatch.Method.CITRATE,
        volume_mL=100, made_on=day(35), target_diameter_nm=40, storage=fridge,
        source_lots=[s.lots["silver_nitrate"], s.lots["citrate"]]))

    def decorate(pieces, linker_days_ago, batch, attach_days_ago, linker="linker"):
        services.linker_layer_apply(
            actor=maker, linker_lot=s.lots[linker], substrates=pieces, concentration_mM=1.0,
            immersion_h=18, made_on=day(linker_days_ago), solvent_lot=s.lots["ethanol"])
        for piece in pieces:
            services.particle_attach(actor=maker, substrate=Substrate.objects.get(pk=piece.pk),
                                     batch=batch, immersion_min=60, made_on=day(attach_days_ago))

    decorate(fresh[:3], 3, s.batches["silver_good"], 2)
    decorate(older[:2], 15, s.batches["silver_ageing"], 14, linker="old_linker")
    decorate(flat_pieces[:1], 4, s.batches["gold"], 3)

    names = ["ready_a", "ready_b", "awaiting_qc", "bare_film"]
    for name, piece in zip(names, fresh, strict=True):
        s.substrates[name] = piece
    s.substrates["old_linker"], s.substrates["old_linker_2"], s.substrates["older_bare"] = older
    s.substrates["flat_gold"], s.substrates["flat_bare"] = flat_pieces
    # Left with a linker layer and no particles, so the particle form has a piece to try.
    services.linker_layer_apply(
        actor=maker, linker_lot=s.lots["linker"], substrates=[s.substrates["flat_bare"]],
        concentration_mM=1.0, immersion_h=18, made_on=day(2), solvent_lot=s.lots["ethanol"])

    for name in ("ready_a", "ready_b", "old_linker", "old_linker_2", "flat_gold", "bare_film"):
        s.substrates[name] = release(Substrate.objects.get(pk=s.substrates[name].pk))
    s.substrates["rejected"] = services.record_transition(
        actor=None, record=Substrate.objects.get(pk=s.substrates["older_bare"].pk),
        to_status=Status.REJECTED, reason="Film visibly patchy after template removal.")

    services.dataset_register(
        actor=maker, title="Thiram screening in apple-peel extract, series 1 (invented demo)",
        substrates=[Substrate.objects.get(pk=s.substrates["ready_b"].pk)], acquired_on=day(1),
        instrument="Demo Raman microscope, 785 nm", operator="Rin Okafor",
        files=[("thiram_series1.csv", b"raman_shift_cm1,intensity_counts\n560,1200\n1380,5400\n")])
    return s


def apply_rule_correction(s: DemoScenario) -> None:
    """After the chain exists the lab shortens the opened-linker rule: a real-life correction.

    The linker lot then turns out to have been expired when it was used for the older
    substrates, which the readiness check reports as an upstream problem.
    """
    services.shelf_life_rule_set(
        actor=s.users["admin"], record_kind=RecordKind.REAGENT_LOT,
        reagent_kind=ReagentKind.LINKER_THIOL, shelf_life_days=25, counted_from="opened",
        is_example=True, rationale="Example value: corrected after a failed batch; thiols "
                                   "oxidise within weeks of opening.")


