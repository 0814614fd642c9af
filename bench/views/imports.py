"""The progress page of a QC import analysed in the background (parsing, analysing, judging).

The verdict line says where the import stands; a small script polls the API's progress
address and moves on to the result once the measurement is judged (without script the
page refreshes itself every two seconds).
"""

from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse

from qc.models import QcImport


@login_required
def qc_import_page(request, pk):
    pending = QcImport.objects.select_related("substrate", "measurement").filter(pk=pk).first()
    if pending is None:
        raise Http404(f"No QC import has the ID '{pk}'.")
    if pending.state == QcImport.State.DONE and "stay" not in request.GET:
        return redirect("make:result", pending.measurement.code)
    return render(request, "qc/import_progress.html", {
        "pending": pending,
        "progress_url": reverse("api:qc-import", args=[pending.pk]),
        "result_url": reverse("make:result", args=[pending.measurement.code])
        if pending.measurement_id else "",
    })
