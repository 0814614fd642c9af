"""The joined table: one row per substrate, every setting of its making and its QC outcome.

Six queries whatever the number of substrates (substrates with their run, template and
sphere lot; linker layers; particle attachments; UV-vis of the colloids used; QC
measurements; flags), each a ``values()`` read joined in the database, then assembled with
pandas.  Column names carry their units.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

import numpy as np
import pandas as pd
from django.db.models import Exists, F, OuterRef
from django.db.models.functions import Coalesce
from django.utils import timezone

from inventory.flags import flags_open
from inventory.models import Flag, LinkerLayer, ParticleAttachment, Status, Substrate
from qc.models import QcLimitSet, ReferenceAnalyte, UvVisRecord
from qc.selectors import qc_measurements_current, qc_measurements_standing

from .columns import CATEGORICAL_SETTINGS, NUMERIC_SETTINGS, OUTCOMES

IDENTITY = ["substrate_code", "substrate_id", "made_on", "stage", "status", "expires_on",
            "metal", "linker_made_on", "attached_on", "analyte", "qc_code", "qc_measured_on",
            "failure_reasons", "open_flags",
            "flag_categories"]
COLUMNS = IDENTITY + list(CATEGORICAL_SETTINGS) + list(NUMERIC_SETTINGS) + list(OUTCOMES)


@dataclass(frozen=True)
class InsightFilters:
    """What the page and the API may narrow the table to (all optional)."""

    made_from: date | None = None
    made_to: date | None = None
    stage: str = ""
    analyte: str = ""
    metal: str = ""

    def as_query(self) -> dict:
        return {k: (v.isoformat() if isinstance(v, date) else v)
                for k, v in self.__dict__.items() if v}


@dataclass(frozen=True, eq=False)
class InsightData:
    """The joined table, every QC measurement behind it, and the flags on the substrates."""

    table: pd.DataFrame
    measurements: pd.DataFrame
    flags: pd.DataFrame
    today: date


def _frame(rows, columns) -> pd.DataFrame:
    return pd.DataFrame.from_records(list(rows), columns=columns)


def _substrates(filters: InsightFilters):
    rows = Substrate.objects.filter(voided_at__isnull=True)
    if filters.made_from:
        rows = rows.filter(made_on__gte=filters.made_from)
    if filters.made_to:
        rows = rows.filter(made_on__lte=filters.made_to)
    if filters.stage:
        rows = rows.filter(stage=filters.stage)
    if filters.metal:
        rows = rows.filter(deposition_run__metal=filters.metal)
    return rows


SUBSTRATE_FIELDS = dict(
    substrate_code=F("code"), substrate_id=F("id"), run_made_on=F("deposition_run__made_on"),
    metal=F("deposition_run__metal"), charge_C=F("deposition_run__charge_C"),
    electrode_area_cm2=F("deposition_run__electrode_area_cm2"),
    film_height_nm=F("deposition_run__film_height_nm"),
    height_over_diameter=F("deposition_run__height_over_diameter"),
    run_diameter_nm=F("deposition_run__sphere_diameter_nm"),
    nominal_diameter_nm=F("deposition_run__template__sphere_lot__nominal_diameter_nm"),
    template_coverage_percent=F("deposition_run__template__coverage_percent"),
    sphere_lot=F("deposition_run__template__sphere_lot__code"),
    bath_lot=F("deposition_run__bath_lot__code"),
    operator=Coalesce(F("deposition_run__created_by__username"), F("created_by__username")),
)


def insight_table(filters: InsightFilters | None = None, *,
                  today: date | None = None) -> InsightData:
    """Build the joined table for the substrates the filters select (six queries)."""
    filters = filters or InsightFilters()
    today = today or timezone.localdate()
    chosen = _substrates(filters)
    ids = chosen.values("id")
    base = _frame(chosen.order_by("made_on", "id").values(
        "made_on", "stage", "status", "expires_on", **SUBSTRATE_FIELDS),
        ["made_on", "stage", "status", "expires_on", *SUBSTRATE_FIELDS])
    linkers = _frame(LinkerLayer.substrates.through.objects.filter(
        substrate_id__in=ids, linkerlayer__voided_at__isnull=True)
        .order_by("linkerlayer__made_on", "linkerlayer_id").values_list(
            "substrate_id", "linkerlayer__made_on", "linkerlayer__concentration_mM",
            "linkerlayer__immersion_h", "linkerlayer__linker_lot__name"),
        ["substrate_id", "linker_made_on", "linker_concentration_mM", "linker_immersion_h",
         "linker_thiol"])
    attachments = _frame(ParticleAttachment.objects.filter(
        substrate_id__in=ids, voided_at__isnull=True).order_by("made_on", "id").values_list(
            "substrate_id", "made_on", "batch_id", "batch__code", "batch__made_on"),
        ["substrate_id", "attached_on", "batch_id", "colloid_batch", "colloid_made_on"])
    used_batches = ParticleAttachment.objects.filter(substrate_id__in=ids).values("batch_id")
    uvvis = _frame(UvVisRecord.objects.filter(
        batch_id__in=used_batches, voided_at__isnull=True)
        .order_by("measured_on", "id").values_list(
            "batch_id", "measured_on", "mie_median_diameter_nm", "diameter_nm",
            "aggregation_index"),
        ["batch_id", "uv_measured_on", "mie_diameter_nm", "calibrated_diameter_nm",
         "aggregation_index"])
    measurements = _frame(_measurements(chosen, filters.analyte).values_list(
        "substrate_id", "code", "product_kind", "measured_on", "log10_enhancement_factor",
        "log10_enhancement_factor_u", "rsd_percent", "band_position_cm1", "passed",
        "failure_reasons", "analyte__name", "is_current"),
        ["substrate_id", "qc_code", "product_kind", "qc_measured_on", "log10_ef", "log10_ef_u",
         "rsd_percent", "band_position_cm1", "passed", "failure_reasons", "analyte",
         "is_current"])
    # Every flag not voided (its category names a deviation); open ones by inventory's rule.
    flags = _frame(Flag.objects.filter(target_code__in=chosen.values("code"),
                                       voided_at__isnull=True)
                   .annotate(is_open=Exists(flags_open().filter(pk=OuterRef("pk"))))
                   .order_by("id").values_list("target_code", "code", "category", "is_open",
                                               "message"),
                   ["substrate_code", "flag_code", "category", "is_open", "message"])
    table = _assemble(base, linkers, attachments, uvvis, measurements, flags)
    if filters.analyte:
        table = table[table["analyte"] == filters.analyte].reset_index(drop=True)
    return InsightData(table=table, measurements=measurements, flags=flags, today=today)


def _measurements(chosen, analyte: str):
    """The substrates' standing QC results, oldest first, each marked whether it is the
    substrate's current result (both rules are qc's: ``qc.selectors.current``)."""
    analyte_ids = (ReferenceAnalyte.objects.filter(name=analyte).values("id")
                   if analyte else None)
    current = qc_measurements_current(chosen, analyte_ids=analyte_ids)
    return (qc_measurements_standing(analyte_ids=analyte_ids)
            .filter(substrate__in=chosen)
            .annotate(is_current=Exists(current.filter(pk=OuterRef("pk"))))
            .order_by("measured_on", "id"))


def _days(later: pd.Series, earlier: pd.Series) -> pd.Series:
    return (pd.to_datetime(later) - pd.to_datetime(earlier)).dt.days.astype(float)


def _assemble(base, linkers, attachments, uvvis, measurements, flags) -> pd.DataFrame:
    table = base.copy()
    table["sphere_diameter_nm"] = table["run_diameter_nm"].fillna(table["nominal_diameter_nm"])
    table["charge_density_mC_per_cm2"] = 1e3 * table["charge_C"] / table["electrode_area_cm2"]
    # The newest linker layer and attachment of each piece are the ones its QC sees.
    table = table.merge(linkers.drop_duplicates("substrate_id", keep="last"),
                        on="substrate_id", how="left")
    attached = attachments.drop_duplicates("substrate_id", keep="last")
    table = table.merge(attached, on="substrate_id", how="left")
    table = table.merge(_colloid_at_use(attached, uvvis), on="substrate_id", how="left")
    table["linker_age_at_attachment_d"] = _days(table["attached_on"], table["linker_made_on"])
    table["colloid_age_at_use_d"] = _days(table["attached_on"], table["colloid_made_on"])
    table = table.merge(_outcomes(table, measurements), on="substrate_id", how="left")
    last_step = table[["made_on", "linker_made_on", "attached_on"]].apply(
        pd.to_datetime).max(axis=1)
    table["making_to_qc_d"] = _days(table["qc_measured_on"], last_step)
    table = table.merge(_flag_summary(flags), on="substrate_code", how="left")
    table["open_flags"] = table["open_flags"].fillna(0).astype(int)
    table["flag_categories"] = table["flag_categories"].fillna("")
    table["qc_count"] = table["qc_count"].fillna(0).astype(int)
    return table.reindex(columns=COLUMNS)


def _colloid_at_use(attached: pd.DataFrame, uvvis: pd.DataFrame) -> pd.DataFrame:
    """Particle size and aggregation index from the colloid's newest UV-vis on or before use."""
    columns = ["substrate_id", "particle_diameter_nm", "aggregation_index"]
    if attached.empty or uvvis.empty:
        return pd.DataFrame(columns=columns)
    left = attached[["substrate_id", "batch_id", "attached_on"]].assign(
        at=lambda f: pd.to_datetime(f["attached_on"])).sort_values("at")
    right = uvvis.assign(at=lambda f: pd.to_datetime(f["uv_measured_on"])).sort_values("at")
    joined = pd.merge_asof(left, right, on="at", by="batch_id", direction="backward")
    joined["particle_diameter_nm"] = joined["calibrated_diameter_nm"].fillna(
        joined["mie_diameter_nm"])
    return joined[columns]


def _outcomes(table: pd.DataFrame, measurements: pd.DataFrame) -> pd.DataFrame:
    """The current QC of each substrate, whether its first QC at that stage passed, how many
    QC results it has at that stage."""
    columns = ["substrate_id", "qc_code", "qc_measured_on", "log10_ef", "log10_ef_u",
               "rsd_percent", "band_position_cm1", "passed", "failure_reasons", "analyte",
               "passed_first_time", "qc_count"]
    if measurements.empty:
        return pd.DataFrame(columns=columns)
    stage = table.set_index("substrate_id")["stage"]
    here = measurements[measurements["product_kind"].to_numpy()
                        == stage.reindex(measurements["substrate_id"]).to_numpy()]
    grouped = here.groupby("substrate_id", sort=False)
    newest = here[here["is_current"].astype(bool)].set_index("substrate_id")
    newest["passed_first_time"] = grouped["passed"].first()
    newest["qc_count"] = grouped.size()
    newest["failure_reasons"] = newest["failure_reasons"].map(
        lambda reasons: " ".join(reasons) if isinstance(reasons, list) else "")
    return newest.reset_index()[columns]


def _flag_summary(flags: pd.DataFrame) -> pd.DataFrame:
    columns = ["substrate_code", "open_flags", "flag_categories"]
    if flags.empty:
        return pd.DataFrame(columns=columns)
    grouped = flags.groupby("substrate_code")
    return pd.DataFrame({
        "open_flags": grouped["is_open"].sum().astype(int),
        "flag_categories": grouped["category"].agg(lambda s: " ".join(sorted(set(s)))),
    }).reset_index()


def expired_unused(table: pd.DataFrame, today: date) -> pd.Series:
    """Pieces past their expiry still in quarantine or released: made and never used."""
    active = table["status"].isin([Status.QUARANTINE, Status.RELEASED])
    expires = pd.to_datetime(table["expires_on"])
    return active & expires.notna() & (expires < pd.Timestamp(today))


def numeric(table: pd.DataFrame, column: str) -> np.ndarray:
    return pd.to_numeric(table[column], errors="coerce").to_numpy(dtype=float)


def limits_for(table: pd.DataFrame) -> float | None:
    """log10 of the lab's minimum EF for the commonest stage and analyte judged (one query)."""
    judged = table[table["qc_code"].notna()]
    if judged.empty:
        return None
    stage, analyte = judged.groupby(["stage", "analyte"]).size().idxmax()
    limits = QcLimitSet.objects.filter(product_kind=stage, analyte__name=analyte).first()
    if limits is None or limits.min_enhancement_factor is None:
        return None
    return float(np.log10(limits.min_enhancement_factor))
