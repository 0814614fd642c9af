"""Figures derived from a record, brought up to date in the transaction that amends it.

``record_amend`` calls ``refresh_derived`` with the fields that changed.  Inventory's own
figures are recomputed here: a template's close-packed figures from its sphere lot and slide
area, and a deposition run's film height and h/D from its charge: integrated again from its
kept chronoamperogram, or the charge entered without a file (``deposition_run_recompute``,
which marks them stale with the reason if the file cannot be read).  Other apps add theirs
through ``settings.SERSLEDGER_AMEND_HOOKS`` (dotted paths of
``hook(*, actor, record, changed, why)``; qc marks a colloid's UV-vis figures stale when its
metal changes), so inventory never imports them.  A deposition run whose geometry was worked
out again (or marked stale) is passed to the hooks too, with its changed figures, so qc can
mark the enhancement factors it derived from that geometry stale.  Each recomputed record
gets a history row saying why, beside the amended record's own.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from django.conf import settings
from django.utils.module_loading import import_string

from inventory.physics.template_geometry import TYPICAL_SPHERE_DENSITY_G_CM3

from ..models import CodedRecord, DepositionRun, SphereLot, TemplateAssembly
from ._common import User, _save_changed
from .deposition import deposition_run_recompute
from .fabrication import _template_figures

# Inputs of a template's figures and of a run's film height, by the kind that holds them.
SPHERE_LOT_TEMPLATE_INPUTS = frozenset({"nominal_diameter_nm", "material", "solids_percent_w_v"})
SPHERE_LOT_RUN_INPUTS = frozenset({"nominal_diameter_nm"})
TEMPLATE_INPUTS = frozenset({"slide_area_cm2"})
RUN_INPUTS = frozenset({"electrode_area_cm2", "current_efficiency", "electrons_per_atom"})
# A run's figures that other apps derive theirs from; "stale_reason" says they are not current.
RUN_GEOMETRY = ("sphere_diameter_nm", "film_height_nm", "height_over_diameter", "stale_reason")


@lru_cache(maxsize=8)
def _import_hooks(paths: tuple[str, ...]) -> list:
    return [import_string(path) for path in paths]


def describe_change(record: CodedRecord, changed: dict[str, tuple[Any, Any]]) -> str:
    """``SPH-00001 amended: nominal_diameter_nm 500 → 600`` (the history's reason)."""
    parts = ", ".join(f"{name} {old} → {new}" for name, (old, new) in sorted(changed.items()))
    return f"{record.code} amended: {parts}"


def _recompute_template(template: TemplateAssembly, *, actor: User | None, why: str,
                        old_material: str | None) -> None:
    density = template.sphere_density_g_cm3
    if old_material is not None and density == TYPICAL_SPHERE_DENSITY_G_CM3.get(old_material):
        density = None  # it was the old material's typical value: take the new one's
    figures = _template_figures(template.sphere_lot, slide_area_cm2=template.slide_area_cm2,
                                sphere_density_g_cm3=density,
                                excess_factor=template.suspension_excess_factor or 1.0)
    for name, value in figures.items():
        setattr(template, name, value)
    _save_changed(template, actor=actor, reason=f"figures recomputed: {why}")


def refresh_derived(*, actor: User | None, record: CodedRecord,
                    changed: dict[str, tuple[Any, Any]]) -> None:
    """Recompute (or mark stale) every stored figure derived from the ``changed`` fields."""
    if not changed:
        return
    why = describe_change(record, changed)
    names = changed.keys()
    templates: list[TemplateAssembly] = []
    runs: list[DepositionRun] = []
    old_material = changed["material"][0] if "material" in changed else None
    if isinstance(record, SphereLot) and names & SPHERE_LOT_TEMPLATE_INPUTS:
        templates = list(record.templates.filter(voided_at__isnull=True).select_related(
            "sphere_lot"))
        if names & SPHERE_LOT_RUN_INPUTS:
            runs = list(DepositionRun.objects.filter(template__sphere_lot=record,
                                                     voided_at__isnull=True))
    elif isinstance(record, TemplateAssembly) and names & TEMPLATE_INPUTS:
        templates = [record]
    elif isinstance(record, DepositionRun) and names & RUN_INPUTS:
        runs = [record]
    for template in templates:
        _recompute_template(template, actor=actor, why=why, old_material=old_material)
    hooks = _import_hooks(tuple(getattr(settings, "SERSLEDGER_AMEND_HOOKS", ())))
    for run in runs:
        before = _run_geometry(run)
        deposition_run_recompute(actor=actor, run=run, why=why)
        after = _run_geometry(run)
        geometry_changed = {name: (before[name], after[name]) for name in before
                            if before[name] != after[name]}
        # The run's own figures are inputs of other apps' figures (qc derives an EF's
        # surface-area factor from D and h): tell them as if the run had been amended.
        for hook in hooks if geometry_changed else ():
            hook(actor=actor, record=run, changed=geometry_changed, why=why)
    for hook in hooks:
        hook(actor=actor, record=record, changed=dict(changed), why=why)


def _run_geometry(run: DepositionRun) -> dict[str, Any]:
    """A run's film geometry as stored now (fresh from the database)."""
    return DepositionRun.objects.filter(pk=run.pk).values(*RUN_GEOMETRY).get()
