"""Purchased and prepared materials, where they are kept, and the lab's shelf-life rules."""

from __future__ import annotations

from django.db import models
from django.db.models import F, Q

from .base import CodedRecord, LifecycleRecord, StampedRecord
from .ranges import PastDate, Span, positive, range_constraints

REAGENT_LOT_RANGES = {
    "received_on": PastDate(), "opened_on": PastDate(), "prepared_on": PastDate(),
    "quantity": Span(0, 1e9, "(the lot's unit)"),
    # Neat liquids are about 10–55 mol/L; a stock above 100 mol/L is a typing error.
    "concentration_mM": positive(1e5, "mM"),
}
# Colloidal template spheres run from tens of nanometres to tens of micrometres.
SPHERE_LOT_RANGES = {
    "nominal_diameter_nm": Span(10, 50_000, "nm"), "size_cv_percent": Span(0, 100, "%"),
    "solids_percent_w_v": positive(100, "% w/v"), "volume_mL": positive(1e5, "mL"),
    "received_on": PastDate(), "opened_on": PastDate(),
}
SHELF_LIFE_RULE_RANGES = {"shelf_life_days": Span(1, 36_500, "days")}


class StorageLocation(CodedRecord):
    """A fridge, desiccator, box or shelf."""

    CODE_PREFIX = "LOC"
    AMENDABLE_FIELDS = frozenset(("name", "kind", "room", "notes"))

    class Kind(models.TextChoices):
        FRIDGE = "fridge", "Fridge (2–8 °C)"
        FREEZER = "freezer", "Freezer"
        DESICCATOR = "desiccator", "Desiccator"
        CABINET = "cabinet", "Cabinet or shelf"
        FLAMMABLES = "flammables", "Flammables cabinet"
        BOX = "box", "Box"

    name = models.CharField(max_length=120, unique=True)
    kind = models.CharField(max_length=16, choices=Kind.choices)
    room = models.CharField(max_length=60, blank=True)

    def __str__(self) -> str:
        return f"{self.code} {self.name}"


class ReagentKind(models.TextChoices):
    PLATING_BATH = "plating_bath", "Plating bath"
    LINKER_THIOL = "linker_thiol", "Linker thiol"
    METAL_SALT = "metal_salt", "Metal salt"
    REDUCTANT = "reductant", "Reductant"
    STABILISER = "stabiliser", "Stabiliser"
    REFERENCE_ANALYTE = "reference_analyte", "Reference analyte"
    SOLVENT = "solvent", "Solvent"
    BASE_SLIDE = "base_slide", "Metal-coated base slides"
    PURCHASED_SUBSTRATE = "purchased_substrate", "Purchased SERS substrates"
    OTHER = "other", "Other"


class ReagentLot(LifecycleRecord):
    """Any purchased or lab-prepared chemical or consumable lot.

    ``ghs_hazard_codes`` holds GHS hazard statement codes (e.g. ``H300 H310``) so that pages
    and labels can print the statements; the supplier's safety data sheet remains the
    authority.
    """

    CODE_PREFIX = "RGT"
    RANGES = REAGENT_LOT_RANGES
    AMENDABLE_FIELDS = frozenset(("name", "supplier", "supplier_lot", "received_on", "opened_on",
                                  "prepared_on", "quantity", "quantity_unit", "concentration_mM",
                                  "ghs_hazard_codes", "notes", "storage"))

    name = models.CharField(max_length=160)
    kind = models.CharField(max_length=24, choices=ReagentKind.choices, db_index=True)
    supplier = models.CharField(max_length=120, blank=True)
    supplier_lot = models.CharField(max_length=80, blank=True)
    received_on = models.DateField(null=True, blank=True)
    opened_on = models.DateField(null=True, blank=True)
    prepared_on = models.DateField(null=True, blank=True)
    quantity = models.DecimalField(max_digits=12, decimal_places=3, null=True, blank=True)
    quantity_unit = models.CharField(max_length=16, blank=True)
    concentration_mM = models.FloatField(null=True, blank=True)
    ghs_hazard_codes = models.CharField(max_length=200, blank=True)
    prepared_from = models.ManyToManyField("self", symmetrical=False, blank=True,
                                           related_name="used_to_prepare")

    class Meta:
        # The expiry list filters active statuses and a date horizon (records_expiring_within).
        indexes = [models.Index(fields=["status", "expires_on"],
                                name="reagentlot_status_expiry")]
        constraints = [
            models.CheckConstraint(
                name="reagent_received_or_prepared",
                condition=Q(received_on__isnull=False) | Q(prepared_on__isnull=False),
            ),
            models.CheckConstraint(
                name="reagent_opened_after_received",
                condition=Q(opened_on__isnull=True) | Q(received_on__isnull=True)
                | Q(opened_on__gte=F("received_on")),
            ),
            *range_constraints("reagent", REAGENT_LOT_RANGES),
        ]

    def __str__(self) -> str:
        return f"{self.code} {self.name}"


class SphereLot(LifecycleRecord):
    """Template spheres as received: material, nominal size, size spread and solids content."""

    CODE_PREFIX = "SPH"
    RANGES = SPHERE_LOT_RANGES
    AMENDABLE_FIELDS = frozenset(("material", "nominal_diameter_nm", "size_cv_percent",
                                  "solids_percent_w_v", "supplier", "supplier_lot",
                                  "received_on", "opened_on", "volume_mL", "notes", "storage"))

    class Material(models.TextChoices):
        POLYSTYRENE = "polystyrene", "Polystyrene"
        SILICA = "silica", "Silica"
        PMMA = "pmma", "PMMA"

    material = models.CharField(max_length=16, choices=Material.choices)
    nominal_diameter_nm = models.FloatField()
    size_cv_percent = models.FloatField(null=True, blank=True)
    solids_percent_w_v = models.FloatField()
    supplier = models.CharField(max_length=120, blank=True)
    supplier_lot = models.CharField(max_length=80, blank=True)
    received_on = models.DateField()
    opened_on = models.DateField(null=True, blank=True)
    volume_mL = models.FloatField(null=True, blank=True)

    class Meta:
        # The expiry list filters active statuses and a date horizon (records_expiring_within).
        indexes = [models.Index(fields=["status", "expires_on"],
                                name="spherelot_status_expiry")]
        constraints = [
            *range_constraints("sphere", SPHERE_LOT_RANGES),
            models.CheckConstraint(name="sphere_opened_after_received",
                                   condition=Q(opened_on__isnull=True)
                                   | Q(opened_on__gte=F("received_on"))),
        ]


class RecordKind(models.TextChoices):
    """Kinds of record a shelf-life rule can apply to."""

    REAGENT_LOT = "reagentlot", "Reagent lot"
    SPHERE_LOT = "spherelot", "Sphere lot"
    TEMPLATE_ASSEMBLY = "templateassembly", "Template assembly"
    SUBSTRATE = "substrate", "Substrate"
    LINKER_LAYER = "linkerlayer", "Linker layer (age limit)"
    NANOPARTICLE_BATCH = "nanoparticlebatch", "Nanoparticle batch"


class ShelfLifeRule(StampedRecord):
    """How long a kind of record stays usable, counted from which of its dates.

    A rule with a ``reagent_kind`` applies to reagent lots of that kind and wins over the
    general reagent rule.  ``is_example`` marks the values shipped with the demo, which a lab
    must replace with its own.
    """

    class CountedFrom(models.TextChoices):
        MADE = "made", "Date made"
        RECEIVED = "received", "Date received"
        OPENED = "opened", "Date opened"
        PREPARED = "prepared", "Date prepared"

    RANGES = SHELF_LIFE_RULE_RANGES

    record_kind = models.CharField(max_length=24, choices=RecordKind.choices)
    reagent_kind = models.CharField(max_length=24, choices=ReagentKind.choices, blank=True)
    shelf_life_days = models.PositiveIntegerField()
    counted_from = models.CharField(max_length=12, choices=CountedFrom.choices)
    is_example = models.BooleanField(default=False)
    rationale = models.TextField(blank=True)

    class Meta:
        constraints = [
            models.UniqueConstraint(fields=["record_kind", "reagent_kind"],
                                    name="one_shelf_life_rule_per_kind"),
            *range_constraints("shelf_life", SHELF_LIFE_RULE_RANGES),
            models.CheckConstraint(
                name="reagent_kind_only_for_reagents",
                condition=Q(reagent_kind="") | Q(record_kind="reagentlot"),
            ),
        ]

    def __str__(self) -> str:
        scope = f"{self.record_kind}/{self.reagent_kind}" if self.reagent_kind else self.record_kind
        return f"{scope}: {self.shelf_life_days} d from {self.counted_from}"


class CodeCounter(models.Model):
    """The last number handed out for each code prefix (see inventory.codes)."""

    prefix = models.CharField(max_length=8, primary_key=True)
    last_value = models.PositiveBigIntegerField(default=0)
