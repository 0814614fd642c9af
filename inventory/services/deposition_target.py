"""A deposition run's target and the lab's tolerance on h/D: the setting, the flag, the reads.

The tolerance (``DepositionTolerance``, per metal or for every metal, else a built-in default)
decides when a run whose figures ``inventory.services.deposition`` has just worked out is
flagged (``_compare_and_flag``); the reads put the run's target charge beside its charge for
the pages and the API.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace

from django.db import transaction

from inventory.physics.electrodeposition import (
    DepositionAnalysis,
    charge_for_target_height_C,
    metal_properties,
)
from inventory.physics.errors import AnalysisInputError

from ..errors import refusal
from ..flags import flags_open
from ..models import DepositionRun, DepositionTolerance, Flag, Substrate
from ..roles import ADMINISTRATOR, require_role
from ._common import CheckingMany, User, _read_once, _save_setting
from .creation import NewRecord, new_record_save
from .records import flag_check

#: Used only when the lab has recorded no DepositionTolerance: a built-in default of this
#: project (not a published value), reported as such wherever it is applied.
DEFAULT_MAX_ABS_DEVIATION_HEIGHT_OVER_DIAMETER = 0.05

FLAG_CATEGORY = "deposition"


@dataclass(frozen=True)
class ToleranceInForce:
    """The tolerance applied to a run and where it came from."""

    max_abs_deviation_height_over_diameter: float
    source: str
    is_default: bool
    is_example: bool


def deposition_tolerance_in_force(metal: str) -> ToleranceInForce:
    """The lab's tolerance for ``metal`` (else its general one, else the built-in default)."""
    rows = {row.metal: row for row in DepositionTolerance.objects.filter(metal__in=[metal, ""])}
    row = rows.get(metal) or rows.get("")
    if row is None:
        return ToleranceInForce(DEFAULT_MAX_ABS_DEVIATION_HEIGHT_OVER_DIAMETER,
                                "built-in default: the lab has recorded no deposition "
                                "tolerance", is_default=True, is_example=False)
    scope = f"for {row.metal}" if row.metal else "for every metal"
    example = " (example value)" if row.is_example else ""
    return ToleranceInForce(row.max_abs_deviation_height_over_diameter,
                            f"the lab's deposition tolerance {scope}{example}",
                            is_default=False, is_example=row.is_example)


@transaction.atomic
def deposition_tolerance_set(
    *, actor: User | None, max_abs_deviation_height_over_diameter: float, metal: str = "",
    is_example: bool = False, rationale: str = "",
) -> DepositionTolerance:
    """Create or change the tolerance on |h/D − target| for one metal (blank: every metal).

    Applies to chronoamperograms attached from now on; flags already raised stay until
    someone resolves them.
    """
    require_role(actor, ADMINISTRATOR, action="Setting a deposition tolerance")
    if metal:
        _require_known_metal(metal)
    return _save_setting(
        DepositionTolerance, actor=actor, scope={"metal": metal}, reason=rationale,
        values={"max_abs_deviation_height_over_diameter": max_abs_deviation_height_over_diameter,
                "is_example": is_example, "rationale": rationale})


def _require_known_metal(metal: str, *, field: str = "metal") -> None:
    try:
        metal_properties(metal)
    except AnalysisInputError as error:
        raise refusal(field, error.message, "unknown_metal") from None



def _sphere_diameter_nm(run: DepositionRun) -> float | None:
    return None if run.template_id is None else run.template.sphere_lot.nominal_diameter_nm


def _deviation(run: DepositionRun) -> float | None:
    if run.height_over_diameter is None or run.target_height_over_diameter is None:
        return None
    return run.height_over_diameter - run.target_height_over_diameter


# --------------------------------------------------------------------------- flag


@dataclass(frozen=True)
class ChronoamperogramAttachment:
    """What attaching a chronoamperogram (or entering a charge) did.

    ``unchanged`` is True when the same file (same digest), or the same entered charge, was
    already there: nothing was recomputed and no flag raised.  ``tolerance`` is None when
    there was nothing to compare (no target, or a flat film without h/D).
    """

    run: DepositionRun
    unchanged: bool
    analysis: DepositionAnalysis | None
    target_height_over_diameter: float | None
    deviation_height_over_diameter: float | None
    tolerance: ToleranceInForce | None
    flags: tuple[Flag, ...]
    notes: tuple[str, ...]


def _compare_and_flag(run: DepositionRun, analysis: DepositionAnalysis, *,
                      actor) -> ChronoamperogramAttachment:
    """Compare a saved run's new figures with its target; raise the flags if off target."""
    result, flags = _compare(run, analysis, pieces=run.substrates.all(), actor=actor)
    return replace(result, flags=tuple(new_record_save(flag, actor=actor) for flag in flags))


def _compare(run: DepositionRun, analysis: DepositionAnalysis, *, pieces: Iterable[Substrate],
             actor, many: CheckingMany | None = None,
             ) -> tuple[ChronoamperogramAttachment, list[NewRecord]]:
    """The check part of :func:`_compare_and_flag`: the comparison and the unsaved flags of
    an off-target film (the run's, then each of its ``pieces`` in code order); no write."""
    target = run.target_height_over_diameter
    deviation = _deviation(run)
    if deviation is None:
        why = ("a flat film has no h/D" if analysis.height_over_diameter is None
               else "the run has no target h/D")
        return ChronoamperogramAttachment(
            run=run, unchanged=False, analysis=analysis, target_height_over_diameter=target,
            deviation_height_over_diameter=None, tolerance=None, flags=(),
            notes=(f"Not compared with a target: {why}.",)), []
    tolerance = _read_once(many, ("deposition tolerance", run.metal),
                           lambda: deposition_tolerance_in_force(run.metal))
    notes = [(f"Tolerance ±{tolerance.max_abs_deviation_height_over_diameter:g} on h/D, "
              f"from {tolerance.source}.")]
    flags: list[NewRecord] = []
    if abs(deviation) > tolerance.max_abs_deviation_height_over_diameter:
        sentence = (f"film height h/D = {run.height_over_diameter:.3f} is {deviation:+.3f} "
                    f"from the target {target:.3f}; the tolerance is "
                    f"±{tolerance.max_abs_deviation_height_over_diameter:g} "
                    f"({tolerance.source}).")
        flags.append(flag_check(actor=actor, target=run, category=FLAG_CATEGORY,
                                message=f"Deposition {run.code}: {sentence}", many=many))
        for piece in sorted(pieces, key=lambda piece: piece.code):
            flags.append(flag_check(actor=actor, target=piece, category=FLAG_CATEGORY,
                                    message=f"Cut from {run.code}, whose {sentence}",
                                    many=many))
    return ChronoamperogramAttachment(
        run=run, unchanged=False, analysis=analysis, target_height_over_diameter=target,
        deviation_height_over_diameter=deviation, tolerance=tolerance, flags=(),
        notes=tuple(notes)), flags


# --------------------------------------------------------------------------- reads


@dataclass(frozen=True)
class DepositionTargetCheck:
    """Target against measurement for a page: "target needs X C; measured Y C"."""

    run_code: str
    target_height_over_diameter: float | None
    target_charge_C: float | None
    charge_C: float | None
    height_over_diameter: float | None
    deviation_height_over_diameter: float | None
    tolerance: ToleranceInForce | None
    within_tolerance: bool | None
    open_flag_codes: tuple[str, ...]


def deposition_run_target_charge_C(run: DepositionRun) -> float | None:
    """Charge, C, that gives the run's target h/D; None for a flat film or no target."""
    diameter = _sphere_diameter_nm(run)
    if diameter is None or run.target_height_over_diameter is None:
        return None
    return charge_for_target_height_C(
        target_height_over_diameter=run.target_height_over_diameter,
        sphere_diameter_nm=diameter, electrode_area_cm2=run.electrode_area_cm2,
        metal=run.metal, electrons_per_atom=run.electrons_per_atom,
        current_efficiency=run.current_efficiency)


def deposition_run_check_target(run: DepositionRun) -> DepositionTargetCheck:
    """The run's target charge beside its measured charge, deviation and tolerance in force.

    The tolerance is the one in force now, so the answer follows the lab's later edits;
    flags raised at upload stay as they were.
    """
    deviation = _deviation(run)
    tolerance = None if deviation is None else deposition_tolerance_in_force(run.metal)
    within = None if tolerance is None else (
        abs(deviation) <= tolerance.max_abs_deviation_height_over_diameter)
    open_flags = flags_open(target_codes=[run.code], category=FLAG_CATEGORY).order_by("code")
    return DepositionTargetCheck(
        run_code=run.code, target_height_over_diameter=run.target_height_over_diameter,
        target_charge_C=deposition_run_target_charge_C(run), charge_C=run.charge_C,
        height_over_diameter=run.height_over_diameter,
        deviation_height_over_diameter=deviation, tolerance=tolerance, within_tolerance=within,
        open_flag_codes=tuple(open_flags.values_list("code", flat=True)))
