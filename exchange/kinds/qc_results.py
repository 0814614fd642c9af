"""The sheet kind of historical QC results, kept as imported figures."""

from __future__ import annotations

from qc.models import QcMeasurement

from .. import services as exchange_services
from ..models import ImportedQcResult
from .base import NOTES, Column, Kind, pick, text_of


def _qc_result_values(values, ctx) -> dict:
    return dict(
        substrate=values["substrate"], measured_on=values["measured_on"],
        verdict=values["verdict"], analyte=text_of(values, "analyte"),
        notes=text_of(values, "notes"), source=ctx.source,
        **pick(values, "enhancement_factor", "rsd_percent", "laser_nm"))


def _result_key(values) -> tuple:
    return values["substrate"].pk, values["measured_on"], values.get("analyte") or ""


def _stored_results() -> dict[tuple, object]:
    """(substrate key, day, analyte) -> the first stored result's key, for the whole table."""
    found: dict[tuple, object] = {}
    for pk, *key in ImportedQcResult.objects.order_by("id").values_list(
            "id", "substrate_id", "measured_on", "analyte"):
        found.setdefault(tuple(key), pk)
    return found


def _known_results(ctx) -> dict[tuple, object]:
    """The results stored or made by this import, by key: read once per import; a value is a
    stored result's key or a result checked above and not written yet."""
    return ctx.read_once("imported qc results", _stored_results)


def _qc_result(values, ctx):
    result = exchange_services.imported_qc_result_record(
        actor=ctx.actor, **_qc_result_values(values, ctx))
    _known_results(ctx).setdefault(_result_key(values), result.pk)
    return result


def _qc_result_new(values, ctx):
    new = exchange_services.imported_qc_result_check(
        actor=ctx.actor, many=ctx.many, **_qc_result_values(values, ctx))
    _known_results(ctx).setdefault(_result_key(values), new.record)
    return new


def _find_qc_result(values, ctx):
    """A stored result of the same substrate, day and analyte; one this import checked above
    is written first, so the row meets it in the database as on the per-row path."""
    if values.get("substrate") is None:
        return None
    found = _known_results(ctx).get(_result_key(values))
    if isinstance(found, ImportedQcResult):
        if found.pk is None:
            ctx.flush()
        found = found.pk
    return None if found is None else ImportedQcResult.objects.get(pk=found)


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
    ), _qc_result, find=_find_qc_result, prepare=_qc_result_new, export_queryset=_qc_rows,
    export_value={"verdict": lambda r: r.verdict if isinstance(r, ImportedQcResult)
                  else ("passed" if r.passed else "failed"),
                  "analyte": lambda r: r.analyte if isinstance(r, ImportedQcResult)
                  else r.analyte.name})
