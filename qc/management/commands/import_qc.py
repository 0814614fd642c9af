"""import_qc SUBSTRATE_ID FILE: import a reference-analyte spectrum or map and judge it."""

from __future__ import annotations

from datetime import date

from django.utils import timezone
from tqdm import tqdm

from inventory.management.cli import RecordingCommand
from inventory.models import ReagentLot, Substrate
from qc.api.results import qc_measurement_summary
from qc.models import ReferenceMeasurement
from qc.services import qc_measurement_import
from qc.services.background import PROGRESS_AT

PROGRESS_BAR_BYTES = 1024 * 1024  # a progress bar (on stderr) for files bigger than this


class Command(RecordingCommand):
    help = ("Import a reference-analyte Raman spectrum or map measured on a substrate: store "
            "its band figures, enhancement factor and uniformity, judge them against the "
            "lab's limits, and flag and hold the substrate if it fails.")

    def add_inputs(self, parser):
        parser.add_argument("substrate", help="substrate ID, e.g. SUB-00001")
        parser.add_argument("file", help="two-column spectrum, JCAMP-DX or map file")
        parser.add_argument("--analyte-lot", required=True, help="reagent lot ID, e.g. RGT-00011")
        parser.add_argument("--laser-nm", type=float, required=True)
        parser.add_argument("--power-mw", type=float, required=True,
                            help="laser power at the sample, mW")
        parser.add_argument("--integration-s", type=float, required=True,
                            help="integration time per accumulation, s")
        parser.add_argument("--accumulations", type=int, default=1)
        parser.add_argument("--objective", default="")
        parser.add_argument("--reference", help="reference measurement ID, e.g. REF-00001")
        parser.add_argument("--measured-on", type=date.fromisoformat,
                            help="ISO date (default today)")
        parser.add_argument("--surface-area-factor", type=float,
                            help="metal area / projected area, when known from elsewhere "
                                 "(needs --surface-area-source); default: derived from the "
                                 "substrate's deposition")
        parser.add_argument("--surface-area-source", default="",
                            help="where the entered surface-area factor comes from")
        parser.add_argument("--assume-surface-area-one", action="store_true",
                            help="assume a surface-area factor of 1 (recorded as assumed)")
        parser.add_argument("--shared-measurement", action="store_true",
                            help="this one file measured several substrates (a file already "
                                 "the QC of another substrate is otherwise refused)")

    def record(self, *, actor, options) -> dict:
        substrate = self.get_record(Substrate, options["substrate"], "substrate")
        lot = self.get_record(ReagentLot, options["analyte_lot"], "reagent lot")
        reference = self.get_record(ReferenceMeasurement, options["reference"],
                                    "reference measurement") if options["reference"] else None
        upload = self.read_upload(options["file"])
        bar = tqdm(total=100, unit="%", desc=upload.name, file=self.stderr,
                   disable=options["json"] or upload.size_bytes < PROGRESS_BAR_BYTES)

        def progress(state: str) -> None:
            bar.set_postfix_str(state)
            bar.update(PROGRESS_AT[state] - bar.n)

        with bar:
            measurement = qc_measurement_import(
                actor=actor, substrate=substrate, analyte_lot=lot, upload=upload,
                progress=progress,
                measured_on=options["measured_on"] or timezone.localdate(),
                laser_nm=options["laser_nm"], power_mW=options["power_mw"],
                integration_s=options["integration_s"], accumulations=options["accumulations"],
                objective=options["objective"], reference=reference,
                surface_area_factor=options["surface_area_factor"],
                surface_area_source=options["surface_area_source"],
                surface_area_assumed_one=options["assume_surface_area_one"],
                shared_measurement=options["shared_measurement"])
        return qc_measurement_summary(measurement)

    def show(self, summary: dict) -> None:
        verdict = "PASS" if summary["passed"] else "FAIL"
        self.stdout.write(f"{summary['measurement']} on {summary['substrate']}: {verdict}")
        for key in ("band_position_cm1", "normalised_height_counts_per_mW_s", "snr",
                    "rsd_percent", "fraction_within_20_percent", "enhancement_factor",
                    "log10_enhancement_factor"):
            value = summary[key]
            self.stdout.write(f"  {key}: {'—' if value is None else f'{value:.4g}'}")
        if summary["enhancement_factor"] is not None:
            self.stdout.write(f"  enhancement factor ({summary['intensity_measure']}): "
                              f"{summary['enhancement_factor_text']}")
            self.stdout.write(f"  surface-area factor {summary['surface_area_factor_text']}, "
                              f"{summary['surface_area_origin']}")
        for reason in summary["failure_reasons"]:
            self.stdout.write(f"  - {reason}")
        for flag in summary["flags"]:
            self.stdout.write(f"  FLAG {flag['code']} on {flag['target']}")

