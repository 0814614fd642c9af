"""send_digest [--date YYYY-MM-DD] [--dry-run]: send today's digest to everyone who opted in.

Run once a day, e.g. cron ``15 6 * * * cd /srv/sersledger && .venv/bin/python manage.py
send_digest`` or a systemd timer (README, "Daily digest").  Sending twice on a day sends
nothing the second time.
"""

from __future__ import annotations

from datetime import date

from django.core.management.base import BaseCommand
from django.utils import timezone

from exchange.digest import send_digests


class Command(BaseCommand):
    help = "E-mail the daily digest to every person who opted in and has something due."

    def add_arguments(self, parser):
        parser.add_argument("--date", type=date.fromisoformat,
                            help="the day to report on (ISO 8601; default today)")
        parser.add_argument("--dry-run", action="store_true",
                            help="list who would get how many items; send nothing")

    def handle(self, *args, **options):
        today = options["date"] or timezone.localdate()
        digests = send_digests(today=today, dry_run=options["dry_run"])
        verb = "would send" if options["dry_run"] else "sent"
        for digest in digests:
            self.stdout.write(f"{verb} {len(digest.reminders)} item(s) to {digest.address}")
        self.stdout.write(f"{len(digests)} digest(s) {verb.split()[-1]} for {today.isoformat()}.")
