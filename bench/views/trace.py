"""Trace: lineage both ways as tables and a picture, the printable audit report, PROV-JSON."""

from __future__ import annotations

import io
import json

from django.contrib.auth import get_user_model
from django.contrib.auth.decorators import login_required
from django.http import HttpResponse
from django.shortcuts import render
from django.template.loader import render_to_string

from bench import page_queries, plots
from bench.labels import made_on_of
from inventory.codes import RecordNotFound, record_get
from inventory.flags import flags_open
from inventory.models import DepositionRun, NanoparticleBatch, StatusChange, Substrate
from inventory.prov import lineage_as_prov
from inventory.selectors import record_get_ancestors, record_get_descendants
from qc.models import QcMeasurement, UvVisRecord

from ._common import code_from_scan, record_or_404
from .records import lineage_rows

DIRECTIONS = ("ancestors", "descendants")
# Rows listed per direction on the page; a recall can reach thousands, and the complete list
# is one click away (PROV-JSON here, or the API's lineage endpoint).
TRACE_ROWS = 300


@login_required
def trace(request):
    code = code_from_scan(request.GET.get("code", ""))
    context = {"code": code, "record": None, "error": None, "shown": TRACE_ROWS}
    if code:
        try:
            record = record_get(code)
        except RecordNotFound as error:
            context["error"] = str(error)
        else:
            up, down = record_get_ancestors(record), record_get_descendants(record)
            context.update(record=record, kind=record._meta.verbose_name,
                           ancestor_total=len(up.depth), descendant_total=len(down.depth),
                           ancestors=lineage_rows(up)[:TRACE_ROWS],
                           descendants=lineage_rows(down)[:TRACE_ROWS])
    return render(request, "inventory/trace.html", context)


@login_required
def trace_graph(request, code: str):
    """The lineage of ``code`` as an SVG (or ``?format=png``), columns by depth."""
    record = record_or_404(code)
    up, down = record_get_ancestors(record), record_get_descendants(record)
    layers = plots.lineage_layers(record.code, up.depth, down.depth)
    edges = {(e.parent_code, e.child_code) for e in [*up.edges, *down.edges]}
    figure = plots.lineage_figure(layers, sorted(edges), root_code=record.code)
    fmt = request.GET.get("format", "svg")
    if fmt not in plots.FORMATS:
        fmt = "svg"
    return HttpResponse(plots.figure_bytes(figure, fmt), content_type=plots.FORMATS[fmt])


@login_required
def trace_prov(request, code: str):
    """W3C PROV-JSON of the lineage (``?direction=ancestors|descendants``) as a download."""
    record = record_or_404(code)
    direction = request.GET.get("direction", "ancestors")
    if direction not in DIRECTIONS:
        direction = "ancestors"
    document = lineage_as_prov(record, direction=direction)
    response = HttpResponse(json.dumps(document, indent=2, default=str),
                            content_type="application/json")
    response["Content-Disposition"] = (f'attachment; filename="{record.code}-{direction}'
                                       '.prov.json"')
    return response


def _people(records) -> dict:
    ids = {r.created_by_id for r in records if getattr(r, "created_by_id", None)}
    return {u.pk: u for u in get_user_model().objects.filter(pk__in=ids)}


@login_required
def trace_report(request, code: str):
    """A printable audit report: every record the root depends on, with its evidence."""
    return render(request, "inventory/trace_report.html", _report_context(code))


@login_required
def trace_report_pdf(request, code: str):
    """The same audit report as a PDF file (xhtml2pdf: pure Python, no system libraries)."""
    from xhtml2pdf import pisa

    context = _report_context(code)
    html = render_to_string("inventory/trace_report_pdf.html", context, request=request)
    pdf = io.BytesIO()
    outcome = pisa.CreatePDF(html, dest=pdf, encoding="utf-8")
    if outcome.err:
        raise RuntimeError(f"PDF of the audit report of {code} failed ({outcome.err} errors)")
    response = HttpResponse(pdf.getvalue(), content_type="application/pdf")
    response["Content-Disposition"] = f'attachment; filename="audit-{context["record"].code}.pdf"'
    return response


def _report_context(code: str) -> dict:
    record = record_or_404(code)
    ancestry = record_get_ancestors(record)
    rows = lineage_rows(ancestry)
    records = [record, *(row["record"] for row in rows if row["record"] is not None)]
    codes = [r.code for r in records]
    substrates = [r for r in records if isinstance(r, Substrate)]
    batches = [r for r in records if isinstance(r, NanoparticleBatch)]
    people = _people(records)
    for row in [{"record": record}, *rows]:
        row["made_by"] = people.get(getattr(row["record"], "created_by_id", None))
        row["made_on"] = made_on_of(row["record"]) if row["record"] is not None else None
    qc = list(QcMeasurement.objects.filter(substrate__in=substrates)
              .select_related("substrate").order_by("substrate__code", "-measured_on"))
    uvvis = list(UvVisRecord.objects.filter(batch__in=batches)
                 .select_related("batch").order_by("batch__code", "measured_on"))
    context = {
        "record": record, "kind": record._meta.verbose_name, "rows": rows,
        "root_made_by": people.get(record.created_by_id),
        "qc": qc, "uvvis": uvvis,
        "runs": [r for r in records if isinstance(r, DepositionRun)],
        # Every file behind the result: the record's own, its inputs', and the measurements'.
        "files": [(r.code, f) for r in [*records, *qc, *uvvis]
                  for f in page_queries.stored_files(r)],
        "open_flags": flags_open(target_codes=codes).order_by("target_code", "code"),
        "status_changes": StatusChange.objects.filter(record_code__in=codes)
        .select_related("changed_by").order_by("record_code", "changed_at"),
        "signatures": [s for r in records for s in page_queries.record_signatures(r)],
    }
    return context
