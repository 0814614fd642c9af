"""clean_sheet_uploads [--days N]: delete sheet uploads nobody confirmed within N days.

An upload is kept between its dry run and its confirmation; a confirmed one loses its file
at once, an abandoned one (the person never confirmed) stays until this command removes its
file and row.  Run it daily, e.g. cron ``30 3 * * * cd /srv/sersledger && .venv/bin/python
manage.py clean_sheet_uploads --days 7`` or a systemd timer beside the digest's.
"""

from __future__ import annotations

from datetime import timedelta

from django.core.management.base import BaseCommand, CommandError

from exchange.uploads import sheet_uploads_clean


class Command(BaseCommand):
    help = "Delete sheet uploads (file and row) not confirmed within --days days (default 7)."

    def add_arguments(self, parser):
        parser.add_argument("--days", type=int, default=7,
                            help="age in days after which an unconfirmed upload is deleted")

    def handle(self, *args, **options):
        if options["days"] < 0:
            raise CommandError("--days is a number of days, 0 or more.")
        count = sheet_uploads_clean(older_than=timedelta(days=options["days"]))
        self.stdout.write(f"{count} abandoned sheet upload(s) deleted.")
