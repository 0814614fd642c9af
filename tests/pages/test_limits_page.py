"""The limits page: everyone reads it, an administrator changes one setting with a reason."""

from __future__ import annotations

import pytest
from django.urls import reverse

from inventory.models import ShelfLifeRule
from qc.models import ColloidLimitSet, QcLimitSet

pytestmark = pytest.mark.django_db


@pytest.fixture
def analyte(administrator):
    from qc.services import reference_analyte_define

    return reference_analyte_define(
        actor=administrator, name="Benzenethiol", band_positions_cm1=[1073],
        band_positions_source="from memory", qc_band_cm1=1073.0, surface_density_per_nm2=6.8,
        surface_density_source="from memory")


def _qc_post(**changes) -> dict:
    values = {"min_enhancement_factor": "1e5", "max_rsd_percent": "15", "min_map_points": "25",
              "band_position_tolerance_cm1": "4", "min_snr": "10", "intensity_measure": "height",
              "valid_days": "5", "rationale": "Our linker layers age fast."}
    values.update(changes)
    return values


def test_everyone_reads_the_limits_and_sees_defaults_to_review(client, viewer, analyte):
    client.force_login(viewer)
    body = client.get(reverse("limits")).content.decode()
    assert "Film with linker layer" in body and "defaults to review" in body
    assert "You can read these settings" in body
    assert reverse("limit_edit_qc", args=[analyte.pk, "linker"]) not in body  # no Change link
    assert 'href="/limits/"' in client.get(reverse("home")).content.decode()  # in the menu


@pytest.mark.parametrize("role", ["viewer", "maker", "reviewer"])
def test_only_an_administrator_may_post(client, django_user_model, analyte, role):
    from tests.conftest import user_with_role

    client.force_login(user_with_role(django_user_model, role, f"{role}-2"))
    url = reverse("limit_edit_qc", args=[analyte.pk, "linker"])
    response = client.post(url, _qc_post())
    assert response.status_code == 403
    assert "administrator" in response.content.decode()
    assert QcLimitSet.objects.get(analyte=analyte, product_kind="linker").version == 1


def test_an_administrator_saves_a_new_version_with_a_reason(client, administrator, analyte):
    client.force_login(administrator)
    url = reverse("limit_edit_qc", args=[analyte.pk, "linker"])
    response = client.post(url, _qc_post())
    assert response.status_code == 302
    limits = QcLimitSet.objects.get(analyte=analyte, product_kind="linker")
    assert (limits.version, limits.max_rsd_percent, limits.valid_days) == (2, 15.0, 5)
    assert not limits.is_example and limits.updated_by == administrator
    edit_page = client.get(url).content.decode()
    assert "Our linker layers age fast." in edit_page and "v2" in edit_page


@pytest.mark.parametrize(("field", "value"), [
    ("max_rsd_percent", "-5"),  # RSD cannot be negative (QC_LIMIT_RANGES)
    ("valid_days", "0"),
    ("band_position_tolerance_cm1", "abc"),
    ("min_enhancement_factor", "inf"),
    ("rationale", ""),
])
def test_bad_input_is_named_beside_its_field_and_nothing_is_saved(client, administrator,
                                                                   analyte, field, value):
    client.force_login(administrator)
    response = client.post(reverse("limit_edit_qc", args=[analyte.pk, "linker"]),
                           _qc_post(**{field: value}))
    assert response.status_code == 200
    assert response.context["form"].errors.get(field), response.context["form"].errors
    assert f'id="id_{field}-error"' in response.content.decode()
    limits = QcLimitSet.objects.get(analyte=analyte, product_kind="linker")
    assert (limits.version, limits.is_example) == (1, True)


def test_colloid_limits_refuse_a_reversed_peak_window(client, administrator):
    client.force_login(administrator)
    url = reverse("limit_edit_colloid", args=["Au"])
    values = {"peak_min_nm": "560", "peak_max_nm": "515", "fwhm_max_nm": "100",
              "peak_shift_max_nm": "5", "absorbance_loss_max_fraction": "0.2",
              "aggregation_index_max": "0.1", "size_tolerance_percent": "15",
              "rationale": "typo"}
    response = client.post(url, values)
    assert response.status_code == 200 and response.context["form"].errors
    assert not ColloidLimitSet.objects.exists()
    values.update(peak_min_nm="515", peak_max_nm="560", rationale="our 20 nm gold")
    assert client.post(url, values).status_code == 302
    assert ColloidLimitSet.objects.get(metal="Au").peak_max_nm == 560.0


def test_shelf_life_rule_through_the_page(client, administrator):
    client.force_login(administrator)
    url = reverse("limit_edit_shelf_life", args=["linkerlayer"])
    assert client.post(url, {"shelf_life_days": "5", "counted_from": "made",
                             "rationale": "thiol layers oxidise"}).status_code == 302
    rule = ShelfLifeRule.objects.get(record_kind="linkerlayer")
    assert (rule.shelf_life_days, rule.version) == (5, 1)
    response = client.post(url, {"shelf_life_days": "0", "counted_from": "made",
                                 "rationale": "typo"})
    assert response.context["form"].errors.get("shelf_life_days")
    rule.refresh_from_db()
    assert (rule.shelf_life_days, rule.version) == (5, 1)
