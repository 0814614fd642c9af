"""lineage ID: what a record was made from and what was made from it, as indented text."""

import sys

from django.core.management.base import BaseCommand

from inventory.codes import RecordNotFound
from inventory.lineage import Lineage, record_get_ancestors, record_get_descendants


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

    def handle(self, *args, code, **options):
        try:
            up = record_get_ancestors(code)
        except RecordNotFound as error:
            self.stderr.write(str(error))
            sys.exit(2)
        down = record_get_descendants(up.root)
        self.stdout.write(_describe(up.root))
        self.stdout.write("Made from:")
        self.stdout.write("\n".join(render_tree(up)) or "  (no recorded inputs)")
        self.stdout.write("Used in:")
        self.stdout.write("\n".join(render_tree(down)) or "  (not used yet)")
