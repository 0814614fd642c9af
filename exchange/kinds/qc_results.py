"""The sheet kind of historical QC results, kept as imported figures."""

from __future__ import annotations

from qc.models import QcMeasurement

from .. import services as exchange_services
from ..models import ImportedQcResult
from .base import NOTES, Column, Kind, pick, text_of


def _qc_result(values, ctx):
    return exchange_services.imported_qc_result_record(
        actor=ctx.actor, substrate=values["substrate"], measured_on=values["measured_on"],
        verdict=values["verdict"], analyte=text_of(values, "analyte"),
        notes=text_of(values, "notes"), source=ctx.source,
        **pick(values, "enhancement_factor", "rsd_percent", "laser_nm"))


def _find_qc_result(values, ctx):
    substrate = values.get("substrate")
    if substrate is None:
        return None
    return ImportedQcResult.objects.filter(substrate=substrate, measured_on=values["measured_on"],
                                           analyte=values.get("analyte") or "").first()


def _qc_rows():
    """Imported figures and the QC measurements computed here, as one QC log."""
    imported = list(ImportedQcResult.objects.select_related("substrate").order_by("id"))
    measured = list(QcMeasurement.objects.select_related("substrate", "analyte").order_by("id"))
    return imported + measured


QC_RESULTS = Kind(
    "qc_results", "QC results (imported figures)", ImportedQcResult, (
        Column("substrate", "Substrate", "ref", ref="substrates", required=True, compare=False,
               aliases=("piece", "sample"), example="SUB-00001"),
        Column("measured_on", "Measured on", "date", required=True, compare=False,
               aliases=("date", "qc date"), example="2026-02-05"),
        Column("enhancement_factor", "Enhancement factor", "number",
               aliases=("ef", "enhancement", "sers ef"), example=2.1e6),
        Column("rsd_percent", "RSD", "number", "%", aliases=("rsd", "relative sd",
                                                             "uniformity rsd"), example=8.5),
        Column("verdict", "Verdict", "choice", required=True,
               choices=(("passed", "passed"), ("failed", "failed"), ("passed", "pass"),
                        ("failed", "fail")), aliases=("result", "pass fail", "outcome"),
               example="passed"),
        Column("analyte", "Analyte", compare=False, aliases=("probe", "reference analyte"),
               example="Benzenethiol"),
        Column("laser_nm", "Laser wavelength", "number", "nm", aliases=("laser", "excitation"),
               example=785),
        NOTES,
    ), _qc_result, find=_find_qc_result, export_queryset=_qc_rows,
    export_value={"verdict": lambda r: r.verdict if isinstance(r, ImportedQcResult)
                  else ("passed" if r.passed else "failed"),
                  "analyte": lambda r: r.analyte if isinstance(r, ImportedQcResult)
                  else r.analyte.name})
