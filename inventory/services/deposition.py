"""A deposition run's numbers from its chronoamperogram, compared with the lab's tolerance.

The file is kept as uploaded (with its SHA-256 digest); the charge, metal volume, equivalent
thickness, film height and h/D come from ``inventory.physics`` (the reader and Faraday's law in a
close-packed template) and are stored on the run with the inputs that produced them.  A run
whose h/D strays from its target by more than the lab's tolerance gets an open
``deposition`` flag, as does every piece cut from it, so readiness blocks them.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction

from inventory.physics.chronoamperogram import Chronoamperogram, parse_chronoamperogram
from inventory.physics.electrodeposition import (
    DepositionAnalysis,
    analyse_deposition,
    charge_for_target_height_C,
    metal_properties,
)
from inventory.physics.errors import AnalysisInputError

from ..errors import refusal
from ..flags import flags_open
from ..models import DepositionRun, DepositionTolerance, Flag
from ..roles import ADMINISTRATOR, MAKER, require_role
from ._common import User, _check_upload, _save_changed, _save_setting
from .records import flag_raise, sha256_of

#: Used only when the lab has recorded no DepositionTolerance: a built-in default of this
#: project (not a published value), reported as such wherever it is applied.
DEFAULT_MAX_ABS_DEVIATION_HEIGHT_OVER_DIAMETER = 0.05

FLAG_CATEGORY = "deposition"
FILE_FIELD = "chronoamperogram"

# Analysis parameters that are also parameters of the services below: an error on one of
# them (and not on a file line) is keyed by that parameter, anything else by the file.
_PARAMETER_FIELDS = {
    "electrode_area_cm2", "metal", "electrons_per_atom", "current_efficiency", "start_s",
    "end_s", "cathodic_sign", "time_unit", "current_unit",
}


# --------------------------------------------------------------------------- tolerance


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


# --------------------------------------------------------------------------- attach


@dataclass(frozen=True)
class ChronoamperogramAttachment:
    """What attaching a chronoamperogram did.

    ``unchanged`` is True when the same file (same digest) was already attached: nothing
    was recomputed and no flag raised.  ``tolerance`` is None when there was nothing to
    compare (no target, or a flat film without h/D).
    """

    run: DepositionRun
    unchanged: bool
    analysis: DepositionAnalysis | None
    target_height_over_diameter: float | None
    deviation_height_over_diameter: float | None
    tolerance: ToleranceInForce | None
    flags: tuple[Flag, ...]
    notes: tuple[str, ...]


@transaction.atomic
def deposition_run_attach_chronoamperogram(
    *, actor: User | None, run: DepositionRun, filename: str, content: bytes,
    time_unit: str | None = None, current_unit: str | None = None,
    cathodic_sign: str = DepositionRun.CathodicSign.NEGATIVE, start_s: float | None = None,
    end_s: float | None = None,
) -> ChronoamperogramAttachment:
    """Keep the file, compute the run's numbers from it, and flag an off-target film.

    A run keeps the one file its numbers came from: a different file is refused, the same
    file again (same SHA-256) changes nothing and says so.  Bad input is refused with a
    ``ValidationError`` keyed by the parameter at fault or by ``chronoamperogram`` (with
    the file line), and nothing is saved.
    """
    require_role(actor, MAKER, action="Attaching a chronoamperogram")
    run = DepositionRun.objects.select_for_update(of=("self",)).select_related(
        "template__sphere_lot").get(pk=run.pk)
    digest = sha256_of(content)
    if run.chronoamperogram_sha256:
        if run.chronoamperogram_sha256 == digest:
            return ChronoamperogramAttachment(
                run=run, unchanged=True, analysis=None,
                target_height_over_diameter=run.target_height_over_diameter,
                deviation_height_over_diameter=_deviation(run), tolerance=None, flags=(),
                notes=((f"{run.code} already holds this file ({run.chronoamperogram_name}, "
                        f"sha256 {digest[:12]}…); nothing changed."),))
        raise refusal(FILE_FIELD, f"{run.code} already holds {run.chronoamperogram_name} "
                                  f"(sha256 {run.chronoamperogram_sha256[:12]}…); its numbers "
                                  "come from that file, so a different one is not accepted.",
                      "chronoamperogram_exists")

    prepared = _prepare(run, filename, content, time_unit=time_unit, current_unit=current_unit,
                        cathodic_sign=cathodic_sign, start_s=start_s, end_s=end_s)
    return _apply(run, prepared, actor=actor)


@dataclass(frozen=True)
class _Prepared:
    """A parsed and analysed upload, not yet stored."""

    filename: str
    content: bytes
    digest: str
    parsed: Chronoamperogram
    analysis: DepositionAnalysis


def _prepare(run: DepositionRun, filename: str, content: bytes, *, time_unit, current_unit,
             cathodic_sign, start_s, end_s) -> _Prepared:
    """Read and analyse ``content`` for ``run`` (saved or not); refuse bad input, save nothing.

    Runs before anything is written, so a refused file leaves no row and no stored file.
    """
    name = _clean_filename(filename)
    _check_upload(content, field=FILE_FIELD, filename=name)
    parsed, analysis = _parse_and_analyse(
        run, name, content, time_unit=time_unit, current_unit=current_unit,
        cathodic_sign=cathodic_sign, start_s=start_s, end_s=end_s)
    return _Prepared(name, content, sha256_of(content), parsed, analysis)


def _apply(run: DepositionRun, prepared: _Prepared, *, actor) -> ChronoamperogramAttachment:
    """Store a prepared upload on a saved run and flag it if off target."""
    try:
        _store(run, prepared, actor=actor)
        return _compare_and_flag(run, prepared.analysis, actor=actor)
    except Exception:
        # The transaction rolls the rows back; the stored file must go with them.
        if run.chronoamperogram:
            run.chronoamperogram.delete(save=False)
        raise


def _clean_filename(filename: str) -> str:
    name = os.path.basename((filename or "").replace("\\", "/")).strip()
    if not name:
        raise refusal(FILE_FIELD, "Give the file's name.", "required")
    return name


def _decode(content: bytes, filename: str) -> str:
    """Text of the upload: UTF-8 (with or without BOM), else Windows-1252 as many exports."""
    if b"\x00" in content:
        raise refusal(FILE_FIELD, f"{filename}: this is not a text export (it holds NUL "
                                  "bytes).", "bad_file")
    for encoding in ("utf-8-sig", "cp1252"):
        try:
            return content.decode(encoding)
        except UnicodeDecodeError:
            continue
    raise refusal(FILE_FIELD, f"{filename}: not readable as UTF-8 or Windows-1252 text.",
                  "bad_file")


def _analysis_refusal(error: AnalysisInputError, filename: str) -> ValidationError:
    """AnalysisInputError → ValidationError keyed by the parameter, or by the file + line."""
    if error.line is None and error.field == "sphere_diameter_nm":
        return refusal("template", f"The template's sphere lot: {error.message}", "bad_value")
    if error.line is None and error.field in _PARAMETER_FIELDS:
        return refusal(error.field, error.message, "bad_value")
    return refusal(FILE_FIELD, f"{filename}: {error}", "bad_file")


def _sphere_diameter_nm(run: DepositionRun) -> float | None:
    return None if run.template_id is None else run.template.sphere_lot.nominal_diameter_nm


def _parse_and_analyse(run: DepositionRun, filename: str, content: bytes, *,
                       time_unit, current_unit, cathodic_sign, start_s, end_s,
                       ) -> tuple[Chronoamperogram, DepositionAnalysis]:
    text = _decode(content, filename)
    try:
        parsed = parse_chronoamperogram(text, time_unit=time_unit, current_unit=current_unit)
        analysis = analyse_deposition(
            time_s=parsed.time_s, current_A=parsed.current_A,
            electrode_area_cm2=run.electrode_area_cm2, metal=run.metal,
            electrons_per_atom=run.electrons_per_atom,
            current_efficiency=run.current_efficiency,
            sphere_diameter_nm=_sphere_diameter_nm(run), start_s=start_s, end_s=end_s,
            cathodic_sign=cathodic_sign)
    except AnalysisInputError as error:
        raise _analysis_refusal(error, filename) from None
    return parsed, analysis


def _store(run: DepositionRun, prepared: _Prepared, *, actor) -> None:
    run.chronoamperogram.save(prepared.filename, ContentFile(prepared.content), save=False)
    run.chronoamperogram_sha256 = prepared.digest
    run.chronoamperogram_name = prepared.filename
    _set_figures(run, prepared.parsed, prepared.analysis)
    _save_changed(run, actor=actor)


def _set_figures(run: DepositionRun, parsed: Chronoamperogram,
                 analysis: DepositionAnalysis) -> None:
    run.charge_C = analysis.charge_C
    run.metal_volume_cm3 = analysis.metal_volume_cm3
    run.equivalent_thickness_nm = analysis.equivalent_thickness_nm
    run.film_height_nm = analysis.film_height_nm
    run.height_over_diameter = analysis.height_over_diameter
    run.sphere_diameter_nm = analysis.sphere_diameter_nm
    run.cathodic_sign = analysis.cathodic_sign
    run.charge_start_s = analysis.start_s
    run.charge_end_s = analysis.end_s
    run.time_unit = parsed.time_unit
    run.current_unit = parsed.current_unit
    run.stale_reason = ""


def deposition_run_recompute(*, actor: User | None, run: DepositionRun, why: str) -> None:
    """Work a run's figures out again from its kept file after an input was amended.

    Called in the amending transaction (``inventory.services.derived``), with the window,
    units and sign the figures came from.  The run's history says ``why``; if the new h/D
    is off target the usual flag is raised.  A file that cannot be read any more leaves the
    figures marked stale with the reason instead, which readiness reports.
    """
    run = DepositionRun.objects.select_for_update(of=("self",)).select_related(
        "template__sphere_lot").get(pk=run.pk)
    if not run.chronoamperogram_sha256:
        return
    try:
        with run.chronoamperogram.open("rb") as stored:
            content = stored.read()
        if sha256_of(content) != run.chronoamperogram_sha256:
            raise OSError("the stored file no longer matches its SHA-256 digest")
        parsed, analysis = _parse_and_analyse(
            run, run.chronoamperogram_name, content, time_unit=run.time_unit,
            current_unit=run.current_unit, cathodic_sign=run.cathodic_sign,
            start_s=run.charge_start_s, end_s=run.charge_end_s)
    except (OSError, ValueError, ValidationError) as error:
        run.stale_reason = f"{why}; the figures could not be worked out again ({error})."
        _save_changed(run, actor=actor, reason=f"figures stale: {why}")
        return
    before = run.height_over_diameter
    _set_figures(run, parsed, analysis)
    _save_changed(run, actor=actor, reason=f"figures recomputed: {why}")
    if run.height_over_diameter != before:
        _compare_and_flag(run, analysis, actor=actor)


def _deviation(run: DepositionRun) -> float | None:
    if run.height_over_diameter is None or run.target_height_over_diameter is None:
        return None
    return run.height_over_diameter - run.target_height_over_diameter


def _compare_and_flag(run: DepositionRun, analysis: DepositionAnalysis, *,
                      actor) -> ChronoamperogramAttachment:
    target = run.target_height_over_diameter
    deviation = _deviation(run)
    if deviation is None:
        why = ("a flat film has no h/D" if analysis.height_over_diameter is None
               else "the run has no target h/D")
        return ChronoamperogramAttachment(
            run=run, unchanged=False, analysis=analysis, target_height_over_diameter=target,
            deviation_height_over_diameter=None, tolerance=None, flags=(),
            notes=(f"Not compared with a target: {why}.",))
    tolerance = deposition_tolerance_in_force(run.metal)
    notes = [(f"Tolerance ±{tolerance.max_abs_deviation_height_over_diameter:g} on h/D, "
              f"from {tolerance.source}.")]
    flags: list[Flag] = []
    if abs(deviation) > tolerance.max_abs_deviation_height_over_diameter:
        sentence = (f"film height h/D = {run.height_over_diameter:.3f} is {deviation:+.3f} "
                    f"from the target {target:.3f}; the tolerance is "
                    f"±{tolerance.max_abs_deviation_height_over_diameter:g} "
                    f"({tolerance.source}).")
        flags.append(flag_raise(actor=actor, target=run, category=FLAG_CATEGORY,
                                message=f"Deposition {run.code}: {sentence}"))
        for piece in run.substrates.order_by("code"):
            flags.append(flag_raise(actor=actor, target=piece, category=FLAG_CATEGORY,
                                    message=f"Cut from {run.code}, whose {sentence}"))
    return ChronoamperogramAttachment(
        run=run, unchanged=False, analysis=analysis, target_height_over_diameter=target,
        deviation_height_over_diameter=deviation, tolerance=tolerance, flags=tuple(flags),
        notes=tuple(notes))


def _require_known_metal(metal: str, *, field: str = "metal") -> None:
    try:
        metal_properties(metal)
    except AnalysisInputError as error:
        raise refusal(field, error.message, "unknown_metal") from None


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
