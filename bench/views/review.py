"""QC pages: the review queue, the signature step for release and reject, flags, and plots.

Views parse, check the role, call one service or selector and render.  Release and reject
go through ``inventory.services.record_release`` / ``record_reject``, which verify the
re-entered password, refuse self-release and apply the QC rule; the page only collects the
signature and shows the service's answer.
"""

from __future__ import annotations

from datetime import timedelta

from django import forms
from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.cache import cache
from django.core.exceptions import ValidationError
from django.http import Http404, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse
from django.utils import timezone
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.clickjacking import xframe_options_sameorigin
from django.views.decorators.http import require_POST

from bench import page_queries, plots
from bench.refusals import form_add_refusal
from bench.views._common import int_param, paginate, record_or_404, table_download
from inventory.flags import flags_open, flags_open_by_code
from inventory.models import Flag, LifecycleRecord, NanoparticleBatch, Status, Substrate
from inventory.physics.chronoamperogram import parse_chronoamperogram
from inventory.roles import REVIEWER, require_role
from inventory.signatures import APPROVED, MEANINGS, SignatureIntent
from qc.analysis import qc_pipeline
from qc.analysis.readers import decode_text, read_map, read_spectrum
from qc.models import QcMeasurement, ReferenceMeasurement, UvVisRecord
from qc.selectors import (
    measurement_get_stored_results,
    qc_control_chart,
    qc_measurements_get_latest,
    uvvis_record_get_curves,
)
from qc.selectors.raman import CHART_METRICS

CHART_DAYS = 365  # control charts show the last year unless ?days= says otherwise
PLOT_CACHE_SECONDS = 24 * 3600  # plots of stored results never change; a day bounds the cache

# ---------------------------------------------------------------------------------------
# Review queue
# ---------------------------------------------------------------------------------------


def _latest_uvvis_by_batch(batches) -> dict[int, UvVisRecord]:
    newest: dict[int, UvVisRecord] = {}
    rows = (UvVisRecord.objects.filter(batch_id__in=[b.pk for b in batches])
            .only("code", "batch_id", "measured_on", "peak_nm", "fwhm_nm", "breaches",
                  "mie_median_diameter_nm")
            .order_by("batch_id", "-measured_on", "-id"))
    for record in rows:
        newest.setdefault(record.batch_id, record)
    return newest


@login_required
def review(request):
    counts = page_queries.quarantine_counts()
    kind = request.GET.get("kind", "substrate")
    if kind not in {c.kind for c in counts}:
        kind = "substrate"
    waiting = page_queries.quarantine_records(kind)
    download = table_download(request, f"review-{kind}", waiting)
    if download is not None:
        return download
    queue = paginate(request, waiting)
    items = list(queue.object_list)
    latest_qc = qc_measurements_get_latest(items) if kind == "substrate" else {}
    latest_uv = _latest_uvvis_by_batch(items) if kind == "nanoparticlebatch" else {}
    flags_on = flags_open_by_code([r.code for r in items])
    # The day the lot was made or received, not the day it was typed in.
    rows = [{"record": r, "qc": latest_qc.get(r.pk), "uvvis": latest_uv.get(r.pk),
             "made": getattr(r, "made_on", None) or getattr(r, "received_on", None),
             "flags": flags_on.get(r.code, [])} for r in items]
    flags = paginate(request, page_queries.open_flags(), param="fpage")
    context = {"counts": counts, "kind": kind, "queue": queue, "rows": rows, "flags": flags,
               "resolve_form": FlagResolveForm()}
    return render(request, "qc/review.html", context)


# ---------------------------------------------------------------------------------------
# Signature step
# ---------------------------------------------------------------------------------------


class SignatureForm(forms.Form):
    """Release or reject, signed with the reviewer's password re-entered."""

    decision = forms.ChoiceField(choices=[("release", "Release"), ("reject", "Reject")],
                                 widget=forms.RadioSelect, label="Decision")
    meaning = forms.ChoiceField(choices=[(m, m.capitalize()) for m in MEANINGS],
                                label="Meaning of this signature")
    reason = forms.CharField(required=False, widget=forms.Textarea(attrs={"rows": 3}),
                             label="Reason (required to reject)")
    password = forms.CharField(widget=forms.PasswordInput(attrs={"autocomplete":
                                                                 "current-password"}),
                               label="Your password, to sign", strip=False)

    def clean(self):
        data = super().clean()
        if data.get("decision") == "reject" and not (data.get("reason") or "").strip():
            self.add_error("reason", "Say why the record is rejected.")
        return data


def _sign(request, record, form: SignatureForm):
    from inventory import services

    data = form.cleaned_data
    intent = SignatureIntent(password=data["password"], meaning=data["meaning"])
    if data["decision"] == "release":
        return services.record_release(actor=request.user, record=record, signature=intent)
    return services.record_reject(actor=request.user, record=record, signature=intent,
                                  reason=data["reason"].strip())


@login_required
def review_sign(request, code: str):
    """Show a quarantined record's evidence and take the signed release or reject."""
    require_role(request.user, REVIEWER, action="Releasing or rejecting a record")
    record = record_or_404(code)
    if not isinstance(record, LifecycleRecord):
        raise Http404(f"{record.code} is a {record._meta.verbose_name}; it is not released.")
    form = SignatureForm(request.POST or None, initial={"meaning": APPROVED})
    if request.method == "POST" and form.is_valid():
        try:
            signed = _sign(request, record, form)
        except ValidationError as error:
            form_add_refusal(form, error)
        else:
            messages.success(request, f"{signed.code} is now {signed.get_status_display()}.")
            return redirect(reverse("record", args=[signed.code]))
    context = {"record": record, "kind": record._meta.verbose_name, "form": form,
               "qc": None, "flags": flags_open(target_codes=[record.code]).order_by("code")}
    if isinstance(record, Substrate):
        context["qc"] = qc_measurements_get_latest([record]).get(record.pk)
    if isinstance(record, NanoparticleBatch):
        context["uvvis"] = _latest_uvvis_by_batch([record]).get(record.pk)
    context["in_quarantine"] = record.status == Status.QUARANTINE
    context["is_substrate"] = isinstance(record, Substrate)
    status = 200 if request.method == "GET" or form.is_valid() else 400
    return render(request, "qc/review_sign.html", context, status=status)


# ---------------------------------------------------------------------------------------
# Flags
# ---------------------------------------------------------------------------------------


class FlagResolveForm(forms.Form):
    resolution = forms.CharField(widget=forms.Textarea(attrs={"rows": 2}),
                                 label="How was it resolved?")


@require_POST
@login_required
def flag_resolve(request, code: str):
    require_role(request.user, REVIEWER, action="Resolving a flag")
    flag = get_object_or_404(Flag, code=code.upper())
    form = FlagResolveForm(request.POST)
    if form.is_valid():
        from inventory.services import flag_resolve as resolve

        try:
            resolve(actor=request.user, flag=flag, resolution=form.cleaned_data["resolution"])
        except ValidationError as error:
            messages.error(request, f"{flag.code}: {' '.join(error.messages)}")
        else:
            messages.success(request, f"{flag.code} resolved.")
    else:
        messages.error(request, f"{flag.code}: say how the deviation was resolved.")
    return redirect(_same_site(request, request.POST.get("next")) or reverse("review"))


def _same_site(request, url: str | None) -> str | None:
    """``url`` if it is a page of this site (an open redirect would lend our name to any
    address), else None."""
    if url and url_has_allowed_host_and_scheme(url, allowed_hosts={request.get_host()},
                                               require_https=request.is_secure()):
        return url
    return None


# ---------------------------------------------------------------------------------------
# Plots (images embedded on the pages)
# ---------------------------------------------------------------------------------------


def _image(request, figure) -> HttpResponse:
    fmt = request.GET.get("format", "svg")
    if fmt not in plots.FORMATS:
        fmt = "svg"
    response = HttpResponse(plots.figure_bytes(figure, fmt), content_type=plots.FORMATS[fmt])
    response["Cache-Control"] = "private, max-age=300"
    return response


def _stored_image(request, code: str, digest: str, kind: str, draw) -> HttpResponse:
    """A plot of stored results: named by their SHA-256, so cached and revalidated by it.

    The results of an import never change, so the browser may keep the image (ETag,
    ``Cache-Control``) and the server keeps the rendered bytes in Django's cache.
    """
    fmt = request.GET.get("format", "svg")
    if fmt not in plots.FORMATS:
        fmt = "svg"
    etag = f'"{code}-{digest[:32]}-{kind}-{fmt}"'  # the title names the record
    if etag in request.headers.get("If-None-Match", ""):
        response = HttpResponse(status=304)
    else:
        key = f"plot:{code}:{digest}:{kind}:{fmt}"
        body = cache.get(key)
        if body is None:
            body = plots.figure_bytes(draw(), fmt)
            cache.set(key, body, PLOT_CACHE_SECONDS)
        response = HttpResponse(body, content_type=plots.FORMATS[fmt])
    response["ETag"] = etag
    response["Cache-Control"] = f"private, max-age={PLOT_CACHE_SECONDS}"
    return response


def _read_bytes(field_file) -> bytes:
    with field_file.open("rb") as handle:
        return handle.read()


def _raman_rerun(measurement):
    """Re-run the QC pipeline on the raw file: only for records stored before their results.

    ``manage.py store_qc_results`` stores the results of such records once.
    """
    content = _read_bytes(measurement.raw_file)
    settings = {"band_center_cm1": measurement.band_center_cm1,
                "band_window_cm1": measurement.band_window_cm1,
                "power_mW": measurement.power_mW, "integration_s": measurement.integration_s,
                "accumulations": measurement.accumulations}
    if getattr(measurement, "is_map", False):
        raman_map = read_map(content)
        result = qc_pipeline.analyse_qc_map(raman_map.shift_cm1, raman_map.intensity, **settings)
        return result.shift_cm1, result.mean_spectrum, result.mean_band, "mean of map"
    spectrum = read_spectrum(content, measurement.raw_filename)
    result = qc_pipeline.analyse_qc_spectrum(spectrum.x, spectrum.y, **settings)
    return result.shift_cm1, result.processed_intensity, result.band, "spectrum"


def _raman_figure(measurement, stored):
    """The processed (or mean) spectrum with its band fit, from the stored arrays."""
    band = plots.BandCurve(window_shift_cm1=stored["band_shift_cm1"],
                           fitted_curve=stored["band_fitted"],
                           position_cm1=measurement.band_position_cm1,
                           fwhm_cm1=measurement.band_fwhm_cm1)
    spread = None
    if "percentile_spectra" in stored:
        q, rows = stored["percentile_q"], stored["percentile_spectra"]
        spread = (f"{q[0]:g}–{q[-1]:g} percentile of the points", rows[0], rows[-1])
    what = "mean of map" if "percentile_spectra" in stored else "spectrum"
    return plots.raman_spectrum_figure(stored["shift_cm1"], stored["spectrum"], band,
                                       title=f"{measurement.code} ({what})",
                                       band_center_cm1=measurement.band_center_cm1,
                                       spread=spread)


def _raman_measurement(code: str):
    """A QC or reference measurement by code, without its per-point data (plots need none)."""
    for model in (QcMeasurement, ReferenceMeasurement):
        rows = model.objects.filter(code=code)
        if model is QcMeasurement:
            rows = rows.defer("point_values", "ef_inputs")
        found = rows.first()
        if found is not None:
            return found
    record = record_or_404(code)
    raise Http404(f"{record.code} has no Raman spectrum.")


def _stored_or_none(measurement):
    try:
        return measurement_get_stored_results(measurement)
    except ValueError:  # the archive changed since import: draw from the raw file instead
        return None


@login_required
def plot_raman(request, code: str):
    measurement = _raman_measurement(code)

    def draw():
        stored = _stored_or_none(measurement)
        if stored is not None:
            return _raman_figure(measurement, stored)
        shift, intensity, band, what = _raman_rerun(measurement)
        return plots.raman_spectrum_figure(shift, intensity, band,
                                           title=f"{measurement.code} ({what})",
                                           band_center_cm1=measurement.band_center_cm1)
    if measurement.results_sha256:
        return _stored_image(request, measurement.code, measurement.results_sha256, "raman", draw)
    return _image(request, draw())


@login_required
def plot_heatmap(request, code: str):
    measurement = _raman_measurement(code)
    if not isinstance(measurement, QcMeasurement) or not measurement.has_heatmap:
        raise Http404(f"{measurement.code} is not a QC map on a full grid.")

    def draw():
        stored = _stored_or_none(measurement)
        if stored is not None and "heatmap" in stored:
            rows, x_um, y_um = stored["heatmap"], stored["heatmap_x_um"], stored["heatmap_y_um"]
        else:
            image = measurement.point_values["image"]
            rows, x_um, y_um = image["rows"], image["x_um"], image["y_um"]
        return plots.rsd_heatmap_figure(rows, x_um=x_um, y_um=y_um,
                                        rsd_percent=measurement.rsd_percent,
                                        title=f"{measurement.code} band height")
    if measurement.results_sha256:
        return _stored_image(request, measurement.code, measurement.results_sha256, "heatmap", draw)
    return _image(request, draw())


@login_required
def plot_uvvis(request, code: str):
    """A colloid's UV-vis series (batch code) or one record (UV code), with the Mie fits."""
    record = record_or_404(code)
    if isinstance(record, NanoparticleBatch):
        records = list(UvVisRecord.objects.filter(batch=record).select_related("batch")
                       .order_by("measured_on", "id"))
    elif isinstance(record, UvVisRecord):
        records = [record]
    else:
        raise Http404(f"{record.code} has no UV-vis spectra.")
    if not records:
        raise Http404(f"{record.code} has no UV-vis spectra yet.")
    traces = [plots.UvVisTrace(f"day {r.age_days}", uvvis_record_get_curves(r)) for r in records]
    return _image(request, plots.uvvis_series_figure(traces, title=f"{record.code} UV-vis"))


@login_required
def plot_chronoamperogram(request, code: str):
    run = record_or_404(code)
    if not getattr(run, "chronoamperogram_sha256", ""):
        raise Http404(f"{run.code} has no chronoamperogram.")
    parsed = parse_chronoamperogram(decode_text(_read_bytes(run.chronoamperogram)),
                                    time_unit=run.time_unit or None,
                                    current_unit=run.current_unit or None)
    figure = plots.chronoamperogram_figure(parsed.time_s, parsed.current_A,
                                           charge_C=run.charge_C, start_s=run.charge_start_s,
                                           end_s=run.charge_end_s,
                                           title=f"{run.code} chronoamperogram")
    return _image(request, figure)


@xframe_options_sameorigin  # embedded in the pages as <object>, so its links work
@login_required
def plot_control_chart(request, product_kind: str, metric: str):
    if product_kind not in Substrate.Stage.values or metric not in CHART_METRICS:
        raise Http404("Unknown product kind or metric.")
    days = int_param(request, "days", CHART_DAYS, low=1, high=36500)
    series = qc_control_chart(product_kind=product_kind, metric=metric,
                              since=timezone.localdate() - timedelta(days=days))
    figure = plots.control_chart_figure(
        series, point_urls=[reverse("record", args=[code]) for code in series.codes])
    if request.GET.get("format", "svg") != "svg":
        return _image(request, figure)
    response = HttpResponse(plots.linked_svg(figure), content_type=plots.FORMATS["svg"])
    response["Cache-Control"] = "private, max-age=300"
    return response
