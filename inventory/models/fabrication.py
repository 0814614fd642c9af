"""The fabrication chain: template, deposition, pieces, linker layer, colloid, particles."""

from __future__ import annotations

from django.db import models
from django.db.models import F, Q

from .base import CodedRecord, LifecycleRecord
from .ranges import PastDate, Span, finite, positive, range_constraints

HOURS_PER_YEAR = 366 * 24
# A bench slide or wafer piece is at most a few hundred cm².
AREA_CM2 = positive(1_000, "cm²")
TEMPLATE_RANGES = {
    "slide_area_cm2": AREA_CM2, "coverage_percent": Span(0, 100, "%"),
    "suspension_volume_uL": positive(1e6, "µL"), "made_on": PastDate(),
    "spheres_per_cm2": positive(1e14, "per cm²", computed=True),
    # The densest solids are about 22.6 g/cm³ (osmium).
    "sphere_density_g_cm3": positive(25, "g/cm³"),
    "suspension_excess_factor": Span(1, 100),
    "suspension_volume_computed_uL": positive(1e9, "µL", computed=True),
}
DEPOSITION_RUN_RANGES = {
    "electrons_per_atom": Span(1, 8), "current_efficiency": positive(1),
    "setpoint_potential_V": Span(-10, 10, "V"), "setpoint_current_mA": Span(-1e4, 1e4, "mA"),
    "electrode_area_cm2": AREA_CM2, "target_height_over_diameter": positive(10),
    "made_on": PastDate(),
    # Integrated from the file, or entered as the potentiostat reported it (the service
    # then refuses it as typed): 1e5 C is about a mole of electrons, far past any bench run.
    "charge_C": positive(1e5, "C", computed=True),
    "metal_volume_cm3": positive(1e3, "cm³", computed=True),
    "equivalent_thickness_nm": positive(1e9, "nm", computed=True),
    "film_height_nm": Span(0, 1e9, "nm", computed=True),
    "height_over_diameter": Span(0, 1e6, computed=True),
    "sphere_diameter_nm": Span(10, 50_000, "nm"),
    "charge_start_s": finite(1e9, "s"), "charge_end_s": finite(1e9, "s"),
}
SUBSTRATE_RANGES = {"area_cm2": AREA_CM2, "made_on": PastDate()}
LINKER_LAYER_RANGES = {"concentration_mM": positive(1e5, "mM"),
                       "immersion_h": positive(HOURS_PER_YEAR, "h"), "made_on": PastDate()}
COLLOID_RANGES = {"volume_mL": positive(1e5, "mL"), "target_diameter_nm": positive(1e4, "nm"),
                  "made_on": PastDate()}
ATTACHMENT_RANGES = {"immersion_min": positive(HOURS_PER_YEAR * 60, "min"),
                     "made_on": PastDate()}


class TemplateAssembly(LifecycleRecord):
    """A sphere monolayer laid on a metal-coated base slide."""

    CODE_PREFIX = "TPL"
    RANGES = TEMPLATE_RANGES
    AMENDABLE_FIELDS = frozenset(("method", "slide_area_cm2", "coverage_percent",
                                  "suspension_volume_uL", "made_on", "notes", "storage"))

    class Method(models.TextChoices):
        INTERFACE_TRANSFER = "interface_transfer", "Air–water interface transfer"
        VERTICAL_DEPOSITION = "vertical_deposition", "Vertical (convective) deposition"
        SPIN_COATING = "spin_coating", "Spin coating"
        DROP_CASTING = "drop_casting", "Drop casting"

    sphere_lot = models.ForeignKey("inventory.SphereLot", on_delete=models.PROTECT,
                                   related_name="templates")
    base_slide_lot = models.ForeignKey("inventory.ReagentLot", on_delete=models.PROTECT,
                                       related_name="templates")
    method = models.CharField(max_length=24, choices=Method.choices)
    slide_area_cm2 = models.FloatField()
    coverage_percent = models.FloatField(null=True, blank=True)
    # What the maker says was dispensed; the computed need is kept beside it, never over it.
    suspension_volume_uL = models.FloatField(null=True, blank=True)
    made_on = models.DateField()
    # Figures from the sphere lot (inventory.physics.template_geometry), stored when assembled.
    spheres_per_cm2 = models.FloatField(null=True, blank=True, editable=False)
    sphere_density_g_cm3 = models.FloatField(null=True, blank=True, editable=False)
    suspension_excess_factor = models.FloatField(null=True, blank=True, editable=False)
    suspension_volume_computed_uL = models.FloatField(null=True, blank=True, editable=False)

    class Meta:
        # The expiry list filters active statuses and a date horizon (records_expiring_within).
        indexes = [models.Index(fields=["status", "expires_on"],
                                name="template_status_expiry")]
        constraints = [
            *range_constraints("template", TEMPLATE_RANGES),
        ]


class DepositionRun(CodedRecord):
    """Electrodeposition through a template (or onto a flat base slide).

    The chronoamperogram is kept as uploaded and the charge integrated from it; a lab without
    the curve enters the charge its potentiostat reported (``charge_source`` says which).
    Film height and h/D are computed from the charge by inventory.physics
    (inventory.services.deposition) and stored beside the lab's target, with the sphere
    diameter, sign convention and time window that produced them.
    """

    CODE_PREFIX = "DEP"
    # Inputs of the figures: amending one works them out again from the kept charge.
    AMENDABLE_FIELDS = frozenset(("electrode_area_cm2", "current_efficiency",
                                  "electrons_per_atom", "notes"))
    RANGES = DEPOSITION_RUN_RANGES

    class Mode(models.TextChoices):
        POTENTIOSTATIC = "potentiostatic", "Constant potential"
        GALVANOSTATIC = "galvanostatic", "Constant current"

    class CathodicSign(models.TextChoices):
        NEGATIVE = "negative", "Cathodic current negative (IUPAC)"
        POSITIVE = "positive", "Cathodic current positive"
        AUTO = "auto", "Sign of the net charge taken as cathodic"

    class ChargeSource(models.TextChoices):
        CHRONOAMPEROGRAM = "chronoamperogram", "Integrated from the attached chronoamperogram"
        ENTERED = "entered", "Entered as the potentiostat reported it (no file)"

    template = models.ForeignKey("inventory.TemplateAssembly", null=True, blank=True,
                                 on_delete=models.PROTECT, related_name="deposition_runs")
    base_slide_lot = models.ForeignKey("inventory.ReagentLot", null=True, blank=True,
                                       on_delete=models.PROTECT, related_name="flat_runs")
    bath_lot = models.ForeignKey("inventory.ReagentLot", on_delete=models.PROTECT,
                                 related_name="deposition_runs")
    metal = models.CharField(max_length=4)
    electrons_per_atom = models.PositiveSmallIntegerField()
    current_efficiency = models.FloatField(default=1.0)
    mode = models.CharField(max_length=16, choices=Mode.choices)
    setpoint_potential_V = models.FloatField(null=True, blank=True)
    setpoint_current_mA = models.FloatField(null=True, blank=True)
    electrode_area_cm2 = models.FloatField()
    target_height_over_diameter = models.FloatField(null=True, blank=True)
    made_on = models.DateField()
    chronoamperogram = models.FileField(upload_to="chronoamperograms/", blank=True)
    chronoamperogram_sha256 = models.CharField(max_length=64, blank=True)
    chronoamperogram_name = models.CharField(max_length=255, blank=True)
    charge_C = models.FloatField(null=True, blank=True, editable=False)
    charge_source = models.CharField(
        max_length=16, choices=ChargeSource.choices, blank=True, editable=False,
        help_text="Where the charge came from (blank while the run has none).")
    metal_volume_cm3 = models.FloatField(null=True, blank=True, editable=False)
    equivalent_thickness_nm = models.FloatField(null=True, blank=True, editable=False)
    film_height_nm = models.FloatField(null=True, blank=True, editable=False)
    height_over_diameter = models.FloatField(null=True, blank=True, editable=False)
    # The inputs the numbers above came from, so a page can say how they were obtained.
    sphere_diameter_nm = models.FloatField(null=True, blank=True, editable=False)
    cathodic_sign = models.CharField(max_length=8, choices=CathodicSign.choices, blank=True,
                                     editable=False)
    charge_start_s = models.FloatField(null=True, blank=True, editable=False)
    charge_end_s = models.FloatField(null=True, blank=True, editable=False)
    time_unit = models.CharField(max_length=8, blank=True, editable=False)
    current_unit = models.CharField(max_length=8, blank=True, editable=False)
    # Why the figures above no longer follow from the current inputs (an input was amended
    # and the file could not be re-read); empty while they are current.
    stale_reason = models.TextField(blank=True, editable=False)

    class Meta:
        constraints = [
            models.CheckConstraint(name="deposition_flat_film_has_no_ratio",
                                   condition=Q(template__isnull=False)
                                   | Q(height_over_diameter__isnull=True)),
            models.CheckConstraint(name="deposition_window_ordered",
                                   condition=Q(charge_start_s__isnull=True)
                                   | Q(charge_end_s__isnull=True)
                                   | Q(charge_end_s__gt=F("charge_start_s"))),
            # A charge says where it came from; an entered one has no file, a file's has its
            # digest.
            models.CheckConstraint(
                name="deposition_charge_source",
                condition=Q(charge_C__isnull=True, charge_source="")
                | Q(charge_C__isnull=False, charge_source="entered", chronoamperogram_sha256="")
                | (Q(charge_C__isnull=False, charge_source="chronoamperogram")
                   & ~Q(chronoamperogram_sha256=""))),
            models.CheckConstraint(name="deposition_template_or_flat_slide",
                                   condition=Q(template__isnull=False)
                                   | Q(base_slide_lot__isnull=False)),
            *range_constraints("deposition", DEPOSITION_RUN_RANGES),
        ]


class Substrate(LifecycleRecord):
    """One usable piece: the unit that experiments consume."""

    CODE_PREFIX = "SUB"
    RANGES = SUBSTRATE_RANGES
    AMENDABLE_FIELDS = frozenset(("piece_label", "area_cm2", "made_on", "notes", "storage"))

    class Stage(models.TextChoices):
        FILM = "film", "Metal film (on spheres or flat)"
        LINKER = "linker", "Film with linker layer"
        PARTICLES = "particles", "Film with bound particles"
        PURCHASED = "purchased", "Purchased substrate"

    deposition_run = models.ForeignKey("inventory.DepositionRun", null=True, blank=True,
                                       on_delete=models.PROTECT, related_name="substrates")
    purchased_lot = models.ForeignKey("inventory.ReagentLot", null=True, blank=True,
                                      on_delete=models.PROTECT, related_name="substrates")
    piece_label = models.CharField(max_length=40, blank=True)
    area_cm2 = models.FloatField(null=True, blank=True)
    stage = models.CharField(max_length=12, choices=Stage.choices, default=Stage.FILM)
    made_on = models.DateField()

    class Meta:
        # The expiry list filters active statuses and a date horizon (records_expiring_within).
        indexes = [models.Index(fields=["status", "expires_on"],
                                name="substrate_status_expiry")]
        constraints = [
            models.CheckConstraint(name="substrate_from_run_or_purchase",
                                   condition=Q(deposition_run__isnull=False)
                                   | Q(purchased_lot__isnull=False)),
            *range_constraints("substrate", SUBSTRATE_RANGES),
        ]


class LinkerLayer(CodedRecord):
    """A self-assembled thiol monolayer step on one or more substrates."""

    CODE_PREFIX = "LNK"
    RANGES = LINKER_LAYER_RANGES
    AMENDABLE_FIELDS = frozenset(("concentration_mM", "immersion_h", "made_on", "notes"))

    linker_lot = models.ForeignKey("inventory.ReagentLot", on_delete=models.PROTECT,
                                   related_name="linker_layers")
    solvent_lot = models.ForeignKey("inventory.ReagentLot", null=True, blank=True,
                                    on_delete=models.PROTECT, related_name="+")
    substrates = models.ManyToManyField("inventory.Substrate", related_name="linker_layers")
    concentration_mM = models.FloatField()
    immersion_h = models.FloatField()
    made_on = models.DateField()

    class Meta:
        constraints = [
            *range_constraints("linker", LINKER_LAYER_RANGES),
        ]


class NanoparticleBatch(LifecycleRecord):
    """A colloid made in the lab; its UV-vis records live in the qc app."""

    CODE_PREFIX = "NPB"
    RANGES = COLLOID_RANGES
    AMENDABLE_FIELDS = frozenset(("metal", "synthesis_method", "volume_mL",
                                  "target_diameter_nm", "made_on", "notes", "storage"))

    class Method(models.TextChoices):
        CITRATE = "citrate", "Citrate reduction"
        BOROHYDRIDE = "borohydride", "Borohydride reduction"
        SEEDED_GROWTH = "seeded_growth", "Seeded growth"
        HYDROXYLAMINE = "hydroxylamine", "Hydroxylamine reduction"

    metal = models.CharField(max_length=4)
    synthesis_method = models.CharField(max_length=16, choices=Method.choices)
    volume_mL = models.FloatField()
    target_diameter_nm = models.FloatField(null=True, blank=True)
    made_on = models.DateField()
    source_lots = models.ManyToManyField("inventory.ReagentLot", blank=True,
                                         related_name="nanoparticle_batches")

    class Meta:
        # The expiry list filters active statuses and a date horizon (records_expiring_within).
        indexes = [models.Index(fields=["status", "expires_on"],
                                name="colloid_status_expiry")]
        verbose_name_plural = "nanoparticle batches"
        constraints = [
            *range_constraints("colloid", COLLOID_RANGES),
        ]


class ParticleAttachment(CodedRecord):
    """Particles from one colloid batch bound onto a linker-modified substrate."""

    CODE_PREFIX = "PAT"
    RANGES = ATTACHMENT_RANGES
    AMENDABLE_FIELDS = frozenset(("immersion_min", "made_on", "notes"))

    substrate = models.ForeignKey("inventory.Substrate", on_delete=models.PROTECT,
                                  related_name="particle_attachments")
    batch = models.ForeignKey("inventory.NanoparticleBatch", on_delete=models.PROTECT,
                              related_name="attachments")
    immersion_min = models.FloatField()
    made_on = models.DateField()

    class Meta:
        constraints = [
            *range_constraints("attachment", ATTACHMENT_RANGES),
        ]
