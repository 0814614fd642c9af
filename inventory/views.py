"""Thin pages: parse the request, call one selector or service, render."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import render

from . import ghs
from .codes import RecordNotFound, record_get
from .models import Flag, NanoparticleBatch, ReagentLot, Status, Substrate
from .selectors import (
    record_get_ancestors,
    record_get_descendants,
    records_expiring_within,
    substrate_check_readiness,
)


@login_required
def home(request):
    context = {
        "expiring": records_expiring_within(14),
        "open_flags": Flag.objects.filter(state=Flag.State.OPEN).order_by("-created_at")[:20],
        "quarantine_count": Substrate.objects.filter(status=Status.QUARANTINE).count(),
        "released_count": Substrate.objects.filter(status=Status.RELEASED).count(),
        "colloid_count": NanoparticleBatch.objects.filter(status=Status.RELEASED).count(),
    }
    return render(request, "inventory/home.html", context)


@login_required
def readiness_check(request):
    code = request.GET.get("code", "").strip()
    context = {"code": code, "result": None, "error": None}
    if code:
        try:
            context["result"] = substrate_check_readiness(code)
        except (RecordNotFound, ValueError) as error:
            context["error"] = str(error)
    return render(request, "inventory/readiness.html", context)


@login_required
def record_detail(request, code: str):
    try:
        record = record_get(code)
    except RecordNotFound:
        raise Http404(f"No record {code}") from None
    fields = [(f.verbose_name, getattr(record, f.name)) for f in record._meta.concrete_fields
              if f.name not in {"id", "code", "version"}]
    context = {
        "record": record,
        "kind": record._meta.verbose_name,
        "fields": fields,
        "ancestors": record_get_ancestors(record),
        "descendants": record_get_descendants(record),
        "hazards": ghs.statements_for(record.ghs_hazard_codes)
        if isinstance(record, ReagentLot) else [],
        "flags": Flag.objects.filter(target_code=record.code).order_by("-created_at"),
    }
    return render(request, "inventory/record.html", context)
