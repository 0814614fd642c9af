"""Release, reject and flag resolution through the pages: signature step and role refusals."""

from __future__ import annotations

from django.urls import reverse

from inventory.models import Flag, Signature, Status, Substrate
from tests.conftest import PASSWORDS


def _sign(client, code, **data):
    return client.post(reverse("review_sign", args=[code]), data)


def test_wrong_password_shows_the_error_and_changes_nothing(lab, login):
    client = login(lab, "reviewer")
    response = _sign(client, lab.waiting.code, decision="release", meaning="approved",
                     password="not-my-password")
    assert response.status_code == 400
    page = response.content.decode()
    assert 'id="password-error"' in page and "does not match" in page
    assert Substrate.objects.get(pk=lab.waiting.pk).status == Status.QUARANTINE
    assert not Signature.objects.filter(record_code=lab.waiting.code).exists()


def test_signed_release_releases_and_records_the_signature(lab, login):
    client = login(lab, "reviewer")
    response = _sign(client, lab.waiting.code, decision="release", meaning="approved",
                     password=PASSWORDS["reviewer"])
    assert response.status_code == 302
    assert response["Location"] == reverse("record", args=[lab.waiting.code])
    assert Substrate.objects.get(pk=lab.waiting.pk).status == Status.RELEASED
    signature = Signature.objects.get(record_code=lab.waiting.code)
    assert signature.meaning == "approved" and signature.signer == lab.users["reviewer"]
    page = client.get(response["Location"]).content.decode()
    assert "<strong>approved</strong>" in page  # shown under Signatures


def test_release_of_a_failed_qc_is_refused_with_the_service_reason(lab, login):
    client = login(lab, "reviewer")
    response = _sign(client, lab.failed.code, decision="release", meaning="approved",
                     password=PASSWORDS["reviewer"])
    assert response.status_code == 400
    assert lab.qc_failed.code in response.content.decode()  # the failed QC is named
    assert Substrate.objects.get(pk=lab.failed.pk).status == Status.QUARANTINE


def test_reject_needs_a_reason_then_rejects(lab, login):
    client = login(lab, "reviewer")
    no_reason = _sign(client, lab.failed.code, decision="reject", meaning="rejected",
                      password=PASSWORDS["reviewer"])
    assert no_reason.status_code == 400 and "Say why" in no_reason.content.decode()
    assert Substrate.objects.get(pk=lab.failed.pk).status == Status.QUARANTINE
    wrong_meaning = _sign(client, lab.failed.code, decision="reject", meaning="approved",
                          reason="Uneven film", password=PASSWORDS["reviewer"])
    assert wrong_meaning.status_code == 400
    assert Substrate.objects.get(pk=lab.failed.pk).status == Status.QUARANTINE
    done = _sign(client, lab.failed.code, decision="reject", meaning="rejected",
                 reason="Uneven film: RSD far above the limit", password=PASSWORDS["reviewer"])
    assert done.status_code == 302
    assert Substrate.objects.get(pk=lab.failed.pk).status == Status.REJECTED
    assert Signature.objects.get(record_code=lab.failed.code).meaning == "rejected"


def test_wrong_roles_get_403_and_nothing_changes(lab, login):
    flag = Flag.objects.get(target_code=lab.failed.code, state=Flag.State.OPEN)
    for role in ("viewer", "maker"):
        client = login(lab, role)
        assert client.get(reverse("review_sign", args=[lab.waiting.code])).status_code == 403
        response = _sign(client, lab.waiting.code, decision="release", meaning="approved",
                         password=PASSWORDS[role])
        assert response.status_code == 403
        resolve = client.post(reverse("flag_resolve", args=[flag.code]),
                              {"resolution": "Re-measured"})
        assert resolve.status_code == 403
        client.logout()
    assert Substrate.objects.get(pk=lab.waiting.pk).status == Status.QUARANTINE
    assert Flag.objects.get(pk=flag.pk).state == Flag.State.OPEN


def test_reviewer_resolves_a_flag_from_the_queue(lab, login):
    flag = Flag.objects.get(target_code=lab.failed.code, state=Flag.State.OPEN)
    client = login(lab, "reviewer")
    empty = client.post(reverse("flag_resolve", args=[flag.code]), {"resolution": ""})
    assert empty.status_code == 302 and Flag.objects.get(pk=flag.pk).state == Flag.State.OPEN
    response = client.post(reverse("flag_resolve", args=[flag.code]),
                           {"resolution": "Map repeated on a fresh area; see QCM record",
                            "next": reverse("review")}, follow=True)
    assert response.status_code == 200 and f"{flag.code} resolved." in response.content.decode()
    resolved = Flag.objects.get(pk=flag.pk)
    assert resolved.state == Flag.State.RESOLVED and resolved.resolved_by == lab.users["reviewer"]


def test_resolve_is_post_only(lab, login):
    flag = Flag.objects.filter(state=Flag.State.OPEN).first()
    client = login(lab, "reviewer")
    assert client.get(reverse("flag_resolve", args=[flag.code])).status_code == 405


def test_resolve_redirects_only_to_a_page_of_this_site(lab, login):
    """``next`` is followed only when it is a path on this host (Django's
    url_has_allowed_host_and_scheme); anything else falls back to the review queue."""
    client = login(lab, "reviewer")
    flags = list(Flag.objects.filter(state=Flag.State.OPEN))
    assert len(flags) >= 1
    targets = {"https://elsewhere.example/phish": reverse("review"),
               "//elsewhere.example/phish": reverse("review"),
               "/\\elsewhere.example": reverse("review"),
               "javascript:alert(1)": reverse("review"),
               reverse("record", args=[lab.failed.code]): reverse("record",
                                                                 args=[lab.failed.code])}
    for next_url, expected in targets.items():
        response = client.post(reverse("flag_resolve", args=[flags[0].code]),
                               {"resolution": "", "next": next_url})
        assert response.status_code == 302 and response["Location"] == expected, next_url
