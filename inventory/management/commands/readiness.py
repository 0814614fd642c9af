"""readiness ID: READY / NOT READY with reasons; exit 0 ready, 1 not ready, 2 unknown ID."""

import json
import sys

from django.core.management.base import BaseCommand

from inventory.codes import RecordNotFound
from inventory.readiness import substrate_check_readiness


class Command(BaseCommand):
    help = "Can this substrate be used today? Exit status 0 ready, 1 not ready, 2 unknown ID."

    def add_arguments(self, parser):
        parser.add_argument("code", help="substrate ID, e.g. SUB-00001")
        parser.add_argument("--json", action="store_true", help="print one JSON object")

    def handle(self, *args, code, **options):
        try:
            result = substrate_check_readiness(code)
        except (RecordNotFound, ValueError) as error:
            self.stderr.write(str(error))
            sys.exit(2)
        if options["json"]:
            self.stdout.write(json.dumps({
                "substrate": result.substrate_code, "checked_on": result.checked_on.isoformat(),
                "ready": result.ready,
                "reasons": [{"code": r.code, "message": r.message, "record": r.record_code}
                            for r in result.reasons],
            }, indent=2))
        else:
            self.stdout.write(f"{result.substrate_code}: {result.verdict}")
            for reason in result.reasons:
                self.stdout.write(f"  - [{reason.code}] {reason.message}")
        sys.exit(0 if result.ready else 1)
