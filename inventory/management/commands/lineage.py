"""lineage ID: what a record was made from and what was made from it, as indented text.

``--prov`` prints one direction (``--direction``, ancestors by default) as a W3C PROV-JSON
document instead (inventory.prov), for audit tools.
"""

import json
import sys

from django.core.management.base import BaseCommand

from inventory.codes import RecordNotFound
from inventory.lineage import Lineage, record_get_ancestors, record_get_descendants
from inventory.prov import DIRECTIONS, lineage_as_prov


def _describe(record) -> str:
    return f"{record.code} ({record._meta.verbose_name})"


def render_tree(lineage: Lineage) -> list[str]:
    """Indented lines from the root outwards; a shared record is expanded once, then referred to."""
    lines: list[str] = []
    expanded: set[str] = set()

    def visit(code: str, level: int) -> None:
        for edge in sorted(lineage.children_of(code), key=lambda e: (e.role, e.parent_code,
                                                                   e.child_code)):
            nxt = edge.parent_code if lineage.direction == "ancestors" else edge.child_code
            record = lineage.records.get(nxt)
            label = _describe(record) if record else nxt
            seen = " (shown above)" if nxt in expanded else ""
            lines.append(f"{'  ' * level}- {edge.role}: {label}, {edge.used_on.isoformat()}{seen}")
            if nxt not in expanded:
                expanded.add(nxt)
                visit(nxt, level + 1)

    visit(lineage.root.code, 1)
    return lines


class Command(BaseCommand):
    help = "Print the lineage of a record in both directions (exit 2 for an unknown ID)."

    def add_arguments(self, parser):
        parser.add_argument("code")
        parser.add_argument("--prov", action="store_true",
                            help="print W3C PROV-JSON (one direction) instead of text")
        parser.add_argument("--direction", choices=DIRECTIONS, default="ancestors",
                            help="with --prov: ancestors (made from) or descendants (used in)")

    def handle(self, *args, code, prov=False, direction="ancestors", **options):
        try:
            up = record_get_ancestors(code)
        except RecordNotFound as error:
            self.stderr.write(str(error))
            sys.exit(2)
        if prov:
            document = lineage_as_prov(up.root, direction=direction)
            self.stdout.write(json.dumps(document, indent=2, ensure_ascii=False))
            return
        down = record_get_descendants(up.root)
        self.stdout.write(_describe(up.root))
        self.stdout.write("Made from:")
        self.stdout.write("\n".join(render_tree(up)) or "  (no recorded inputs)")
        self.stdout.write("Used in:")
        self.stdout.write("\n".join(render_tree(down)) or "  (not used yet)")
