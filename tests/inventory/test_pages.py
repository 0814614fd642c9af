"""The pages render on the demo laboratory for a signed-in user and refuse anonymous visitors."""

import pytest
from django.core.management import call_command


@pytest.fixture
def signed_in(client, db, today):
    call_command("load_demo")
    from django.contrib.auth import get_user_model

    client.force_login(get_user_model().objects.get(username="rin.okafor"))
    return client


def test_anonymous_visitors_are_sent_to_sign_in(client, db):
    response = client.get("/")
    assert response.status_code == 302 and "/accounts/login/" in response["Location"]


def test_home_readiness_and_record_pages(signed_in):
    assert signed_in.get("/").status_code == 200
    ready = signed_in.get("/check/", {"code": "SUB-00001"}).content.decode()
    assert 'class="verdict ready"' in ready and "SUB-00001" in ready
    blocked = signed_in.get("/check/", {"code": "SUB-00005"}).content.decode()
    assert "NOT READY" in blocked and "linker_layer_too_old" in blocked
    unknown = signed_in.get("/check/", {"code": "SUB-99999"}).content.decode()
    assert "No record has the ID" in unknown
    record = signed_in.get("/r/RGT-00002/").content.decode()
    assert "H300" in record and "Fatal if swallowed" in record  # cyanide bath hazards
    assert signed_in.get("/r/SUB-99999/").status_code == 404
