"""Lineage as W3C PROV-JSON, read back by the ``prov`` library (the W3C PROV-DM reference
implementation in Python), so the document is checked outside this project's code."""

from __future__ import annotations

import json

import pytest
from django.core.management import call_command
from prov.model import ProvDocument

from inventory.prov import lineage_as_prov
from inventory.services import record_release
from inventory.signatures import SignatureIntent
from tests.conftest import PASSWORDS


def _read(document: dict) -> ProvDocument:
    return ProvDocument.deserialize(content=json.dumps(document), format="json")


def _relations(prov_doc: ProvDocument, kind: str) -> list:
    return [r for r in prov_doc.get_records() if r.get_type().localpart == kind]


def test_ancestors_of_a_decorated_substrate_read_back_by_prov(chain, django_assert_max_num_queries):
    substrate = chain.decorated_substrate()
    with django_assert_max_num_queries(14):
        document = lineage_as_prov(substrate, direction="ancestors")
    prov_doc = _read(document)
    entities = {str(e.identifier) for e in prov_doc.get_records() if e.is_element()
                and e.get_type().localpart == "Entity"}
    assert f"sl:{substrate.code}" in entities
    # bath, template (spheres, slides), run, linker lot, linker layer, colloid, attachment
    assert len(entities) >= 9
    derived = _relations(prov_doc, "Derivation")
    assert any(str(d.formal_attributes[0][1]) == f"sl:{substrate.code}" for d in derived)
    used = _relations(prov_doc, "Usage")
    assert used and all(u.get_attribute("prov:time") for u in used)
    agents = [r for r in prov_doc.get_records() if r.get_type().localpart == "Agent"]
    assert {str(a.identifier) for a in agents} == {"sl:person-maker"}


def test_descendants_of_a_lot_and_signatures_are_activities(chain, reviewer):
    lot = chain.lot("plating_bath", release=False)
    record_release(actor=reviewer, record=lot,
                   signature=SignatureIntent(password=PASSWORDS["reviewer"], meaning="approved"))
    run, pieces = chain.run(pieces=2, bath=lot)
    document = lineage_as_prov(lot.code, direction="descendants")
    prov_doc = _read(document)
    codes = set(document["entity"])
    assert {f"sl:{lot.code}", f"sl:{run.code}", *(f"sl:{p.code}" for p in pieces)} <= codes
    signing = [a for key, a in document["activity"].items() if key.startswith("sl:signature-")]
    assert len(signing) == 1 and "signed approved" in signing[0]["prov:label"]
    associations = _relations(prov_doc, "Association")
    assert any(str(a.get_attribute("prov:role").pop()) == "approved" for a in associations
               if a.get_attribute("prov:role"))


def test_unknown_direction_is_refused(chain):
    lot = chain.lot()
    with pytest.raises(ValueError, match="direction"):
        lineage_as_prov(lot, direction="sideways")


def test_lineage_command_prints_prov_json(chain, capsys):
    substrate = chain.decorated_substrate()
    call_command("lineage", substrate.code, "--prov")
    up = json.loads(capsys.readouterr().out)
    assert f"sl:{substrate.code}" in up["entity"] and _read(up).get_records()
    lot = chain.lot("linker_thiol")
    call_command("lineage", lot.code, "--prov", "--direction", "descendants")
    down = json.loads(capsys.readouterr().out)
    assert list(down["entity"]) == [f"sl:{lot.code}"] and "activity" not in down
