"""expiring --days N: active records whose expiry falls within N days (expired ones first)."""

from django.core.management.base import BaseCommand, CommandError

from inventory.selectors import records_expiring_within

# A century ahead covers any shelf life; past year 9999 the calendar itself ends.
MAX_DAYS = 36_500


class Command(BaseCommand):
    help = "List quarantined or released records that expire within N days."

    def add_arguments(self, parser):
        parser.add_argument("--days", type=int, default=14)
        parser.add_argument("--limit", type=int, default=None,
                            help="show at most this many, soonest first")

    def handle(self, *args, days, limit=None, **options):
        if not 0 <= days <= MAX_DAYS:
            raise CommandError(f"--days must be between 0 and {MAX_DAYS} (100 years); got {days}.")
        if limit is not None and limit < 1:
            raise CommandError("--limit must be at least 1")
        items = records_expiring_within(days, limit=limit)
        if not items:
            self.stdout.write(f"Nothing expires within {days} days.")
            return
        for item in items:
            when = "EXPIRED" if item.days_left < 0 else f"in {item.days_left} d"
            self.stdout.write(f"{item.expires_on.isoformat()}  {when:>10}  {item.record.code:<12}"
                              f"  {item.kind_label} ({item.record.status})")
