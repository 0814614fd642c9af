"""Reference-analyte Raman QC (reads): latest QC, control charts, reproducibility, review notices.

Charts and reproducibility figures are computed by ``qc.analysis.control_charts`` and
``qc.analysis.uniformity`` from stored results; nothing is recomputed from raw files here.
"""

from __future__ import annotations

import hashlib
import io
from dataclasses import dataclass
from datetime import date

import numpy as np

from inventory.flags import flags_open
from inventory.lineage import record_get_ancestors, record_get_descendants
from inventory.models import Dataset, Flag, NanoparticleBatch, Substrate
from qc.analysis.control_charts import IndividualsChart, individuals_chart
from qc.analysis.uniformity import Reproducibility, batch_reproducibility

from ..models.raman import QcMeasurement

__all__ = [
    "ControlChartSeries", "ReviewNotice", "dataset_get_review_notices",
    "datasets_needing_review", "qc_batch_reproducibility", "qc_control_chart",
    "measurement_get_stored_results",
]

CHART_METRICS = {
    "log10_enhancement_factor": "log10 EF",
    "rsd_percent": "RSD %",
}
MIN_CHART_POINTS = 3  # individuals_chart needs at least three results
# The lowest value a metric can physically take: an RSD is never negative.  A computed lower
# control limit below it is shown at it (common practice, as for the c and np charts in
# Montgomery, Introduction to Statistical Quality Control, 7th ed., 2012, §7.3).  log10 EF
# has no floor: an EF below 1 is physical, and its log negative.
CHART_FLOORS = {"rsd_percent": 0.0}


@dataclass(frozen=True)
class ControlChartSeries:
    """One metric of one product kind over time, with its individuals/MR chart."""

    product_kind: str
    metric: str
    label: str
    codes: tuple[str, ...]
    measured_on: tuple[date, ...]
    substrate_codes: tuple[str, ...]
    chart: IndividualsChart | None  # None below MIN_CHART_POINTS results
    physical_floor: float | None = None  # the lowest value the metric can take

    @property
    def lower_limit_shown(self) -> float | None:
        """The lower control limit as drawn: never below what the metric can physically be."""
        if self.chart is None:
            return None
        if self.physical_floor is not None and self.chart.lower_limit < self.physical_floor:
            return self.physical_floor
        return self.chart.lower_limit

    @property
    def lower_limit_note(self) -> str:
        """Why the lower limit is drawn where it is, when it is not the computed one."""
        shown = self.lower_limit_shown
        if shown is None or shown == self.chart.lower_limit:
            return ""
        return (f"LCL drawn at {shown:g}: {self.label} cannot be negative\n"
                f"(computed LCL {self.chart.lower_limit:.3g})")


def qc_control_chart(*, product_kind: str, metric: str, analyte=None,
                     since: date | None = None,
                     baseline_count: int | None = None) -> ControlChartSeries:
    """Control chart of ``metric`` ("log10_enhancement_factor" or "rsd_percent").

    One point per QC measurement of that product kind that has the metric, in the order
    measured (date, then record order).
    """
    if metric not in CHART_METRICS:
        raise ValueError(f"metric must be one of {sorted(CHART_METRICS)}, not {metric!r}")
    rows = QcMeasurement.objects.filter(product_kind=product_kind, voided_at__isnull=True,
                                        **{f"{metric}__isnull": False})
    if analyte is not None:
        rows = rows.filter(analyte=analyte)
    if since is not None:
        rows = rows.filter(measured_on__gte=since)
    rows = list(rows.order_by("measured_on", "id")
                .values_list("code", "measured_on", "substrate__code", metric))
    values = [row[3] for row in rows]
    chart = individuals_chart(values, baseline_count=baseline_count) \
        if len(values) >= MIN_CHART_POINTS else None
    return ControlChartSeries(
        product_kind=product_kind, metric=metric, label=CHART_METRICS[metric],
        codes=tuple(r[0] for r in rows), measured_on=tuple(r[1] for r in rows),
        substrate_codes=tuple(r[2] for r in rows), chart=chart,
        physical_floor=CHART_FLOORS.get(metric))


def measurement_get_stored_results(measurement) -> dict[str, np.ndarray] | None:
    """The arrays stored at import (``qc.services.raman_results``), or None if there are none.

    The file is checked against its recorded SHA-256; a mismatch raises ``ValueError`` rather
    than drawing something other than what the import computed.
    """
    if not measurement.results_sha256 or not measurement.results_file:
        return None
    with measurement.results_file.open("rb") as handle:
        content = handle.read()
    if hashlib.sha256(content).hexdigest() != measurement.results_sha256:
        raise ValueError(f"The stored results of {measurement.code} do not match their "
                         "recorded SHA-256.")
    with np.load(io.BytesIO(content), allow_pickle=False) as archive:
        return {name: archive[name] for name in archive.files}


def _latest_maps(substrate_ids) -> list[QcMeasurement]:
    """The newest map of each substrate (one query)."""
    newest: dict[int, QcMeasurement] = {}
    for measurement in (QcMeasurement.objects.filter(substrate_id__in=substrate_ids, is_map=True,
                                                             voided_at__isnull=True)
                        .order_by("substrate_id", "-measured_on", "-id")
                        .only("code", "substrate_id", "point_values")):
        newest.setdefault(measurement.substrate_id, measurement)
    return list(newest.values())


def qc_batch_reproducibility(*, deposition_run=None,
                             batch: NanoparticleBatch | None = None,
                             product_kind: str | None = None) -> Reproducibility:
    """Between/within-substrate spread of the latest QC maps of one run's or batch's pieces.

    Uses the per-point normalised band heights stored with each map.  Raises ``ValueError``
    when fewer than two substrates have a map.
    """
    if (deposition_run is None) == (batch is None):
        raise ValueError("Give exactly one of deposition_run or batch.")
    substrates = Substrate.objects.all()
    if deposition_run is not None:
        substrates = substrates.filter(deposition_run=deposition_run)
    else:
        substrates = substrates.filter(particle_attachments__batch=batch)
    if product_kind:
        substrates = substrates.filter(stage=product_kind)
    maps = _latest_maps(list(substrates.values_list("pk", flat=True)))
    if len(maps) < 2:
        raise ValueError("At least two substrates with a QC map are needed.")
    maps.sort(key=lambda m: m.code)
    return batch_reproducibility(
        [m.point_values["normalised_height_counts_per_mW_s"] for m in maps])


@dataclass(frozen=True)
class ReviewNotice:
    """A dataset that depends on a record with an open flag: it needs a review."""

    dataset_code: str
    dataset_title: str
    flag_code: str
    flagged_record_code: str
    message: str


def _notice(dataset: Dataset, flag: Flag) -> ReviewNotice:
    return ReviewNotice(dataset_code=dataset.code, dataset_title=dataset.title,
                        flag_code=flag.code, flagged_record_code=flag.target_code,
                        message=f"{dataset.code} depends on {flag.target_code}, which has open "
                                f"flag {flag.code}: {flag.message}")


def datasets_needing_review(*, category: str | None = None) -> list[ReviewNotice]:
    """Every dataset downstream of a record with an open flag, one notice per flag.

    One descendant walk per flagged record (inventory.lineage), so the cost grows with the
    number of open flags, not with the depth of the graph.
    """
    flags = flags_open(category=category)
    notices = []
    for flag in flags.order_by("code"):
        descendants = record_get_descendants(flag.target_code)
        for dataset in sorted(descendants.of_kind(Dataset), key=lambda d: d.code):
            notices.append(_notice(dataset, flag))
    return notices


def dataset_get_review_notices(dataset: Dataset) -> list[ReviewNotice]:
    """Open flags on ``dataset``'s ancestors (or itself), as review notices (two queries+)."""
    ancestry = record_get_ancestors(dataset)
    codes = [dataset.code, *ancestry.depth]
    flags = flags_open(target_codes=codes).order_by("code")
    return [_notice(dataset, flag) for flag in flags]
