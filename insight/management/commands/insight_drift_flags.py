"""Raise a flag for review on each sphere lot whose substrates drift (run rules on QC results)."""

from insight.services import drift_flags_raise, insight_report
from inventory.management.cli import RecordingCommand


class Command(RecordingCommand):
    help = ("Check QC results per sphere lot with the control-chart run rules and raise a "
            "flag for review on each drifting lot that has none open yet.")

    def record(self, *, actor, options) -> dict:
        report = insight_report()
        flags = drift_flags_raise(actor=actor, report=report)
        return {"drift": [finding.as_dict() for finding in report.drift],
                "flags": [{"code": flag.code, "target": flag.target_code,
                           "message": flag.message} for flag in flags]}

    def show(self, summary: dict) -> None:
        for finding in summary["drift"]:
            self.stdout.write(f"{finding['key']} {finding['metric']}: {finding['signals']} "
                              f"signals ({', '.join(finding['rules'])})")
        if not summary["flags"]:
            self.stdout.write("No new drift flags.")
        for flag in summary["flags"]:
            self.stdout.write(self.style.WARNING(f"{flag['code']} on {flag['target']}: "
                                                 f"{flag['message'][:160]}"))
