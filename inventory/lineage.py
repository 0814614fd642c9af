"""Lineage over every record: all ancestors or all descendants in one recursive query.

The graph is the LineageEdge table.  A recursive common table expression (SQL:1999, run
identically by SQLite and PostgreSQL) collects every edge reachable from a record; UNION
de-duplicates edges, so each edge is visited once and the walk stops even on a malformed
cycle.  Depths are then assigned in Python by breadth-first search over those edges.  The
query count is constant: one for the edges plus one per record kind for the records.
"""

from __future__ import annotations

from collections import defaultdict, deque
from dataclasses import dataclass, field
from datetime import date

from django.db import connection

from .codes import code_sort_key, record_get, records_by_code
from .models import CodedRecord, LineageEdge

_WALK_SQL = """
WITH RECURSIVE walk(parent_code, child_code, role, used_on) AS (
    SELECT parent_code, child_code, role, used_on FROM {table} WHERE {start} = %s
    UNION
    SELECT e.parent_code, e.child_code, e.role, e.used_on
    FROM {table} e JOIN walk w ON e.{near} = w.{far}
)
SELECT parent_code, child_code, role, used_on FROM walk
"""
# Walking up starts at edges whose child is the root and joins on e.child = w.parent;
# walking down is the mirror image.
_DIRECTIONS = {
    "ancestors": {"start": "child_code", "near": "child_code", "far": "parent_code"},
    "descendants": {"start": "parent_code", "near": "parent_code", "far": "child_code"},
}


@dataclass(frozen=True)
class Edge:
    parent_code: str
    child_code: str
    role: str
    used_on: date


@dataclass
class Lineage:
    """One direction of the graph from ``root``: edges, records and each node's depth."""

    root: CodedRecord
    direction: str  # "ancestors" or "descendants"
    edges: list[Edge]
    records: dict[str, CodedRecord]
    depth: dict[str, int] = field(default_factory=dict)

    def codes(self) -> list[str]:
        """Reached codes, nearest first, then by code."""
        return sorted(self.depth, key=lambda code: (self.depth[code], code_sort_key(code)))

    def of_kind(self, model) -> list[CodedRecord]:
        return [r for code, r in self.records.items() if isinstance(r, model)]

    def children_of(self, code: str) -> list[Edge]:
        """Next edges away from the root (towards parents for ancestors)."""
        if self.direction == "ancestors":
            return [e for e in self.edges if e.child_code == code]
        return [e for e in self.edges if e.parent_code == code]


def _walk_edges(direction: str, code: str) -> list[Edge]:
    query = _WALK_SQL.format(table=connection.ops.quote_name(LineageEdge._meta.db_table),
                             **_DIRECTIONS[direction])
    with connection.cursor() as cursor:
        cursor.execute(query, [code])
        rows = cursor.fetchall()
    return [Edge(p, c, role, used if isinstance(used, date) else date.fromisoformat(str(used)))
            for p, c, role, used in rows]


def _depths(root_code: str, edges: list[Edge], direction: str) -> dict[str, int]:
    next_codes: dict[str, list[str]] = defaultdict(list)
    for edge in edges:
        if direction == "ancestors":
            next_codes[edge.child_code].append(edge.parent_code)
        else:
            next_codes[edge.parent_code].append(edge.child_code)
    depth = {}
    queue = deque([(root_code, 0)])
    seen = {root_code}
    while queue:
        code, level = queue.popleft()
        for nxt in next_codes[code]:
            if nxt not in seen:
                seen.add(nxt)
                depth[nxt] = level + 1
                queue.append((nxt, level + 1))
    return depth


def _lineage(root: CodedRecord, direction: str, fields=None) -> Lineage:
    edges = _walk_edges(direction, root.code)
    depth = _depths(root.code, edges, direction)
    return Lineage(root=root, direction=direction, edges=edges,
                   records=records_by_code(depth, fields=fields), depth=depth)


def record_get_ancestors(record_or_code, *, fields=None) -> Lineage:
    """Everything ``record`` was made from, however deep (bounded query count).

    ``fields`` (optional) loads only those columns of each ancestor (``records_by_code``).
    """
    root = record_get(record_or_code) if isinstance(record_or_code, str) else record_or_code
    return _lineage(root, "ancestors", fields)


def record_get_descendants(record_or_code) -> Lineage:
    """Everything made from ``record``, however deep (for a recall)."""
    root = record_get(record_or_code) if isinstance(record_or_code, str) else record_or_code
    return _lineage(root, "descendants")
