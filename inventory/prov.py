"""Lineage as a W3C PROV-JSON document (PROV-DM, W3C Recommendation 2013; PROV-JSON, W3C
Member Submission 2013).

Mapping: every record is an entity named by its code; the making of a record from its
inputs is an activity that *used* each input (with the lineage edge's role and date) and
*generated* the record, which *was derived from* each input; the person who recorded it is
an agent (prov:Person) the activity *was associated with* and the record *was attributed
to*.  Each electronic signature (release or reject) is an activity that used the record and
was associated with the signer, in the role of the signature's meaning.  Dates of the lab
(made on, used on) are written as midnight UTC in ISO 8601.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, time
from itertools import count
from typing import Any

from django.contrib.auth import get_user_model

from .codes import record_get
from .lineage import Lineage, record_get_ancestors, record_get_descendants
from .models import CodedRecord, Signature

NAMESPACE = "sl"
NAMESPACE_URI = "urn:x-sersledger:"
DIRECTIONS = ("ancestors", "descendants")
# The lab's own date of a record, first one present wins.
_DATE_FIELDS = ("made_on", "measured_on", "acquired_on", "prepared_on", "received_on")


def _q(local: str) -> str:
    return f"{NAMESPACE}:{local}"


def _qualified(name: str) -> dict[str, str]:
    return {"$": name, "type": "prov:QUALIFIED_NAME"}


def _iso(value: date | datetime) -> str:
    if not isinstance(value, datetime):
        value = datetime.combine(value, time(0), tzinfo=UTC)
    return value.isoformat()


def _lab_date(record: CodedRecord) -> date | datetime:
    for name in _DATE_FIELDS:
        value = getattr(record, name, None)
        if value:
            return value
    return record.created_at


def _entity(record: CodedRecord) -> dict[str, Any]:
    attributes: dict[str, Any] = {
        "prov:type": _qualified(_q(type(record).__name__)),
        "prov:label": f"{record.code} ({record._meta.verbose_name})",
        _q("recorded_at"): _iso(record.created_at),
        _q("version"): record.version,
    }
    for name in ("status", "expires_on", "voided_at", "void_reason"):
        value = getattr(record, name, None)
        if value:
            attributes[_q(name)] = _iso(value) if isinstance(value, date) else str(value)
    return attributes


class _Document:
    """Collects PROV-JSON sections; relation ids are blank nodes numbered in order."""

    def __init__(self) -> None:
        self.doc: dict[str, Any] = {"prefix": {NAMESPACE: NAMESPACE_URI}}
        self._ids = count(1)

    def add(self, section: str, key: str, attributes: dict[str, Any]) -> None:
        self.doc.setdefault(section, {})[key] = attributes

    def relate(self, section: str, attributes: dict[str, Any]) -> None:
        self.add(section, f"_:{section}{next(self._ids)}", attributes)


def _people(records: list[CodedRecord], signatures: list[Signature]) -> dict[int, str]:
    """Agent ids by user pk, with one query for every person involved."""
    ids = {r.created_by_id for r in records if r.created_by_id} | {s.signer_id for s in signatures}
    return {user.pk: user for user in get_user_model().objects.filter(pk__in=ids)}


def _add_agents(document: _Document, people: dict) -> dict[int, str]:
    names = {}
    for pk, user in people.items():
        name = _q(f"person-{user.get_username()}")
        full = user.get_full_name().strip() if hasattr(user, "get_full_name") else ""
        document.add("agent", name, {"prov:type": _qualified("prov:Person"),
                                     "prov:label": full or user.get_username()})
        names[pk] = name
    return names


def _add_making(document: _Document, lineage: Lineage, records: dict[str, CodedRecord],
                agents: dict[int, str]) -> None:
    """One activity per record made from inputs inside this lineage."""
    inputs_of: dict[str, list] = {}
    for edge in lineage.edges:
        if edge.parent_code in records and edge.child_code in records:
            inputs_of.setdefault(edge.child_code, []).append(edge)
    for child_code, edges in sorted(inputs_of.items()):
        child = records[child_code]
        activity = _q(f"making-{child_code}")
        used_on = sorted(edge.used_on for edge in edges)
        document.add("activity", activity, {
            "prov:label": f"making {child_code}",
            "prov:startTime": _iso(used_on[0]), "prov:endTime": _iso(used_on[-1])})
        for edge in sorted(edges, key=lambda e: (e.role, e.parent_code)):
            parent = _q(edge.parent_code)
            document.relate("used", {"prov:activity": activity, "prov:entity": parent,
                                     "prov:time": _iso(edge.used_on), "prov:role": edge.role})
            document.relate("wasDerivedFrom", {"prov:generatedEntity": _q(child_code),
                                               "prov:usedEntity": parent,
                                               "prov:activity": activity})
        document.relate("wasGeneratedBy", {"prov:entity": _q(child_code),
                                           "prov:activity": activity,
                                           "prov:time": _iso(_lab_date(child))})
        if child.created_by_id in agents:
            document.relate("wasAssociatedWith", {"prov:activity": activity,
                                                  "prov:agent": agents[child.created_by_id]})


def _add_signatures(document: _Document, signatures: list[Signature],
                    agents: dict[int, str]) -> None:
    for signature in signatures:
        activity = _q(f"signature-{signature.pk}")
        when = _iso(signature.signed_at)
        document.add("activity", activity, {
            "prov:type": _qualified(_q(signature.action.capitalize())),
            "prov:label": f"{signature.action} of {signature.record_code}, "
                          f"signed {signature.meaning}",
            "prov:startTime": when, "prov:endTime": when,
            _q("content_sha256"): signature.content_sha256})
        document.relate("used", {"prov:activity": activity,
                                 "prov:entity": _q(signature.record_code), "prov:time": when})
        document.relate("wasAssociatedWith", {"prov:activity": activity,
                                              "prov:agent": agents[signature.signer_id],
                                              "prov:role": signature.meaning})


def lineage_as_prov(record_or_code, *, direction: str = "ancestors") -> dict[str, Any]:
    """The lineage of a record (or code) in one direction as a PROV-JSON document (a dict).

    Raises ``RecordNotFound`` for an unknown code and ``ValueError`` for an unknown
    direction.  Queries: the lineage walk, one per record kind, one for the people and one
    for the signatures, however long the chain.
    """
    if direction not in DIRECTIONS:
        raise ValueError(f"direction must be one of {', '.join(DIRECTIONS)}, not {direction!r}")
    root = record_get(record_or_code) if isinstance(record_or_code, str) else record_or_code
    walk = record_get_ancestors if direction == "ancestors" else record_get_descendants
    lineage = walk(root)
    records = {root.code: root, **lineage.records}
    signatures = list(Signature.objects.filter(record_code__in=list(records)))
    document = _Document()
    agents = _add_agents(document, _people(list(records.values()), signatures))
    for code, record in sorted(records.items()):
        document.add("entity", _q(code), _entity(record))
        if record.created_by_id in agents:
            document.relate("wasAttributedTo", {"prov:entity": _q(code),
                                                "prov:agent": agents[record.created_by_id]})
    _add_making(document, lineage, records, agents)
    _add_signatures(document, signatures, agents)
    return document.doc
