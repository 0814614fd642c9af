"""Every role against every service action (DESIGN §7): the check lives in the services, so
pages, API and commands give the same answer.  Roles are cumulative; a user with no role
group may do nothing; ``actor=None`` (the system) may do everything."""

from __future__ import annotations

from pathlib import Path

import pytest
from django.core.exceptions import PermissionDenied

from inventory import services
from inventory.models import Status
from inventory.roles import ROLES
from inventory.signatures import SignatureIntent
from qc import services as qc_services
from tests.conftest import PASSWORDS

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures"
ORDER = {role: rank for rank, role in enumerate(ROLES)}


def _lot(chain, kind="solvent", release=True):
    """A lot the system recorded (so no role fixture made it and self-release cannot apply)."""
    lot = services.reagent_lot_receive(actor=None, name=f"{kind} lot", kind=kind,
                                       received_on=chain.day(20))
    if release:
        lot = services.record_transition(actor=None, record=lot, to_status=Status.RELEASED)
    return lot


def _sign(role: str, meaning: str) -> SignatureIntent:
    return SignatureIntent(password=PASSWORDS.get(role, "no-password"), meaning=meaning)


def _run(chain, pieces=1):
    template = services.template_assemble(
        actor=None, sphere_lot=services.record_transition(
            actor=None, to_status=Status.RELEASED, record=services.sphere_lot_receive(
                actor=None, material="polystyrene", nominal_diameter_nm=500,
                solids_percent_w_v=10, received_on=chain.day(20))),
        base_slide_lot=_lot(chain, "base_slide"), method="interface_transfer",
        slide_area_cm2=2.0, made_on=chain.day(10))
    services.record_transition(actor=None, record=template, to_status=Status.RELEASED)
    return services.deposition_run_record(
        actor=None, template=template, bath_lot=_lot(chain, "plating_bath"), metal="Au",
        electrons_per_atom=1, mode="potentiostatic", electrode_area_cm2=1.0,
        made_on=chain.day(9), pieces=pieces)


def _analyte(chain):
    return qc_services.reference_analyte_define(
        actor=None, name="Benzenethiol", band_positions_cm1=[999, 1073],
        band_positions_source="from memory", qc_band_cm1=1073, surface_density_per_nm2=6.8,
        surface_density_source="from memory")


# action name -> (least role, call(chain, actor, role))
ACTIONS = {
    "storage_location_create": ("maker", lambda c, a, r: services.storage_location_create(
        actor=a, name=f"Box of {r}", kind="box")),
    "reagent_lot_receive": ("maker", lambda c, a, r: services.reagent_lot_receive(
        actor=a, name="x", kind="solvent", received_on=c.day(1))),
    "reagent_lot_open": ("maker", lambda c, a, r: services.reagent_lot_open(
        actor=a, lot=_lot(c), opened_on=c.day(1))),
    "sphere_lot_receive": ("maker", lambda c, a, r: services.sphere_lot_receive(
        actor=a, material="silica", nominal_diameter_nm=400, solids_percent_w_v=5,
        received_on=c.day(1))),
    "deposition_run_record": ("maker", lambda c, a, r: services.deposition_run_record(
        actor=a, base_slide_lot=_lot(c, "base_slide"), bath_lot=_lot(c, "plating_bath"),
        metal="Au", electrons_per_atom=1, mode="potentiostatic", electrode_area_cm2=1.0,
        made_on=c.day(2), pieces=1)),
    "nanoparticle_batch_make": ("maker", lambda c, a, r: services.nanoparticle_batch_make(
        actor=a, metal="Ag", synthesis_method="citrate", volume_mL=10, made_on=c.day(1))),
    "linker_layer_apply": ("maker", lambda c, a, r: services.linker_layer_apply(
        actor=a, linker_lot=_lot(c, "linker_thiol"), substrates=_run(c)[1],
        concentration_mM=1, immersion_h=2, made_on=c.day(1))),
    "dataset_register": ("maker", lambda c, a, r: services.dataset_register(
        actor=a, title="t", substrates=_run(c)[1], acquired_on=c.day(1),
        files=[("a.txt", b"1,2\n")])),
    "flag_raise": ("maker", lambda c, a, r: services.flag_raise(
        actor=a, target=_lot(c), category="other", message="Label smudged.")),
    "record_amend": ("maker", lambda c, a, r: services.record_amend(
        actor=a, record=(lot := _lot(c)), changes={"supplier": "S"}, reason="missing",
        expected_version=lot.version)),
    "record_transition_consume": ("maker", lambda c, a, r: services.record_transition(
        actor=a, record=_lot(c), to_status=Status.CONSUMED)),
    "uvvis_record_import": ("maker", lambda c, a, r: qc_services.uvvis_record_import(
        actor=a, batch=services.nanoparticle_batch_make(
            actor=None, metal="Ag", synthesis_method="citrate", volume_mL=10,
            made_on=c.day(3)),
        filename="ag_stable_day00.csv",
        content=(FIXTURES / "uvvis" / "ag_stable_day00.csv").read_bytes(),
        measured_on=c.day(2))),
    "flag_resolve": ("reviewer", lambda c, a, r: services.flag_resolve(
        actor=a, flag=services.flag_raise(actor=None, target=_lot(c), category="other",
                                          message="m"), resolution="Checked.")),
    "record_transition_hold": ("reviewer", lambda c, a, r: services.record_transition(
        actor=a, record=_lot(c), to_status=Status.QUARANTINE, reason="Checking.")),
    "record_release": ("reviewer", lambda c, a, r: services.record_release(
        actor=a, record=_lot(c, release=False), signature=_sign(r, "approved"))),
    "record_reject": ("reviewer", lambda c, a, r: services.record_reject(
        actor=a, record=_lot(c, release=False), signature=_sign(r, "rejected"),
        reason="Cloudy.")),
    "record_void": ("reviewer", lambda c, a, r: services.record_void(
        actor=a, record=_lot(c), reason="Entered twice.")),
    "shelf_life_rule_set": ("administrator", lambda c, a, r: services.shelf_life_rule_set(
        actor=a, record_kind="substrate", shelf_life_days=30, counted_from="made")),
    "deposition_tolerance_set": ("administrator",
                                 lambda c, a, r: services.deposition_tolerance_set(
                                     actor=a, max_abs_deviation_height_over_diameter=0.1)),
    "reference_analyte_define": ("administrator", lambda c, a, r: _analyte(c) if a is None
                                 else qc_services.reference_analyte_define(
                                     actor=a, name="Rhodamine", band_positions_cm1=[1650],
                                     band_positions_source="from memory", qc_band_cm1=1650,
                                     surface_density_per_nm2=1.0,
                                     surface_density_source="from memory")),
    "qc_limit_set_define": ("administrator", lambda c, a, r: qc_services.qc_limit_set_define(
        actor=a, product_kind="film", analyte=_analyte(c), band_position_tolerance_cm1=5,
        valid_days=14)),
    "colloid_limit_set_set": ("administrator", lambda c, a, r: qc_services.colloid_limit_set_set(
        actor=a, metal="Ag", peak_min_nm=380, peak_max_nm=440, fwhm_max_nm=120,
        peak_shift_max_nm=10, absorbance_loss_max_fraction=0.3, aggregation_index_max=0.5)),
}


@pytest.mark.parametrize("role", [*ROLES, "nobody"])
@pytest.mark.parametrize("action", sorted(ACTIONS))
def test_role_matrix(action, role, chain, request, django_user_model):
    least, call = ACTIONS[action]
    if role == "nobody":
        actor = django_user_model.objects.create_user("nobody", password="pw-nobody-123456")
    else:
        actor = request.getfixturevalue(role)
    allowed = role != "nobody" and ORDER[role] >= ORDER[least]
    if allowed:
        assert call(chain, actor, role) is not None
    else:
        with pytest.raises(PermissionDenied, match=f"needs the {least} role"):
            call(chain, actor, role)


@pytest.mark.parametrize("action", sorted(ACTIONS))
def test_the_system_may_do_everything(action, chain):
    _, call = ACTIONS[action]
    if action in ("record_release", "record_reject"):
        with pytest.raises(PermissionDenied, match="signed-in person"):
            call(chain, None, "system")  # a signature needs a person
    else:
        assert call(chain, None, "system") is not None
