"""Check (readiness), the record page, and printable labels."""

from __future__ import annotations

from django.conf import settings
from django.contrib.auth.decorators import login_required
from django.shortcuts import render
from django.urls import reverse

from bench import labels, page_queries
from bench.field_labels import UVVIS_BREACH_WORDS
from bench.verdicts import (
    batch_verdict,
    deposition_verdict,
    qc_verdict,
    readiness_verdict,
    uvvis_verdict,
)
from inventory import ghs
from inventory.codes import RecordNotFound, record_get
from inventory.models import (
    DepositionRun,
    Flag,
    LifecycleRecord,
    NanoparticleBatch,
    ReagentLot,
    Substrate,
)
from inventory.selectors import (
    record_get_ancestors,
    record_get_descendants,
    substrate_check_readiness,
)
from qc.models import QcMeasurement, ReferenceMeasurement, UvVisRecord
from qc.selectors import nanoparticle_batch_get_uvvis_series

from ..make.results import qc_figures
from ._common import code_from_scan, record_or_404

MAX_LABELS = 60  # one printed sheet; more is a mistake in the list of codes


@login_required
def readiness_check(request):
    code = code_from_scan(request.GET.get("code", ""))
    context = {"code": code, "result": None, "error": None}
    if code:
        try:
            result = substrate_check_readiness(code)
        except (RecordNotFound, ValueError) as error:
            context["error"] = str(error)
        else:
            substrate = Substrate.objects.select_related("deposition_run").get(
                code=result.substrate_code)
            context.update(result=result, verdict=readiness_verdict(result, substrate))
    return render(request, "inventory/readiness.html", context)


def lineage_rows(lineage) -> list[dict]:
    """Reached records nearest first: code, kind, depth, status (for tables and reports)."""
    rows = []
    for code in lineage.codes():
        record = lineage.records.get(code)
        rows.append({"code": code, "depth": lineage.depth[code], "record": record,
                     "kind": record._meta.verbose_name if record is not None else "unknown"})
    return rows


def _qc_panel(record) -> dict:
    """What the QC side knows about this record, for the record page."""
    if isinstance(record, Substrate):
        return {"qc_measurements": list(QcMeasurement.objects.filter(substrate=record)
                                        .defer("point_values", "ef_inputs")
                                        .order_by("-measured_on", "-id")[:20])}
    if isinstance(record, QcMeasurement):
        return {"laser_caution": True, "raman_plot": True, "figures": qc_figures(record),
                "verdict": qc_verdict(record), "heatmap": record.has_heatmap}
    if isinstance(record, ReferenceMeasurement):
        return {"laser_caution": True, "raman_plot": True}
    if isinstance(record, NanoparticleBatch):
        series = nanoparticle_batch_get_uvvis_series(record)
        latest = UvVisRecord.objects.get(code=series[-1].code) if series else None
        rows = [(point, ", ".join(UVVIS_BREACH_WORDS.get(limit, limit)
                                  for limit in point.breaches)) for point in series]
        return {"uvvis_series": rows, "uvvis_plot": bool(series),
                "verdict": batch_verdict(record, latest)}
    if isinstance(record, UvVisRecord):  # its figures lead, in the verdict
        return {"uvvis_plot": True, "verdict": uvvis_verdict(record)}
    if isinstance(record, DepositionRun):
        return {"deposition_plot": bool(record.chronoamperogram_sha256),
                "verdict": deposition_verdict(record)}
    return {}


@login_required
def record_detail(request, code: str):
    record = record_or_404(code)
    hazard_codes = record.ghs_hazard_codes if isinstance(record, ReagentLot) else ""
    context = {
        "record": record,
        "kind": record._meta.verbose_name,
        "is_lifecycle": isinstance(record, LifecycleRecord),
        "is_substrate": isinstance(record, Substrate),
        "fields": page_queries.field_rows(record),
        "files": page_queries.stored_files(record),
        "ancestors": lineage_rows(record_get_ancestors(record)),
        "descendants": lineage_rows(record_get_descendants(record)),
        "hazards": ghs.statements_for(hazard_codes) if hazard_codes else [],
        "hazard_severe": ghs.is_severe(hazard_codes),
        "pictograms": labels.pictograms_for(hazard_codes),
        "flags": Flag.objects.filter(target_code=record.code).order_by("state", "-created_at"),
        "history": page_queries.record_history(record),
        "signatures": page_queries.record_signatures(record),
        # A scanned label opens this page: a substrate answers "can I use it?" at the top.
        "result": substrate_check_readiness(record.code)
        if isinstance(record, Substrate) else None,
        **_qc_panel(record),
    }
    return render(request, "inventory/record.html", context)


def _label(request, record) -> labels.Label:
    url = request.build_absolute_uri(reverse("record", args=[record.code]))
    return labels.label_for(record, url=url)


@login_required
def record_label(request, code: str):
    record = record_or_404(code)
    return render(request, "inventory/labels.html",
                  {"labels": [_label(request, record)], "missing": [], **_label_size()})


def _label_size() -> dict:
    width_mm, height_mm = settings.SERSLEDGER_LABEL_SIZE_MM
    return {"label_width_mm": width_mm, "label_height_mm": height_mm}


@login_required
def label_sheet(request):
    """Several labels on one printable page: ``?codes=SUB-00001,SUB-00002``."""
    # ?codes=A,B from a typed list, or codes=A&codes=B from the stock list's ticked rows.
    codes = [c.strip().upper() for given in request.GET.getlist("codes")
             for c in given.split(",") if c.strip()]
    if len(codes) > MAX_LABELS:
        return render(request, "inventory/labels.html",
                      {"labels": [], "missing": [],
                       "error": f"At most {MAX_LABELS} labels fit one sheet; {len(codes)} "
                                "IDs were given."}, status=400)
    found, missing = [], []
    for code in dict.fromkeys(codes):
        try:
            found.append(_label(request, record_get(code)))
        except RecordNotFound:
            missing.append(code)
    return render(request, "inventory/labels.html",
                  {"labels": found, "missing": missing, **_label_size()})
