"""import_sheet KIND FILE --user NAME [--dry-run] [--json]: bring a lab's sheet in.

Exit status: 0 every row imported (or, with --dry-run, would be), 1 some row has an error
and nothing was saved, 2 the file was refused as a whole (not a spreadsheet, too large,
empty, a required column missing).
"""

from __future__ import annotations

import json
from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.management.base import BaseCommand, CommandError

from exchange.importer import import_sheet
from exchange.kinds import KINDS
from inventory.errors import refusal_items, refusal_sentences
from inventory.management.cli import user_for_command

EXIT_ROW_ERRORS = 1
EXIT_REFUSED = 2


class Command(BaseCommand):
    help = ("Import one sheet (xlsx or CSV) of one record kind through the same checks as the "
            "pages: all rows or none. Exit 0 ok, 1 row errors (nothing saved), 2 file refused.")

    def add_arguments(self, parser):
        parser.add_argument("kind", choices=sorted(KINDS), help="record kind of every row")
        parser.add_argument("file", help=".xlsx or .csv file")
        parser.add_argument("--dry-run", action="store_true",
                            help="check every row and report; save nothing")
        parser.add_argument("--json", action="store_true", help="print one JSON object")
        parser.add_argument("--user", required=True,
                            help="username the import is recorded under (a maker)")

    def handle(self, *args, **options):
        path = Path(options["file"])
        if not path.is_file():
            raise CommandError(f"No such file: {path}", returncode=EXIT_REFUSED)
        actor = user_for_command(options["user"])
        try:
            report = import_sheet(kind=options["kind"], content=path.read_bytes(),
                                  file_name=path.name, actor=actor,
                                  commit=not options["dry_run"])
        except ValidationError as error:
            items = refusal_items(error)
            if options["json"]:
                self.stdout.write(json.dumps({"ok": False, "refused": True, "errors": items},
                                             indent=2))
            raise CommandError(refusal_sentences(error), returncode=EXIT_REFUSED) from None
        if options["json"]:
            self.stdout.write(json.dumps(report.as_dict(), indent=2, default=str))
        else:
            self._print(report, dry_run=options["dry_run"])
        if not report.ok:
            raise CommandError(f"{len(report.errors)} row error(s); nothing was saved.",
                               returncode=EXIT_ROW_ERRORS)

    def _print(self, report, *, dry_run: bool) -> None:
        verb = "would be" if dry_run else "were"
        self.stdout.write(f"{report.file_name} ({report.rows} rows, SHA-256 {report.sha256})")
        self.stdout.write(f"  {len(report.created)} {verb} created, {len(report.changed)} "
                          f"changed, {len(report.unchanged)} unchanged")
        for outcome in report.changed:
            self.stdout.write(f"  row {outcome.row} {outcome.code}: {'; '.join(outcome.changes)}")
        for error in report.errors:
            where = f"row {error.row}" + (f", {error.column}" if error.column else "")
            self.stdout.write(f"  ERROR {where}: {error.reason} [{error.code}]")
        if report.unmapped_headers:
            self.stdout.write(f"  ignored columns: {', '.join(report.unmapped_headers)}")
