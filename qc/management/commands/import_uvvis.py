"""import_uvvis BATCH_ID FILE: store and evaluate one colloid UV-vis spectrum."""

from datetime import date

from django.core.management.base import CommandError
from django.utils import timezone

from inventory.management.cli import RecordingCommand
from inventory.models import NanoparticleBatch
from qc.api.results import uvvis_import_summary
from qc.services import uvvis_record_import


def _date(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise CommandError(
            f"--measured-on must be an ISO 8601 date (YYYY-MM-DD), got '{text}'."
        ) from None


class Command(RecordingCommand):
    help = ("Import a UV-vis spectrum (two-column text or JCAMP-DX, wavelength in nm) of a "
            "colloid batch; prints size, concentration, stability and any limit breaches.")

    def add_inputs(self, parser):
        parser.add_argument("batch", help="nanoparticle batch ID, e.g. NPB-00001")
        parser.add_argument("file", help="spectrum file as exported by the photometer")
        parser.add_argument("--dilution", type=float, default=1.0,
                            help="total volume / colloid volume (default 1)")
        parser.add_argument("--path-cm", type=float, default=1.0, help="cell path length, cm")
        parser.add_argument("--measured-on", type=_date, default=None,
                            help="date of the measurement (default today)")
        parser.add_argument("--blank", default=None, help="blank spectrum file to subtract")

    def record(self, *, actor, options) -> dict:
        batch = self.get_record(NanoparticleBatch, options["batch"], "nanoparticle batch")
        filename, content = self.read_file(options["file"])
        blank = self.read_file(options["blank"]) if options["blank"] else None
        result = uvvis_record_import(
            actor=actor, batch=batch, filename=filename, content=content,
            measured_on=options["measured_on"] or timezone.localdate(),
            dilution_factor=options["dilution"], path_length_cm=options["path_cm"],
            blank=blank)
        return uvvis_import_summary(result)

    def show(self, p: dict) -> None:
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
