"""Insight over the API (JSON): the report behind the page, one setting's trend, and the table.

Each view parses the filters with one serializer (a bad value is a 400 in the project's one
error shape, naming the parameter), calls the same service as the page and shapes data.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from django.urls import reverse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import exceptions, serializers
from rest_framework.response import Response
from rest_framework.views import APIView

from inventory.api.base import RoleMixin
from inventory.api.fields import LabDate
from inventory.models import Substrate

from .analysis import NotEnoughData
from .analysis.trend import lowess_trend
from .columns import NUMERIC_SETTINGS
from .exports import table_records
from .selectors import InsightFilters, insight_table, limits_for, numeric
from .services import DEFAULT_TARGET, insight_report


class InsightQuery(serializers.Serializer):
    made_from = LabDate(required=False, help_text="First day made (substrate), inclusive.")
    made_to = LabDate(required=False, help_text="Last day made, inclusive.")
    stage = serializers.ChoiceField(choices=Substrate.Stage.choices, required=False,
                                    help_text="Substrate stage.")
    analyte = serializers.CharField(required=False, max_length=120,
                                    help_text="QC analyte name, e.g. 'Benzenethiol'.")
    metal = serializers.CharField(required=False, max_length=4, help_text="Film metal, e.g. 'Au'.")
    target_percent = serializers.FloatField(required=False, min_value=50, max_value=99.9,
                                            help_text="Pass-rate target for the operating "
                                                      "window. Unit: %. Default 90.")

    def validate(self, data):
        if data.get("made_from") and data.get("made_to") and data["made_from"] > data["made_to"]:
            raise serializers.ValidationError({"made_to": "Must not be before made_from."})
        return data


FILTER_PARAMETERS = [OpenApiParameter(name, OpenApiTypes.DATE if name.startswith("made")
                                      else OpenApiTypes.STR, description=field.help_text)
                     for name, field in InsightQuery().fields.items()
                     if name != "target_percent"] + [
    OpenApiParameter("target_percent", OpenApiTypes.DOUBLE,
                     description=InsightQuery().fields["target_percent"].help_text)]


def _query(request) -> tuple[InsightFilters, float]:
    query = InsightQuery(data=request.query_params)
    query.is_valid(raise_exception=True)
    data = query.validated_data
    filters = InsightFilters(made_from=data.get("made_from"), made_to=data.get("made_to"),
                             stage=data.get("stage", ""), analyte=data.get("analyte", ""),
                             metal=data.get("metal", ""))
    target = data["target_percent"] / 100 if "target_percent" in data else DEFAULT_TARGET
    return filters, target


def finite(value):
    """NaN and infinities as null, recursively: strict JSON has no NaN."""
    if isinstance(value, dict):
        return {k: finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [finite(v) for v in value]
    if isinstance(value, float | np.floating):
        return float(value) if np.isfinite(value) else None
    if isinstance(value, np.integer):
        return int(value)
    return value


def report_data(report) -> dict:
    """The report as JSON-ready data (fractions 0–1 for rates)."""
    return finite({
        "filters": report.filters.as_query(), "target": report.target,
        "verdict": report.verdict(),
        "yield": {"steps": [s.as_dict() for s in report.steps],
                  "overall": report.overall.as_dict(),
                  "by_week": [{"week": k, **r.as_dict()} for k, r in report.by_week],
                  "by_sphere_lot": [{"sphere_lot": k, **r.as_dict()} for k, r in report.by_lot],
                  "failure_pareto": [vars(p) for p in report.failure_pareto],
                  "expiry_pareto": [vars(p) for p in report.expiry_pareto]},
        "operating_windows": [w.as_dict() for w in report.windows],
        "effects": {outcome: fit.as_dict() for outcome, fit in report.fits.items()},
        "groups": {k: [g.as_dict() for g in v] for k, v in report.groups.items()},
        "drift": [f.as_dict() for f in report.drift],
        "strongest_settings": report.strongest_effects(),
        "not_enough_data": report.refusals,
    })


class InsightSummaryView(RoleMixin, APIView):
    """Yield, operating windows, effects with intervals, group comparisons and drift:
    every figure of the insight page, for the substrates the filters select."""

    @extend_schema(parameters=FILTER_PARAMETERS, responses={200: OpenApiTypes.OBJECT})
    def get(self, request):
        filters, target = _query(request)
        return Response(report_data(insight_report(filters, target=target)))


class InsightTrendView(RoleMixin, APIView):
    """One numeric setting against log10 EF or RSD: the points (each with its substrate's
    code and page), the LOWESS trend with its 95 % band, the limit and the window."""

    @extend_schema(parameters=[*FILTER_PARAMETERS,
                               OpenApiParameter("outcome", enum=["log10_ef", "rsd_percent"],
                                                default="log10_ef")],
                   responses={200: OpenApiTypes.OBJECT})
    def get(self, request, setting: str):
        if setting not in NUMERIC_SETTINGS:
            raise exceptions.NotFound(f"No numeric setting '{setting}'; one of "
                                      f"{', '.join(NUMERIC_SETTINGS)}.")
        outcome = request.query_params.get("outcome", "log10_ef")
        if outcome not in ("log10_ef", "rsd_percent"):
            raise serializers.ValidationError({"outcome": "Must be log10_ef or rsd_percent."})
        filters, target = _query(request)
        report = insight_report(filters, target=target)
        table = report.data.table
        x, y = numeric(table, setting), numeric(table, outcome)
        known = np.isfinite(x) & np.isfinite(y)
        rows = table[known]
        body = {"setting": setting, "label": NUMERIC_SETTINGS[setting], "outcome": outcome,
                "limit_log10_ef": limits_for(table) if outcome == "log10_ef" else None,
                "points": [{"substrate_code": code, "x": float(xi), "y": float(yi),
                            "passed": None if pd.isna(p) else bool(p),
                            "url": reverse("record", args=[code])}
                           for code, xi, yi, p in zip(rows["substrate_code"], x[known],
                                                      y[known], rows["passed"], strict=True)],
                "window": next((w.as_dict() for w in report.windows if w.setting == setting),
                               None)}
        try:
            trend = lowess_trend(x, y)
        except NotEnoughData as refusal:
            body["trend"], body["not_enough_data"] = None, str(refusal)
        else:
            body["trend"] = {"grid": trend.grid.tolist(), "fit": trend.fit.tolist(),
                             "ci_low": trend.low.tolist(), "ci_high": trend.high.tolist(),
                             "n": trend.n}
        return Response(finite(body))


class InsightTableView(RoleMixin, APIView):
    """The joined table: one row per substrate, every setting and outcome, units in the
    column names (the same rows as the page's CSV and spreadsheet downloads)."""

    @extend_schema(parameters=FILTER_PARAMETERS, responses={200: OpenApiTypes.OBJECT})
    def get(self, request):
        filters, _ = _query(request)
        table = insight_table(filters).table
        return Response({"count": len(table), "columns": list(table.columns),
                         "rows": finite(table_records(table))})
