"""The insight page, its exports, and the reviewer's step that raises drift flags.

Views parse the filters, call ``insight.services.insight_report`` (one read) or
``drift_flags_raise`` (one write, POST only) and render.  Plots are PNG with an HTML image
map, inlined in the page, so every point links to its substrate without a second request.
"""

from __future__ import annotations

import base64
import html
from urllib.parse import quote

import numpy as np
import pandas as pd
from django import forms
from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied, ValidationError
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils.safestring import mark_safe
from django.views.decorators.http import require_POST

from inventory.models import Substrate

from . import plots
from .analysis import NotEnoughData
from .analysis.trend import lowess_trend
from .caching import cached
from .columns import CATEGORICAL_SETTINGS, NUMERIC_SETTINGS, OUTCOMES
from .exports import table_csv, table_xlsx
from .selectors import InsightFilters, insight_table, limits_for, numeric
from .services import (
    DEFAULT_TARGET,
    REGRESSION_OUTCOMES,
    curvature_column,
    drift_flags_raise,
    insight_report,
)

PLOTTED_EFFECTS = 3


class DateInput(forms.DateInput):
    input_type = "date"

    def __init__(self, attrs=None):
        super().__init__(attrs, format="%Y-%m-%d")


class InsightFilterForm(forms.Form):
    made_from = forms.DateField(label="Made from", required=False, widget=DateInput())
    made_to = forms.DateField(label="Made to", required=False, widget=DateInput())
    stage = forms.ChoiceField(label="Stage", required=False,
                              choices=[("", "Any stage"), *Substrate.Stage.choices])
    analyte = forms.CharField(label="QC analyte", required=False, max_length=120)
    metal = forms.CharField(label="Film metal", required=False, max_length=4)
    target_percent = forms.FloatField(label="Pass-rate target (%)", required=False,
                                      min_value=50, max_value=99.9)

    def clean(self):
        data = super().clean()
        if data.get("made_from") and data.get("made_to") and data["made_from"] > data["made_to"]:
            self.add_error("made_to", "Must not be before 'Made from'.")
        return data

    def filters(self) -> InsightFilters:
        data = self.cleaned_data
        return InsightFilters(made_from=data.get("made_from"), made_to=data.get("made_to"),
                              stage=data.get("stage") or "",
                              analyte=(data.get("analyte") or "").strip(),
                              metal=(data.get("metal") or "").strip())

    def target(self) -> float:
        percent = self.cleaned_data.get("target_percent")
        return DEFAULT_TARGET if percent is None else percent / 100


def _parsed(request) -> InsightFilterForm:
    form = InsightFilterForm(request.GET or None)
    if request.GET:
        form.is_valid()
    else:
        form.cleaned_data = {}
    return form


def _substrate_urls(codes) -> list[str]:
    """Each substrate's record URL from one ``reverse`` (thousands of calls cost a second)."""
    marker = "insight-code-marker"
    head, tail = reverse("record", args=[marker]).rsplit(marker, 1)
    return [f"{head}{quote(code, safe='')}{tail}" for code in codes]


def setting_plot(report, setting: str, outcome: str = "log10_ef", limit=None) -> dict:
    """One scatter with its trend, the limit and (for the window setting) the window."""
    table = report.data.table
    x, y = numeric(table, setting), numeric(table, outcome)
    try:
        trend = lowess_trend(x, y)
    except NotEnoughData as refusal:
        return {"setting": setting, "refusal": str(refusal)}
    window = report.window if report.window and report.window.setting == setting else None
    passed = [None if pd.isna(p) else bool(p) for p in table["passed"]]
    figure, ax = plots.setting_figure(
        x, y, passed, xlabel=NUMERIC_SETTINGS[setting],
        ylabel=OUTCOMES[outcome], trend=trend, limit=limit, window=window)
    png, pixels = plots.png_with_links(figure, ax, x, y)
    return {"setting": setting, "label": NUMERIC_SETTINGS[setting],
            "areas": _image_map_areas(table["substrate_code"].tolist(), x, y, pixels),
            "png": base64.b64encode(png).decode(), "n": trend.n,
            "width": int(figure.bbox.width), "height": int(figure.bbox.height)}


def _image_map_areas(codes, x, y, pixels) -> str:
    """One ``<area>`` per drawn point, linking to its substrate (built here rather than in a
    template loop: 5,000 areas cost a template about 0.2 s).  Every value is escaped."""
    areas = []
    for code, url, xi, yi, (px, py) in zip(codes, _substrate_urls(codes), x, y,
                                           pixels.tolist(), strict=True):
        if px < 0 or not (np.isfinite(xi) and np.isfinite(yi)):
            continue
        title = html.escape(f"{code}: {yi:.3g} at {xi:.3g}")
        areas.append(f'<area shape="circle" coords="{px},{py},{plots.POINT_RADIUS_PX}" '
                     f'href="{html.escape(url)}" title="{title}" alt="{title}">')
    return mark_safe("".join(areas))  # noqa: S308  (every value escaped)


def lot_plot(report, limit=None) -> dict | None:
    """Sphere lots compared (mean log10 EF with its interval): where a bad lot shows."""
    groups = report.groups.get("sphere_lot")
    if not groups:
        return None
    figure = plots.groups_figure(groups, ylabel=OUTCOMES["log10_ef"], limit=limit,
                                 title="log10 EF by sphere lot")
    png, _ = plots.png_with_links(figure)
    return {"png": base64.b64encode(png).decode(), "width": int(figure.bbox.width),
            "height": int(figure.bbox.height)}


def _effect_rows(report) -> list[dict]:
    labels = {**NUMERIC_SETTINGS}
    if report.window:
        labels[curvature_column(report.window.setting)] = (
            f"curvature in {NUMERIC_SETTINGS[report.window.setting]} (per unit²)")
    return [{"outcome": outcome, "label": REGRESSION_OUTCOMES[outcome], "fit": fit,
             "rows": [{"label": labels.get(e.setting, e.setting), **e.as_dict(),
                       "clear": e.ci_low > 0 or e.ci_high < 0} for e in fit.effects]}
            for outcome, fit in report.fits.items()]


def _figures(report, limit) -> dict:
    """The page's plots (PNG and image maps): drawn once per report and limit."""
    return {"plots": [setting_plot(report, s, limit=limit)
                      for s in report.strongest_effects(PLOTTED_EFFECTS)],
            "lot_plot": lot_plot(report, limit)}


@login_required
def insight_page(request):
    form = _parsed(request)
    if request.GET and not form.is_valid():
        return render(request, "insight/insight.html", {"form": form}, status=400)
    report = insight_report(form.filters(), target=form.target())
    limit = limits_for(report.data.table)
    figures = cached("page-plots", report.digest, (report.filters, report.target, limit),
                     lambda: _figures(report, limit))
    query = request.GET.urlencode()
    return render(request, "insight/insight.html", {
        "form": form, "report": report, "limit": limit, **figures,
        "effects": _effect_rows(report),
        "groups": [(CATEGORICAL_SETTINGS[k], v) for k, v in report.groups.items()],
        "window_label": NUMERIC_SETTINGS[report.window.setting] if report.window else "",
        "refusals": report.refusals, "query": query,
    })


def _export(request, render_table, content_type: str, extension: str):
    form = _parsed(request)
    if request.GET and not form.is_valid():
        return HttpResponse("; ".join(f"{field}: {' '.join(errors)}"
                                      for field, errors in form.errors.items()),
                            status=400, content_type="text/plain; charset=utf-8")
    body = render_table(insight_table(form.filters()).table)
    response = HttpResponse(body, content_type=content_type)
    response["Content-Disposition"] = f'attachment; filename="sersledger-insight.{extension}"'
    return response


@login_required
def export_csv(request):
    return _export(request, table_csv, "text/csv; charset=utf-8", "csv")


@login_required
def export_xlsx(request):
    return _export(request, table_xlsx,
                   "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", "xlsx")


@login_required
@require_POST
def raise_drift_flags(request):
    """A person asks for the drift check to raise its flags (never done on a page read)."""
    try:
        raised = drift_flags_raise(actor=request.user)
    except PermissionDenied as error:
        messages.error(request, str(error))
    except ValidationError as error:
        messages.error(request, " ".join(error.messages))
    else:
        messages.success(request, f"Raised {len(raised)} drift flag(s) for review: "
                                  + (", ".join(f.code for f in raised) or "none new") + ".")
    return redirect(reverse("insight"))

