"""A deposition run's numbers from its charge, compared with the lab's tolerance.

The charge comes from one of two places, kept in ``charge_source``: the chronoamperogram
(kept as uploaded, with its SHA-256 digest, and integrated by ``inventory.physics``) or the
figure the potentiostat reported, entered without a file.  Either way the metal volume,
equivalent thickness, film height and h/D come from the charge by the same physics
(``figures_from_charge``: Faraday's law in a close-packed template) and are stored on the run
with the inputs that produced them.  A run whose h/D strays from its target by more than the
lab's tolerance gets an open ``deposition`` flag, as does every piece cut from it, so
readiness blocks them.  The tolerance and the target reads are in ``deposition_target``.
"""

from __future__ import annotations

import copy
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass, replace

from django.core.exceptions import ValidationError
from django.core.files.base import ContentFile
from django.db import transaction

from inventory.physics.chronoamperogram import Chronoamperogram, parse_chronoamperogram
from inventory.physics.electrodeposition import (
    DepositionAnalysis,
    analyse_deposition,
    figures_from_charge,
)
from inventory.physics.errors import AnalysisInputError

from ..errors import refusal
from ..models import DepositionRun, Substrate
from ..roles import MAKER, require_role
from ._common import CheckingMany, User, _prepare_changed, _save_changed
from .creation import NewRecord
from .deposition_target import (
    DEFAULT_MAX_ABS_DEVIATION_HEIGHT_OVER_DIAMETER,
    FLAG_CATEGORY,
    ChronoamperogramAttachment,
    DepositionTargetCheck,
    ToleranceInForce,
    _compare,
    _compare_and_flag,
    _deviation,
    _sphere_diameter_nm,
    deposition_run_check_target,
    deposition_run_target_charge_C,
    deposition_tolerance_in_force,
    deposition_tolerance_set,
)
from .lifecycle import check_not_voided
from .records import sha256_of
from .uploads import check_upload

__all__ = [
    "DEFAULT_MAX_ABS_DEVIATION_HEIGHT_OVER_DIAMETER", "FLAG_CATEGORY",
    "ChronoamperogramAttachment", "DepositionTargetCheck", "ToleranceInForce",
    "deposition_run_attach_chronoamperogram", "deposition_run_check_target",
    "deposition_run_enter_charge", "deposition_run_recompute",
    "deposition_run_target_charge_C", "deposition_tolerance_in_force",
    "deposition_tolerance_set",
]

FILE_FIELD = "chronoamperogram"
ENTERED = DepositionRun.ChargeSource.ENTERED
FROM_FILE = DepositionRun.ChargeSource.CHRONOAMPEROGRAM

# Analysis parameters that are also parameters of the services below: an error on one of
# them (and not on a file line) is keyed by that parameter, anything else by the file.
_PARAMETER_FIELDS = {
    "electrode_area_cm2", "metal", "electrons_per_atom", "current_efficiency", "start_s",
    "end_s", "cathodic_sign", "time_unit", "current_unit",
}


# --------------------------------------------------------------------------- attach


@transaction.atomic
def deposition_run_attach_chronoamperogram(
    *, actor: User | None, run: DepositionRun, filename: str, content: bytes,
    time_unit: str | None = None, current_unit: str | None = None,
    cathodic_sign: str = DepositionRun.CathodicSign.NEGATIVE, start_s: float | None = None,
    end_s: float | None = None,
) -> ChronoamperogramAttachment:
    """Keep the file, compute the run's numbers from it, and flag an off-target film.

    A run keeps the one file its numbers came from: a different file is refused, the same
    file again (same SHA-256) changes nothing and says so.  A file attached to a run whose
    charge was entered replaces that charge with its own integral; the history row and the
    notes give both charges, so a disagreement is never silent.  Bad input is refused with a
    ``ValidationError`` keyed by the parameter at fault or by ``chronoamperogram`` (with
    the file line), and nothing is saved.
    """
    require_role(actor, MAKER, action="Attaching a chronoamperogram")
    run = DepositionRun.objects.select_for_update(of=("self",)).select_related(
        "template__sphere_lot").get(pk=run.pk)
    check_not_voided(run)
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
    return _apply(run, prepared, actor=actor, replaces=_replacing_entered(run, prepared))


def _replacing_entered(run: DepositionRun, prepared: _Prepared) -> str:
    """The sentence saying a file's charge replaces an entered one ("" if none was)."""
    if run.charge_source != ENTERED:
        return ""
    entered, integrated = run.charge_C, prepared.analysis.charge_C
    return (f"{prepared.filename} replaces the entered charge {entered:.6g} C with its "
            f"integral {integrated:.6g} C ({(integrated - entered) / entered:+.1%}).")


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
    check_upload(content, field=FILE_FIELD, filename=name)
    parsed, analysis = _parse_and_analyse(
        run, name, content, time_unit=time_unit, current_unit=current_unit,
        cathodic_sign=cathodic_sign, start_s=start_s, end_s=end_s)
    return _Prepared(name, content, sha256_of(content), parsed, analysis)


def _apply(run: DepositionRun, prepared: _Prepared, *, actor,
           replaces: str = "") -> ChronoamperogramAttachment:
    """Store a prepared upload on a saved run and flag it if off target."""
    try:
        _store(run, prepared, actor=actor, reason=replaces)
        result = _compare_and_flag(run, prepared.analysis, actor=actor)
        return replace(result, notes=(replaces, *result.notes)) if replaces else result
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


def _store(run: DepositionRun, prepared: _Prepared, *, actor, reason: str = "") -> None:
    run.chronoamperogram.save(prepared.filename, ContentFile(prepared.content), save=False)
    run.chronoamperogram_sha256 = prepared.digest
    run.chronoamperogram_name = prepared.filename
    _set_figures(run, prepared.analysis, parsed=prepared.parsed)
    _save_changed(run, actor=actor, reason=reason)


def _set_figures(run: DepositionRun, analysis: DepositionAnalysis, *,
                 parsed: Chronoamperogram | None) -> None:
    """Store the figures of ``analysis``; ``parsed`` is the file they came from (None: the
    charge was entered, so there is no window, sign or unit)."""
    run.charge_C = analysis.charge_C
    run.charge_source = ENTERED if parsed is None else FROM_FILE
    run.metal_volume_cm3 = analysis.metal_volume_cm3
    run.equivalent_thickness_nm = analysis.equivalent_thickness_nm
    run.film_height_nm = analysis.film_height_nm
    run.height_over_diameter = analysis.height_over_diameter
    run.sphere_diameter_nm = analysis.sphere_diameter_nm
    run.cathodic_sign = analysis.cathodic_sign or ""
    run.charge_start_s = analysis.start_s
    run.charge_end_s = analysis.end_s
    run.time_unit = "" if parsed is None else parsed.time_unit
    run.current_unit = "" if parsed is None else parsed.current_unit
    run.stale_reason = ""


def deposition_run_recompute(*, actor: User | None, run: DepositionRun, why: str) -> None:
    """Work a run's figures out again from its charge after an input was amended.

    Called in the amending transaction (``inventory.services.derived``).  A file's charge is
    integrated again from the kept file, with the window, units and sign the figures came
    from; an entered charge is taken as it was entered.  The run's history says ``why``; if
    the new h/D is off target the usual flag is raised.  A file that cannot be read any more
    (or inputs the physics refuses) leave the figures marked stale with the reason instead,
    which readiness reports.
    """
    run = DepositionRun.objects.select_for_update(of=("self",)).select_related(
        "template__sphere_lot").get(pk=run.pk)
    if not run.charge_source:
        return
    try:
        parsed, analysis = (_reread_file(run) if run.charge_source == FROM_FILE
                            else (None, _entered_analysis(run, run.charge_C)))
    except (OSError, ValueError, ValidationError) as error:
        run.stale_reason = f"{why}; the figures could not be worked out again ({error})."
        _save_changed(run, actor=actor, reason=f"figures stale: {why}")
        return
    before = run.height_over_diameter
    _set_figures(run, analysis, parsed=parsed)
    _save_changed(run, actor=actor, reason=f"figures recomputed: {why}")
    if run.height_over_diameter != before:
        _compare_and_flag(run, analysis, actor=actor)


def _reread_file(run: DepositionRun) -> tuple[Chronoamperogram, DepositionAnalysis]:
    with run.chronoamperogram.open("rb") as stored:
        content = stored.read()
    if sha256_of(content) != run.chronoamperogram_sha256:
        raise OSError("the stored file no longer matches its SHA-256 digest")
    return _parse_and_analyse(
        run, run.chronoamperogram_name, content, time_unit=run.time_unit,
        current_unit=run.current_unit, cathodic_sign=run.cathodic_sign,
        start_s=run.charge_start_s, end_s=run.charge_end_s)


# --------------------------------------------------------------------------- entered charge


@transaction.atomic
def deposition_run_enter_charge(*, actor: User | None, run: DepositionRun, charge_C,
                                reason: str = "") -> ChronoamperogramAttachment:
    """Record the charge the potentiostat reported (no file) and the figures that follow.

    The figures come from the charge by the same physics as a file's integral.  A run whose
    charge was integrated from its file keeps it (a typed figure cannot overrule the curve;
    ``charge_from_file``); an entered charge may be entered again, and the history row gives
    the old and new values.  The same charge again changes nothing.  A charge that is not a
    finite number in the range table's span is refused under ``charge_C``, nothing saved.
    """
    require_role(actor, MAKER, action="Entering a deposition charge")
    charge = checked_entered_charge(charge_C)
    run = DepositionRun.objects.select_for_update(of=("self",)).select_related(
        "template__sphere_lot").get(pk=run.pk)
    check_not_voided(run)
    if run.charge_source == FROM_FILE:
        raise refusal("charge_C", f"{run.code}'s charge is integrated from "
                                  f"{run.chronoamperogram_name} (sha256 "
                                  f"{run.chronoamperogram_sha256[:12]}…); an entered charge "
                                  "cannot replace it.", "charge_from_file")
    if run.charge_source == ENTERED and math.isclose(run.charge_C, charge, rel_tol=1e-9):
        return ChronoamperogramAttachment(
            run=run, unchanged=True, analysis=None,
            target_height_over_diameter=run.target_height_over_diameter,
            deviation_height_over_diameter=_deviation(run), tolerance=None, flags=(),
            notes=(f"{run.code} already holds the entered charge {charge:.6g} C; nothing "
                   "changed.",))
    said = (entered_charge_reason(charge) if run.charge_C is None
            else f"charge entered again: {run.charge_C:.6g} C → {charge:.6g} C")
    return apply_entered_charge(run, _entered_analysis(run, charge), actor=actor,
                                reason="; ".join(filter(None, (said, reason.strip()))))


def checked_entered_charge(charge_C) -> float:
    """``charge_C`` as a float inside the range table's span, else a refusal naming it."""
    span = DepositionRun.RANGES["charge_C"]
    try:
        charge = float(charge_C)
    except (TypeError, ValueError):
        raise refusal("charge_C", f"The charge must be a number in C, not {charge_C!r}.",
                      "invalid") from None
    if isinstance(charge_C, bool) or not span.holds(charge):
        raise refusal("charge_C", f"The charge {charge_C!r} C is outside the allowed range: "
                                  f"{span.describe()}.", "out_of_range")
    return charge


def _entered_analysis(run: DepositionRun, charge: float) -> DepositionAnalysis:
    """The figures of an entered charge with the run's inputs (saved run or not)."""
    try:
        return figures_from_charge(
            charge_C=charge, electrode_area_cm2=run.electrode_area_cm2, metal=run.metal,
            electrons_per_atom=run.electrons_per_atom,
            current_efficiency=run.current_efficiency,
            sphere_diameter_nm=_sphere_diameter_nm(run))
    except AnalysisInputError as error:
        if error.field == "sphere_diameter_nm":
            raise refusal("template", f"The template's sphere lot: {error.message}",
                          "bad_value") from None
        field = error.field if error.field in _PARAMETER_FIELDS else "charge_C"
        raise refusal(field, error.message, "bad_value") from None


def prepare_entered_charge(run: DepositionRun, charge_C) -> DepositionAnalysis:
    """Check an entered charge and work out its figures before anything is saved."""
    return _entered_analysis(run, checked_entered_charge(charge_C))


def entered_charge_check(run: DepositionRun, analysis: DepositionAnalysis, *,
                         pieces: Sequence[Substrate], actor, many: CheckingMany | None = None,
                         ) -> tuple[DepositionRun, list[NewRecord]]:
    """The check part of :func:`apply_entered_charge` for a run checked and not yet written
    (with its ``pieces``): the run as its second save leaves it (a copy with the figures, a
    new version, checked) and the flags of an off-target film; nothing written."""
    charged = copy.copy(run)
    _set_figures(charged, analysis, parsed=None)
    _prepare_changed(charged, actor=actor, many=many, before=run)
    _result, flags = _compare(charged, analysis, pieces=pieces, actor=actor, many=many)
    return charged, flags


def entered_charge_reason(charge_C: float) -> str:
    """The history reason of a run's first entered charge."""
    return f"charge entered as reported: {charge_C:.6g} C"


def apply_entered_charge(run: DepositionRun, analysis: DepositionAnalysis, *, actor,
                         reason: str) -> ChronoamperogramAttachment:
    """Store an entered charge's figures on a saved run and flag it if off target."""
    _set_figures(run, analysis, parsed=None)
    _save_changed(run, actor=actor, reason=reason)
    return _compare_and_flag(run, analysis, actor=actor)
