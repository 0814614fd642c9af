"""Raise a flag for review on each sphere lot whose substrates drift (run rules on QC results)."""

from django.core.management.base import BaseCommand

from insight.services import drift_flags_raise, insight_report


class Command(BaseCommand):
    help = ("Check QC results per sphere lot with the control-chart run rules and raise a "
            "flag for review on each drifting lot that has none open yet.")

    def handle(self, *args, **options):
        report = insight_report()
        flags = drift_flags_raise(actor=None, report=report)
        for finding in report.drift:
            self.stdout.write(f"{finding.key} {finding.metric}: {finding.signals} signals "
                              f"({', '.join(finding.rules)})")
        if not flags:
            self.stdout.write("No new drift flags.")
        for flag in flags:
            self.stdout.write(self.style.WARNING(f"{flag.code} on {flag.target_code}: "
                                                 f"{flag.message[:160]}"))
