"""Make forms for what arrives at the lab: storage places, reagent lots, sphere lots."""

from __future__ import annotations

from django import forms

from inventory import services
from inventory.models import ReagentKind, SphereLot, StorageLocation

from .base import MakeForm, date_field, number


def storage_choice() -> forms.ModelChoiceField:
    field = forms.ModelChoiceField(StorageLocation.objects.order_by("name"), required=False,
                                   to_field_name="code", label="Kept in",
                                   empty_label="— not recorded —")
    field.label_from_instance = str
    return field


class StorageLocationForm(MakeForm):
    name = forms.CharField(label="Name (e.g. Fridge 2, shelf B)", max_length=120)
    kind = forms.ChoiceField(label="Kind", choices=StorageLocation.Kind.choices)
    room = forms.CharField(label="Room", max_length=60, required=False)

    def submit(self, actor):
        return services.storage_location_create(actor=actor, **self.cleaned_data)


class ReagentLotForm(MakeForm):
    name = forms.CharField(label="Name (as on the bottle)", max_length=160)
    kind = forms.ChoiceField(label="Kind", choices=ReagentKind.choices)
    supplier = forms.CharField(label="Supplier", max_length=120, required=False)
    supplier_lot = forms.CharField(label="Supplier's lot number", max_length=80, required=False)
    received_on = date_field("Received on")
    opened_on = date_field("Opened on (if already opened)", required=False, today=False)
    ghs_hazard_codes = forms.CharField(
        label="GHS hazard codes (from the SDS, e.g. H300 H310 H330 EUH032)", required=False,
        max_length=200, help_text="Copy every H and EUH code from section 2 of the supplier's "
                                  "safety data sheet.")
    quantity = forms.DecimalField(label="Quantity", required=False, min_value=0,
                                  max_digits=12, decimal_places=3)
    quantity_unit = forms.CharField(label="Unit of quantity (g, mL, slides …)", max_length=16,
                                    required=False)
    concentration_mM = number("Concentration (mM), if a solution", required=False)
    notes = forms.CharField(label="Notes", required=False, widget=forms.Textarea(attrs={"rows": 2}))

    field_order = ("name", "kind", "supplier", "supplier_lot", "received_on", "opened_on",
                   "ghs_hazard_codes", "quantity", "quantity_unit", "concentration_mM",
                   "storage", "notes")

    def add_choices(self):
        self.fields["storage"] = storage_choice()

    def submit(self, actor):
        return services.reagent_lot_receive(actor=actor, **self.cleaned_data)


class SphereLotForm(MakeForm):
    material = forms.ChoiceField(label="Material", choices=SphereLot.Material.choices)
    nominal_diameter_nm = number("Nominal diameter (nm)")
    solids_percent_w_v = number("Solids (% w/v)")
    size_cv_percent = number("Size CV (%)", required=False)
    supplier = forms.CharField(label="Supplier", max_length=120, required=False)
    supplier_lot = forms.CharField(label="Supplier's lot number", max_length=80, required=False)
    received_on = date_field("Received on")
    volume_mL = number("Volume (mL)", required=False)
    notes = forms.CharField(label="Notes", required=False, widget=forms.Textarea(attrs={"rows": 2}))

    def add_choices(self):
        self.fields["storage"] = storage_choice()

    def submit(self, actor):
        return services.sphere_lot_receive(actor=actor, **self.cleaned_data)
