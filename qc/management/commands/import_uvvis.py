"""import_uvvis BATCH_ID FILE: store and evaluate one colloid UV-vis spectrum."""

import json
from datetime import date
from pathlib import Path

from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from inventory.codes import RecordNotFound, record_get
from inventory.management.cli import refusals_in_words
from inventory.models import NanoparticleBatch
from qc.analysis.errors import AnalysisInputError
from qc.api.results import uvvis_import_summary
from qc.services import uvvis_record_import


def _date(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise CommandError(
            f"--measured-on must be an ISO 8601 date (YYYY-MM-DD), got '{text}'."
        ) from None


class Command(BaseCommand):
    help = ("Import a UV-vis spectrum (two-column text or JCAMP-DX, wavelength in nm) of a "
            "colloid batch; prints size, concentration, stability and any limit breaches.")

    def add_arguments(self, parser):
        parser.add_argument("batch", help="nanoparticle batch ID, e.g. NPB-00001")
        parser.add_argument("file", help="spectrum file as exported by the photometer")
        parser.add_argument("--dilution", type=float, default=1.0,
                            help="total volume / colloid volume (default 1)")
        parser.add_argument("--path-cm", type=float, default=1.0, help="cell path length, cm")
        parser.add_argument("--measured-on", type=_date, default=None,
                            help="date of the measurement (default today)")
        parser.add_argument("--blank", default=None, help="blank spectrum file to subtract")
        parser.add_argument("--json", action="store_true", help="print one JSON object")

    def handle(self, *args, batch, file, dilution, path_cm, measured_on, blank, **options):
        try:
            record = record_get(batch)
        except RecordNotFound as error:
            raise CommandError(str(error)) from error
        if not isinstance(record, NanoparticleBatch):
            raise CommandError(f"{record.code} is a {record._meta.verbose_name}, not a "
                               "nanoparticle batch.")
        content = self._read(file)
        blank_file = (Path(blank).name, self._read(blank)) if blank else None
        with refusals_in_words("Refused, nothing saved. "):
            try:
                result = uvvis_record_import(
                    actor=None, batch=record, filename=Path(file).name, content=content,
                    measured_on=measured_on or timezone.localdate(), dilution_factor=dilution,
                    path_length_cm=path_cm, blank=blank_file)
            except AnalysisInputError as error:
                # A computed figure the analysis refuses (e.g. an absorbance made infinite by
                # a huge dilution); the transaction rolled back.
                raise CommandError(f"Refused, nothing saved. {error}") from None
        payload = uvvis_import_summary(result)
        if options["json"]:
            self.stdout.write(json.dumps(payload, indent=2))
        else:
            self._print(payload)

    def _read(self, path: str) -> bytes:
        try:
            return Path(path).read_bytes()
        except OSError as error:
            raise CommandError(f"Cannot read {path}: {error.strerror}.") from error

    def _print(self, p: dict) -> None:
        head = "already imported as" if p["duplicate"] else "stored as"
        self.stdout.write(f"{p['batch']} ({p['metal']}) UV-vis {head} {p['record']}, "
                          f"measured {p['measured_on']}, day {p['age_days']}")
        fwhm = "n/a" if p["fwhm_nm"] is None else f"{p['fwhm_nm']:.1f} nm"
        if p["peak_nm"] is None:
            self.stdout.write(f"  no plasmon maximum: {p['size_methods_note']}")
        else:
            self.stdout.write(f"  peak {p['peak_text']}, A(1 cm, undiluted) "
                              f"{p['peak_absorbance_1cm']:.3f}, FWHM {fwhm}, "
                              f"aggregation index {p['aggregation_index']:.4f}")
        size = ("n/a" if p["diameter_nm"] is None
                else f"{p['diameter_text']} ({p['diameter_method']})")
        if p["mie_median_diameter_nm"] is None:
            mie = p["mie_fit_note"]
        else:
            sigma = ("below what the spectrum resolves" if "narrower" in p["mie_fit_note"]
                     else f"{p['mie_geometric_sigma']:.3f}")
            mie = f"{p['mie_median_diameter_text']}, sigma_g {sigma}"
        self.stdout.write(f"  size {size}; Mie {mie}")
        if p["number_per_mL"] is not None:
            self.stdout.write(f"  concentration {p['number_per_mL']:.3g} /mL "
                              f"({p['molar_concentration_M']:.3g} M)")
        self.stdout.write(f"  {p['size_agreement_message']}")
        if p["peak_shift_nm"] is not None:
            self.stdout.write(f"  since first: shift {p['peak_shift_nm']:+.2f} nm, loss "
                              f"{100 * p['absorbance_loss_fraction']:.1f} %")
        for breach in p["breaches"]:
            self.stdout.write(f"  BREACH {breach['message']} [{breach['flag_code']}]")
        if p["limits_note"]:
            self.stdout.write(f"  note: {p['limits_note']}")
