"""The lab's settings page: QC limits, colloid limits and shelf-life rules.

Everyone signed in reads it; an administrator changes one setting at a time through its
service (the same one the API calls), with a reason.  A change judges what is measured after
it; each QC record keeps the limits, and the version, that judged it.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.db.models import Model
from django.http import Http404
from django.shortcuts import get_object_or_404, redirect, render
from django.urls import reverse

from bench.limits_forms import ColloidLimitForm, QcLimitForm, SettingForm, ShelfLifeForm
from bench.refusals import form_add_refusal
from inventory.models import ReagentKind, ShelfLifeRule, Substrate
from inventory.models.materials import RecordKind
from inventory.roles import ADMINISTRATOR, require_role
from inventory.selectors import record_get_history
from inventory.services import shelf_life_rule_set
from qc.limit_defaults import COLLOID_DEFAULTS, QC_DEFAULTS
from qc.models.colloid import ColloidLimitSet, ColloidMetal
from qc.models.raman import QcLimitSet, ReferenceAnalyte
from qc.selectors.limits import colloid_limits_overview, qc_limits_overview
from qc.services.colloid_limits import colloid_limit_set_set
from qc.services.raman_limits import qc_limit_set_define


@login_required
def limits(request):
    rules = {(rule.record_kind, rule.reagent_kind): rule
             for rule in ShelfLifeRule.objects.select_related("updated_by")}
    shelf_rows = [(kind, "", str(label), rules.pop((kind, ""), None))
                  for kind, label in RecordKind.choices]
    shelf_rows += [(kind, reagent, f"{RecordKind(kind).label}: "
                                   f"{ReagentKind(reagent).label.lower()}", rule)
                   for (kind, reagent), rule in sorted(rules.items())]
    return render(request, "qc/limits.html", {
        "qc_limits": qc_limits_overview(), "colloid_limits": colloid_limits_overview(),
        "shelf_rows": shelf_rows})


@dataclass(frozen=True)
class _Setting:
    """What an edit page needs: a title, the stored row, the form's start values, the save."""

    title: str
    anchor: str
    form_class: type[SettingForm]
    stored: Model | None
    initial: dict
    save: Callable[..., Model]


def _qc_setting(analyte_id: int, stage: str) -> _Setting:
    if stage not in Substrate.Stage.values:
        raise Http404("No such substrate stage.")
    analyte = get_object_or_404(ReferenceAnalyte, pk=analyte_id)
    stored = QcLimitSet.objects.filter(analyte=analyte, product_kind=stage).first()
    initial = QC_DEFAULTS[stage].as_values() if stored is None else {
        name: getattr(stored, name) for name in QcLimitForm.base_fields}

    def save(**values):
        return qc_limit_set_define(product_kind=stage, analyte=analyte, **values)
    return _Setting(f"QC limits: {Substrate.Stage(stage).label} tested with {analyte.name}",
                    f"qc-{analyte.pk}-{stage}", QcLimitForm, stored, initial, save)


def _colloid_setting(metal: str) -> _Setting:
    if metal not in ColloidMetal.values:
        raise Http404("No such metal.")
    stored = ColloidLimitSet.objects.filter(metal=metal).first()
    initial = COLLOID_DEFAULTS[metal].as_values() if stored is None else {
        name: getattr(stored, name) for name in ColloidLimitForm.base_fields}

    def save(**values):
        return colloid_limit_set_set(metal=metal, **values)
    return _Setting(f"Colloid limits: {ColloidMetal(metal).label.lower()}",
                    f"colloid-{metal}", ColloidLimitForm, stored, initial, save)


def _shelf_life_setting(record_kind: str, reagent_kind: str = "") -> _Setting:
    if record_kind not in RecordKind.values or (
            reagent_kind and reagent_kind not in ReagentKind.values):
        raise Http404("No such kind of record.")
    stored = ShelfLifeRule.objects.filter(record_kind=record_kind,
                                          reagent_kind=reagent_kind).first()
    initial = {} if stored is None else {
        name: getattr(stored, name) for name in ShelfLifeForm.base_fields}

    def save(**values):
        return shelf_life_rule_set(record_kind=record_kind, reagent_kind=reagent_kind,
                                   **values)
    label = RecordKind(record_kind).label + (
        f": {ReagentKind(reagent_kind).label.lower()}" if reagent_kind else "")
    return _Setting(f"Shelf life: {label}", f"shelf-{record_kind}-{reagent_kind}",
                    ShelfLifeForm, stored, initial, save)


def _edit(request, setting: _Setting):
    """Show or save one setting; an administrator's saved values are no longer defaults."""
    require_role(request.user, ADMINISTRATOR, action="Changing the lab's limits and rules")
    form = setting.form_class(request.POST or None, initial=setting.initial)
    if request.method == "POST" and form.is_valid():
        try:
            saved = setting.save(actor=request.user, is_example=False, **form.service_values())
        except ValidationError as error:
            form_add_refusal(form, error)
        else:
            messages.success(request, f"{setting.title}: saved as version {saved.version}. "
                                      "It judges what is measured from now on.")
            return redirect(f"{reverse('limits')}#{setting.anchor}")
    history = record_get_history(setting.stored) if setting.stored is not None else []
    return render(request, "qc/limit_edit.html", {
        "setting": setting, "form": form, "history": history,
        "is_default": setting.stored is None or setting.stored.is_example})


@login_required
def limit_edit_qc(request, analyte_id: int, stage: str):
    return _edit(request, _qc_setting(analyte_id, stage))


@login_required
def limit_edit_colloid(request, metal: str):
    return _edit(request, _colloid_setting(metal))


@login_required
def limit_edit_shelf_life(request, record_kind: str, reagent_kind: str = ""):
    return _edit(request, _shelf_life_setting(record_kind, reagent_kind))
