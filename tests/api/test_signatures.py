"""Release, reject and void through the API call the audit services.

History and signatures read back."""

from __future__ import annotations

import hashlib

import pytest

from inventory.models import Signature, Status, Substrate
from tests.conftest import PASSWORDS

pytestmark = pytest.mark.django_db


def _sign(client, path, **body):
    return client.post(path, body, format="json")


def test_release_is_signed_and_readable(chain, clients):
    lot = chain.lot("solvent", release=False)
    path = f"/api/v1/reagent-lots/{lot.code}/release/"
    wrong = _sign(clients["reviewer"], path, password="not-it", meaning="approved")
    assert wrong.status_code == 400
    assert wrong.json()["errors"] == [{"field": "password", "code": "signature_invalid",
                                       "message": "The password does not match; the signature "
                                                  "was not made."}]
    done = _sign(clients["reviewer"], path, password=PASSWORDS["reviewer"], meaning="approved")
    assert done.status_code == 200, done.json()
    assert done.json()["status"] == Status.RELEASED
    signatures = clients["viewer"].get(f"/api/v1/records/{lot.code}/signatures/").json()
    [signed] = signatures
    stored = Signature.objects.get(record_code=lot.code)
    assert signed["meaning"] == "approved" and signed["signer_username"] == "reviewer"
    # The digest is SHA-256 (FIPS 180-4, hashlib) of the content as signed.
    assert signed["content_sha256"] == hashlib.sha256(stored.content_json.encode()).hexdigest()
    assert signed["content_matches"] is True
    history = clients["viewer"].get(f"/api/v1/records/{lot.code}/history/").json()
    assert history[0]["changes"][0]["field"] == "status"
    assert (history[0]["changes"][0]["old"], history[0]["changes"][0]["new"]) == (
        "quarantine", "released")
    assert history[-1]["kind"] == "created"


def test_maker_cannot_release_their_own_record(chain, clients, django_user_model):
    from inventory.roles import ensure_role_groups

    ensure_role_groups()
    lot = chain.s.reagent_lot_receive(actor=chain.reviewer, name="Reviewer's own",
                                      kind="solvent", received_on=chain.day(2))
    response = _sign(clients["reviewer"], f"/api/v1/reagent-lots/{lot.code}/release/",
                     password=PASSWORDS["reviewer"], meaning="approved")
    assert response.status_code == 400
    assert response.json()["errors"][0]["code"] == "self_release"


def test_substrate_release_needs_qc(qc_lab, clients):
    _run, pieces = qc_lab.chain.run(pieces=2)
    refused = _sign(clients["reviewer"], f"/api/v1/substrates/{pieces[0].code}/release/",
                    password=PASSWORDS["reviewer"], meaning="approved")
    assert refused.status_code == 400
    assert refused.json()["errors"][0]["code"] == "qc_missing"
    qc_lab.measure(Substrate.objects.get(pk=pieces[1].pk), "good_substrate_map.csv")
    released = _sign(clients["reviewer"], f"/api/v1/substrates/{pieces[1].code}/release/",
                     password=PASSWORDS["reviewer"], meaning="reviewed")
    assert released.status_code == 200, released.json()
    ready = clients["viewer"].get(f"/api/v1/substrates/{pieces[1].code}/readiness/").json()
    assert ready["verdict"] == "READY", ready


def test_reject_then_void(chain, clients):
    run, pieces = chain.run(pieces=1)
    rejected = _sign(clients["reviewer"], f"/api/v1/substrates/{pieces[0].code}/reject/",
                     password=PASSWORDS["reviewer"], meaning="rejected", reason="Cracked.")
    assert rejected.status_code == 200 and rejected.json()["status"] == Status.REJECTED
    voided = clients["reviewer"].post(f"/api/v1/deposition-runs/{run.code}/void/",
                                      {"reason": "Logged against the wrong bath."},
                                      format="json")
    assert voided.status_code == 200
    assert voided.json()["voided_by"] == "reviewer"
    assert voided.json()["void_reason"] == "Logged against the wrong bath."
    again = clients["reviewer"].post(f"/api/v1/deposition-runs/{run.code}/void/",
                                     {"reason": "again"}, format="json")
    assert again.status_code == 400 and again.json()["errors"][0]["code"] == "already_voided"
    blank = clients["reviewer"].post(f"/api/v1/flags/{'FLG-00009'}/void/", {"reason": ""},
                                     format="json")
    assert blank.status_code == 404


def test_amend_against_the_version_seen(chain, clients):
    lot = chain.lot("solvent", release=False)
    path = f"/api/v1/reagent-lots/{lot.code}/amend/"
    shelf = clients["maker"].post("/api/v1/storage-locations/",
                                  {"name": "Solvent cabinet", "kind": "flammables"},
                                  format="json").json()
    first = clients["maker"].post(path, {"changes": {"supplier_lot": "B-7",
                                                     "storage": shelf["code"]},
                                         "expected_version": lot.version}, format="json")
    assert first.status_code == 200, first.json()
    assert first.json()["storage"] == shelf["code"] and first.json()["supplier_lot"] == "B-7"
    # A second editor who still saw the old version is refused, not silently overwritten.
    stale = clients["maker"].post(path, {"changes": {"supplier_lot": "C-1"},
                                         "expected_version": lot.version}, format="json")
    assert stale.status_code == 400
    assert stale.json()["errors"][0]["code"] == "version_conflict"
    not_allowed = clients["maker"].post(path, {"changes": {"status": "released"},
                                               "expected_version": first.json()["version"]},
                                        format="json")
    assert not_allowed.json()["errors"][0] == {
        "field": "status", "code": "not_amendable",
        "message": not_allowed.json()["errors"][0]["message"]}
    bad_date = clients["maker"].post(path, {"changes": {"opened_on": 12},
                                            "expected_version": first.json()["version"]},
                                     format="json")
    assert bad_date.status_code == 400 and bad_date.json()["errors"][0]["field"] == "opened_on"
    history = clients["viewer"].get(f"/api/v1/records/{lot.code}/history/").json()
    assert {c["field"] for c in history[0]["changes"]} == {"supplier_lot", "storage"}


def test_amend_refusals_name_the_field(chain, clients):
    lot = chain.lot("solvent", release=False)
    path = f"/api/v1/reagent-lots/{lot.code}/amend/"
    for changes, field in (({"storage": "LOC-99999"}, "storage"),
                           ({"notes": ["a", "list"]}, "notes"),
                           ({"created_by": "maker"}, "created_by")):
        response = clients["maker"].post(path, {"changes": changes,
                                                "expected_version": lot.version},
                                         format="json")
        assert response.status_code == 400, (changes, response.content)
        assert response.json()["errors"][0]["field"] == field
