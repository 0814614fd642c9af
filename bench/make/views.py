"""Make pages: the list of steps, one form per step, and the figures right after."""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.db import transaction
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse

from inventory.codes import RecordNotFound, record_get
from inventory.ghs import STATEMENTS
from inventory.roles import MAKER, require_role, roles_of, user_has_role
from qc.models import QcImport

from ..verdicts import MAKE_RESULT_VERDICTS
from .results import RESULTS
from .steps import GROUPS, SDS, STEP_BY_SLUG, STEPS


@login_required
def index(request):
    can_log = user_has_role(request.user, MAKER)
    groups = [(group, [s for s in STEPS if s.group == group]) for group in GROUPS]
    return render(request, "make/index.html", {
        "groups": groups if can_log else [], "can_log": can_log,
        "roles": ", ".join(sorted(roles_of(request.user))) or "none"})


@login_required
def step(request, slug: str):
    step = STEP_BY_SLUG[slug]
    require_role(request.user, MAKER, action=f"Logging a {step.title.lower()}")
    if request.method == "POST":
        form = step.form_class(request.POST, request.FILES, user=request.user)
        if form.is_valid():
            try:
                # Steps that call two services (colloid + UV-vis) save both or neither.
                with transaction.atomic():
                    record = form.submit(request.user)
            except ValidationError as error:
                form.add_service_error(error)
            else:
                return redirect(_after(record))
    else:
        form = step.form_class(user=request.user)
    return render(request, "make/form.html", {
        "step": step, "form": form, "sds": SDS,
        "ghs_statements": sorted(STATEMENTS.items()) if slug == "reagent" else []})


def _after(record) -> str:
    """The computed figures when the step computes any, else the new record's page; the
    progress page while a big QC file is analysed in the background."""
    if isinstance(record, QcImport):
        return reverse("qc_import_page", args=[record.pk])
    name = "make:result" if type(record) in RESULTS else "record"
    return reverse(name, args=[record.code])


@login_required
def result(request, code: str):
    try:
        record = record_get(code)
    except RecordNotFound:
        raise Http404(f"No record {code}") from None
    build = RESULTS.get(type(record))
    if build is None:
        return redirect("record", record.code)
    verdict = MAKE_RESULT_VERDICTS.get(type(record))
    return render(request, "make/result.html", {
        "record": record, "result": build(record), "verdict": verdict and verdict(record)})
