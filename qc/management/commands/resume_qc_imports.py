"""resume_qc_imports: hand every QC import whose worker died (or never came) to a worker."""

from django.core.management.base import BaseCommand

from qc.services import qc_imports_resume


class Command(BaseCommand):
    help = ("Queue again every QC import still waiting, or whose worker has not reported for "
            "SERSLEDGER_ANALYSIS_LEASE_S seconds (a worker that was killed); a running worker "
            "then completes it.")

    def handle(self, *args, **options):
        self.stdout.write(f"Queued {qc_imports_resume()} QC import(s) again.")
