"""Who may log: makers see and submit every Make form; viewers get 403 and nothing to log."""

import pytest
from django.urls import reverse

from bench.make.steps import STEPS
from inventory.models import StorageLocation


def test_anonymous_visitor_is_sent_to_sign_in(client, db):
    response = client.get(reverse("make:index"))
    assert response.status_code == 302 and "/accounts/login/" in response["Location"]


def test_viewer_sees_nothing_to_log_on_the_index(client, viewer):
    client.force_login(viewer)
    page = client.get(reverse("make:index")).content.decode()
    assert "Nothing to log" in page
    assert not any(reverse(step.url_name) in page for step in STEPS)


@pytest.mark.parametrize("step", STEPS, ids=lambda step: step.slug)
def test_viewer_is_refused_every_form(client, viewer, step):
    client.force_login(viewer)
    assert client.get(reverse(step.url_name)).status_code == 403
    assert client.post(reverse(step.url_name), {}).status_code == 403


def test_viewer_post_saves_nothing(client, viewer):
    client.force_login(viewer)
    client.post(reverse("make:storage"), {"name": "Fridge 9", "kind": "fridge"})
    assert not StorageLocation.objects.exists()


@pytest.mark.parametrize("step", STEPS, ids=lambda step: step.slug)
def test_maker_gets_every_form_with_labelled_inputs(maker_client, step):
    response = maker_client.get(reverse(step.url_name))
    page = response.content.decode()
    assert response.status_code == 200
    form = response.context["form"]
    for field in form:
        if field.widget_type != "checkboxselectmultiple":
            assert f'for="{field.id_for_label}"' in page, field.name
    if step.cautions:
        assert "Caution" in page and "safety data sheet" in page


def test_maker_index_lists_every_step(maker_client):
    page = maker_client.get(reverse("make:index")).content.decode()
    assert all(reverse(step.url_name) in page for step in STEPS)
