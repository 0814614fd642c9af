"""Process insight: yield, the settings that matter, the operating window, drift, and its flags.

``insight_report`` is the one read the page, the API and the export share; it runs the
statistics of ``insight.analysis`` on the joined table (``insight.selectors``).  The only
write is ``drift_flags_raise``: it raises a flag for review on each sphere lot that drifts,
through ``inventory.services.flag_raise``, and is called by a command or a reviewer's POST,
never by a page view.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from datetime import date

import numpy as np
import pandas as pd
from django.db import transaction

from inventory.flags import flags_open
from inventory.models import Flag, SphereLot, Status
from inventory.services import flag_raise

from .analysis import NotEnoughData
from .analysis.drift import DriftFinding, drift_by
from .analysis.groups import GroupSummary, compare_groups
from .analysis.mixed import EffectsFit, mixed_effects
from .analysis.proportions import PassRate, wilson_pass_rate
from .analysis.window import OperatingWindow, operating_window
from .caching import cached, data_digest
from .columns import CATEGORICAL_SETTINGS, NUMERIC_SETTINGS
from .selectors import InsightData, InsightFilters, expired_unused, insight_table

DEFAULT_TARGET = 0.90
DRIFT_FLAG_CATEGORY = "insight_drift"
STEPS = (("film", "Structured film"), ("linker", "Linker layer"),
         ("particles", "Particles bound"))
REGRESSION_OUTCOMES = {"log10_ef": "log10 EF", "rsd_percent": "map RSD (%)"}
#: QC failure sentences (qc.services.raman.qc_judge) → the limit each one breaches.
FAILURE_KINDS = (("Band at", "band position outside tolerance"),
                 ("S/N", "signal-to-noise below the minimum"),
                 ("Uniformity RSD", "uniformity: RSD above the maximum"),
                 ("Enhancement factor", "enhancement factor below the minimum"),
                 ("No enhancement factor", "no enhancement factor (no reference)"))


@dataclass(frozen=True)
class StepYield:
    """One step's yield. ``made``: pieces that reached the step; ``tested``: with a QC at it;
    ``passed_first_time``: whose first QC at the step passed; ``reworked``: first QC failed
    and a later one at the same step passed; ``scrapped``: rejected or disposed at this step;
    ``expired_unused``: past expiry at this step, still in quarantine or released."""

    step: str
    label: str
    made: int
    tested: int
    passed_first_time: int
    reworked: int
    scrapped: int
    expired_unused: int
    first_time_rate: PassRate | None

    def as_dict(self) -> dict:
        out = {k: v for k, v in self.__dict__.items() if k != "first_time_rate"}
        out["first_time_rate"] = self.first_time_rate.as_dict() if self.first_time_rate else None
        return out


@dataclass(frozen=True)
class ParetoItem:
    reason: str
    count: int
    cumulative_percent: float


@dataclass
class InsightReport:
    """Every figure of the insight page; ``refusals`` say which could not be computed and why."""

    filters: InsightFilters
    target: float
    data: InsightData
    digest: str  # of ``data``: the cache key of this report and of the page's plots
    steps: list[StepYield]
    overall: StepYield
    by_week: list[tuple[str, PassRate]]
    by_lot: list[tuple[str, PassRate]]
    failure_pareto: list[ParetoItem]
    expiry_pareto: list[ParetoItem]
    windows: list[OperatingWindow]
    fits: dict[str, EffectsFit]
    groups: dict[str, list[GroupSummary]]
    drift: list[DriftFinding]
    refusals: dict[str, str] = field(default_factory=dict)

    @property
    def window(self) -> OperatingWindow | None:
        return self.windows[0] if self.windows else None

    def strongest_effects(self, count: int = 4) -> list[str]:
        """Numeric settings in order of strength: the window setting first, then by the size
        of their effect on log10 EF over one standard deviation, when its interval excludes 0."""
        order = [w.setting for w in self.windows[:1]]
        fit = self.fits.get("log10_ef")
        if fit is not None:
            ranked = sorted((e for e in fit.effects if e.setting in NUMERIC_SETTINGS
                             and (e.ci_low > 0 or e.ci_high < 0)),
                            key=lambda e: -abs(e.typical_change))
            order += [e.setting for e in ranked]
        order += [w.setting for w in self.windows[1:]]
        return list(dict.fromkeys(order))[:count]

    def verdict(self) -> str:
        o = self.overall
        if not o.made:
            return "No substrates match these filters."
        rate = (f"{o.first_time_rate.rate:.0%} passed QC first time "
                f"(95 % CI {o.first_time_rate.low:.0%}–{o.first_time_rate.high:.0%})"
                if o.first_time_rate else "none has been QC-tested yet")
        text = f"Of {o.made} substrates made, {o.tested} were QC-tested: {rate}."
        if self.window is not None:
            label = NUMERIC_SETTINGS[self.window.setting]
            text += f" The strongest lever is {label}: {self.window.sentence(label)}."
        lots = sorted({f.key for f in self.drift if f.key.startswith(SphereLot.CODE_PREFIX)})
        months = sorted({f.key for f in self.drift} - set(lots))
        if lots:
            text += f" Sphere lot{'s' if len(lots) > 1 else ''} drifting: {', '.join(lots)}."
        if months:
            text += f" Months with run-rule signals: {', '.join(months)}."
        return text


def _rate(passed: pd.Series) -> PassRate | None:
    judged = passed.dropna().astype(bool)
    return wilson_pass_rate(int(judged.sum()), len(judged)) if len(judged) else None


def _step_yield(step: str, label: str, data: InsightData, expired: pd.Series) -> StepYield:
    table, qc = data.table, data.measurements
    reached = {"film": table["metal"].notna(), "linker": table["linker_made_on"].notna(),
               "particles": table["attached_on"].notna()}[step]
    here = qc[(qc["product_kind"] == step) & qc["substrate_id"].isin(table["substrate_id"])]
    passed = here["passed"].astype(bool)
    first = passed.groupby(here["substrate_id"]).first()
    later = here.groupby("substrate_id").cumcount() > 0
    passed_later = (passed & later).groupby(here["substrate_id"]).any()
    reworked = (~first) & passed_later.reindex(first.index, fill_value=False)
    at_step = table["stage"] == step
    scrapped = table["status"].isin([Status.REJECTED, Status.DISPOSED]) & at_step
    return StepYield(step, label, int(reached.sum()), len(first), int(first.sum()),
                     int(reworked.sum()), int(scrapped.sum()), int((expired & at_step).sum()),
                     _rate(first))


def _overall(data: InsightData, steps: list[StepYield], expired: pd.Series) -> StepYield:
    qc = data.measurements[data.measurements["substrate_id"].isin(data.table["substrate_id"])]
    firsts = qc.groupby(["substrate_id", "product_kind"])["passed"].first()
    every_first = firsts.groupby(level=0).all()
    table = data.table
    scrapped = table["status"].isin([Status.REJECTED, Status.DISPOSED])
    return StepYield("overall", "Overall", len(table), len(every_first),
                     int(every_first.sum()), sum(s.reworked for s in steps),
                     int(scrapped.sum()), int(expired.sum()), _rate(every_first))


def _pareto(counts: pd.Series) -> list[ParetoItem]:
    counts = counts[counts > 0].sort_values(ascending=False, kind="stable")
    total = counts.sum()
    cumulative = counts.cumsum() / total * 100 if total else counts
    return [ParetoItem(str(k), int(v), float(c))
            for (k, v), c in zip(counts.items(), cumulative, strict=True)]


def _failure_kind(sentence: str) -> str:
    return next((kind for prefix, kind in FAILURE_KINDS if sentence.startswith(prefix)),
                "other limit")


def _failure_pareto(data: InsightData) -> list[ParetoItem]:
    qc = data.measurements[data.measurements["substrate_id"].isin(data.table["substrate_id"])]
    reasons = [_failure_kind(r) for rs in qc.loc[~qc["passed"].astype(bool), "failure_reasons"]
               for r in (rs or [])]
    flags = data.flags[data.flags["category"] != "qc"]["category"].map(
        lambda c: f"{c} flag (deviation recorded)")
    return _pareto(pd.Series(reasons + list(flags), dtype=object).value_counts())


def _expiry_pareto(table: pd.DataFrame, expired: pd.Series) -> list[ParetoItem]:
    gone = table[expired]
    reasons = np.select(
        [gone["qc_count"] == 0, gone["passed"] == False, gone["open_flags"] > 0],  # noqa: E712
        ["never QC-tested", "failed QC, not reworked", "held by an open flag"],
        default="passed QC, never used")
    return _pareto(pd.Series(reasons, dtype=object).value_counts())


def _by(table: pd.DataFrame, key: pd.Series) -> list[tuple[str, PassRate]]:
    """First-time pass rate per week or lot (counted in one pass, not group by group)."""
    judged = table["passed_first_time"].notna()
    passed = table.loc[judged, "passed_first_time"].astype(bool)
    counts = passed.groupby(key[judged], sort=True).agg(["sum", "size"])
    return [(str(k), wilson_pass_rate(int(n_passed), int(n)))
            for k, n_passed, n in counts.itertuples()]


def _windows(table: pd.DataFrame, target: float, refusals: dict) -> list[OperatingWindow]:
    judged = table[table["passed"].notna()]
    windows = []
    for column in NUMERIC_SETTINGS:
        try:
            windows.append(operating_window(pd.to_numeric(judged[column], errors="coerce"),
                                            judged["passed"].astype(float), setting=column,
                                            target=target))
        except NotEnoughData as refusal:
            refusals[f"window:{column}"] = str(refusal)
    # Ties (settings computed from one another) keep the order of NUMERIC_SETTINGS.
    return sorted(windows, key=lambda w: -w.contrast)


def curvature_column(setting: str) -> str:
    return f"{setting}_centred_squared"


def _fits(table: pd.DataFrame, window: OperatingWindow | None,
          refusals: dict) -> dict[str, EffectsFit]:
    frame, settings = table, list(NUMERIC_SETTINGS)
    if window is not None:  # an optimum is curvature: give the model a term for it
        x = pd.to_numeric(table[window.setting], errors="coerce")
        frame = table.assign(**{curvature_column(window.setting): (x - x.mean()) ** 2})
        settings.append(curvature_column(window.setting))
    nested = "colloid_batch" if table["colloid_batch"].notna().mean() >= 0.5 else None
    fits = {}
    for outcome in REGRESSION_OUTCOMES:
        try:
            fits[outcome] = mixed_effects(frame, outcome=outcome, settings=settings,
                                          group="sphere_lot", nested=nested)
        except NotEnoughData as refusal:
            refusals[f"effects:{outcome}"] = str(refusal)
    return fits


def _groups(table: pd.DataFrame, refusals: dict) -> dict[str, list[GroupSummary]]:
    out = {}
    for column in CATEGORICAL_SETTINGS:
        try:
            out[column] = compare_groups(table[column], table["log10_ef"], table["passed"])
        except NotEnoughData as refusal:
            refusals[f"groups:{column}"] = str(refusal)
    return out


def _drift(table: pd.DataFrame, fits: dict[str, EffectsFit]) -> list[DriftFinding]:
    """Run rules on log10 EF and RSD per sphere lot (after the settings' effects) and per
    month (after the settings' and the lots' effects, so one bad lot is not a bad month)."""
    frame = table.assign(month=pd.to_datetime(table["made_on"]).dt.strftime("%Y-%m"))
    found = []
    for metric in REGRESSION_OUTCOMES:
        fit = fits.get(metric)
        series = {"sphere_lot": fit.adjusted if fit else frame[metric],
                  "month": fit.residuals if fit else frame[metric]}
        for key, values in series.items():
            column = f"{metric}_for_{key}"
            frame[column] = values.reindex(frame.index)
            found += [replace(f, metric=metric) for f in drift_by(frame, key=key, metric=column)]
    return found


def insight_report(filters: InsightFilters | None = None, *, target: float = DEFAULT_TARGET,
                   today: date | None = None) -> InsightReport:
    """Every figure of the insight page for the substrates the filters select.

    The table is read each time; the statistics are computed once per distinct table (the
    cache key is its digest, so a changed record means a new report, never a stale one).
    """
    if not 0 < target < 1:
        raise ValueError("target must be a fraction between 0 and 1")
    filters = filters or InsightFilters()
    data = insight_table(filters, today=today)
    digest = data_digest(data)
    # Kept without its table: the caller has just read the same data (the digest says so),
    # and pickling 3 MB of frames in and out of the cache cost more than the lookup saved.
    figures = cached("report", digest, (filters, target),
                     lambda: replace(_report(data, filters, target, digest), data=None))
    return replace(figures, data=data)


def _report(data: InsightData, filters: InsightFilters, target: float,
            digest: str) -> InsightReport:
    table = data.table
    expired = expired_unused(table, data.today)
    steps = [_step_yield(step, label, data, expired) for step, label in STEPS]
    refusals: dict[str, str] = {}
    windows = _windows(table, target, refusals)
    fits = _fits(table, windows[0] if windows else None, refusals)
    weeks = pd.to_datetime(table["made_on"]).dt.strftime("%G-W%V")
    return InsightReport(
        filters=filters, target=target, data=data, digest=digest, steps=steps,
        overall=_overall(data, steps, expired), by_week=_by(table, weeks),
        by_lot=_by(table, table["sphere_lot"]), failure_pareto=_failure_pareto(data),
        expiry_pareto=_expiry_pareto(table, expired), windows=windows, fits=fits,
        groups=_groups(table, refusals), drift=_drift(table, fits), refusals=refusals)


@transaction.atomic
def drift_flags_raise(*, actor, filters: InsightFilters | None = None,
                      report: InsightReport | None = None) -> list[Flag]:
    """Raise a flag for review on each drifting sphere lot that has no open drift flag yet.

    The message carries the evidence: the metric, the run rules broken, the lot's mean
    against the centre line and control limits, and the substrates that completed each rule.
    """
    report = report or insight_report(filters)
    findings = [f for f in report.drift if f.key.startswith(SphereLot.CODE_PREFIX)]
    lots = {lot.code: lot for lot in SphereLot.objects.filter(code__in={f.key for f in findings})}
    already = set(flags_open(target_codes=lots, category=DRIFT_FLAG_CATEGORY)
                  .values_list("target_code", flat=True))
    raised = []
    for code in sorted(lots.keys() - already):
        evidence = [f for f in findings if f.key == code]
        lines = [f"{f.metric} (after the settings' effects): {f.signals} run-rule signals "
                 f"({', '.join(f.rules)}); lot mean {f.mean:.3g} against centre {f.centre:.3g}, "
                 f"limits {f.lower_limit:.3g}–{f.upper_limit:.3g} set by the other lots; "
                 f"first: {'; '.join(f.evidence[:3])}" for f in evidence]
        raised.append(flag_raise(actor=actor, target=lots[code], category=DRIFT_FLAG_CATEGORY,
                                 message=f"Substrates from {code} drift: " + " | ".join(lines)))
    return raised
