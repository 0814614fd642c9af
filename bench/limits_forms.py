"""The forms of the limits page: one per kind of lab setting, each with a required reason.

Fields are named as the service's parameters, so a service refusal lands beside its field.
Ranges are the service's to check (``inventory.models.ranges``); the forms only parse.
"""

from __future__ import annotations

from django import forms

from inventory.models import ShelfLifeRule
from qc.models.raman import IntensityMeasure

REASON_HELP = "Why the lab sets these values (kept in the history with your name and the time)."


class SettingForm(forms.Form):
    """A setting change: its values, then the reason, which every change must give."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.fields["rationale"] = forms.CharField(
            label="Reason for this change", widget=forms.Textarea(attrs={"rows": 3}),
            help_text=REASON_HELP, max_length=2000)

    def service_values(self) -> dict:
        return dict(self.cleaned_data)


def _number(label: str, unit: str = "", *, required: bool = True, help_text: str = ""):
    shown = f"{label} ({unit})" if unit else label
    return forms.FloatField(label=shown, required=required, help_text=help_text)


class QcLimitForm(SettingForm):
    min_enhancement_factor = _number(
        "Enhancement factor floor", required=False,
        help_text="The lowest substrate EF that passes, e.g. 1e5. Blank: EF is not judged.")
    max_rsd_percent = _number("Uniformity RSD ceiling", "%", required=False,
                              help_text="The highest map RSD that passes. Blank: not judged.")
    min_map_points = forms.IntegerField(
        label="Minimum map points",
        help_text="A map with fewer points fails uniformity: its RSD says nothing.")
    band_position_tolerance_cm1 = _number("Band position tolerance", "± cm⁻¹")
    min_snr = _number("Signal-to-noise floor", required=False, help_text="Blank: not judged.")
    intensity_measure = forms.ChoiceField(
        label="Band figure used for EF and uniformity", choices=IntensityMeasure.choices)
    valid_days = forms.IntegerField(label="QC stays valid for (days)")


class ColloidLimitForm(SettingForm):
    peak_min_nm = _number("Plasmon peak from", "nm")
    peak_max_nm = _number("Plasmon peak to", "nm")
    fwhm_max_nm = _number("Peak width (FWHM) ceiling", "nm")
    peak_shift_max_nm = _number("Peak shift ceiling over the colloid's life", "nm")
    absorbance_loss_max_fraction = _number(
        "Peak absorbance loss ceiling", "fraction, 0–1",
        help_text="0.2 means a fall of 20 % since the first record fails.")
    aggregation_index_max = _number("Aggregation index ceiling")
    size_tolerance_percent = _number("Mie versus calibration size tolerance", "%")
    flag_size_disagreement = forms.BooleanField(
        label="Flag a size disagreement beyond the tolerance", required=False)


class ShelfLifeForm(SettingForm):
    shelf_life_days = forms.IntegerField(label="Shelf life (days)")
    counted_from = forms.ChoiceField(label="Counted from",
                                     choices=ShelfLifeRule.CountedFrom.choices)
