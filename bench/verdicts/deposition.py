"""The verdict of a deposition run: what it produced and whether that is what was planned.

Reads the figures the deposition service stored and its target check
(``inventory.services.deposition_run_check_target``: target charge, deviation, tolerance in
force, open flags); nothing is judged here.
"""

from __future__ import annotations

from inventory.services import deposition_run_check_target
from qc.services.enhancement import FILM_HEIGHT_REL_U_DEFAULT

from .base import KeyFigure, Verdict, figures, flag_words, stale_verdict, with_u

# A film height worked out from the charge carries the project's default relative standard
# uncertainty (current efficiency, electrode area and roughness together; the same value the
# enhancement factor's surface-area factor uses).  The sphere diameter is taken as nominal.
HEIGHT_U_NOTE = f"±{100 * FILM_HEIGHT_REL_U_DEFAULT:g} %: the default uncertainty of a height " \
                "from charge"


def _height_u(run) -> tuple[float | None, float | None]:
    """(u(h) in nm, u(h/D)), from the default relative uncertainty of a height from charge."""
    u_height = None if run.film_height_nm is None \
        else FILM_HEIGHT_REL_U_DEFAULT * run.film_height_nm
    u_ratio = None if run.height_over_diameter is None \
        else FILM_HEIGHT_REL_U_DEFAULT * run.height_over_diameter
    return u_height, u_ratio


def _produced(run) -> str:
    """"0.112 C of Au: film height 371 ± 37 nm, h/D 0.74 ± 0.07 in 500 nm spheres"."""
    u_height, u_ratio = _height_u(run)
    said = f"{run.charge_C:.3g} C of {run.metal}: "
    if run.template_id is None:
        return said + (f"a flat film {with_u(run.film_height_nm, u_height, 'nm')} thick "
                       "(no template, so no h/D)")
    return said + (f"film height {with_u(run.film_height_nm, u_height, 'nm')}, "
                   f"h/D {with_u(run.height_over_diameter, u_ratio)} in "
                   f"{run.sphere_diameter_nm:g} nm spheres")


def _key_figures(run, check) -> list[KeyFigure]:
    u_height, u_ratio = _height_u(run)
    rows = [
        ("Charge passed", with_u(run.charge_C, None, "C")),
        ("Charge from", run.get_charge_source_display()),
        ("Charge planned for the target h/D", with_u(check.target_charge_C, None, "C")),
        (f"Film height h ({HEIGHT_U_NOTE})", with_u(run.film_height_nm, u_height, "nm")),
    ]
    if run.template_id is not None:
        tolerance = "" if check.tolerance is None else \
            f" ± {check.tolerance.max_abs_deviation_height_over_diameter:g}"
        rows += [
            ("h/D, film height ÷ sphere diameter", with_u(run.height_over_diameter, u_ratio)),
            ("Planned h/D and tolerance", "none planned" if run.target_height_over_diameter
             is None else f"{run.target_height_over_diameter:.3f}{tolerance}"),
            ("Deviation from the planned h/D", "—" if check.deviation_height_over_diameter
             is None else f"{check.deviation_height_over_diameter:+.3f}"),
            ("Sphere diameter D (nominal)", with_u(run.sphere_diameter_nm, None, "nm")),
        ]
    rows += [
        ("Equivalent flat thickness", with_u(run.equivalent_thickness_nm, None, "nm")),
        ("Charge integrated over", "—" if run.charge_start_s is None
         else f"{run.charge_start_s:g}–{run.charge_end_s:g} s"),
    ]
    return figures(rows)


def _pieces(run) -> str:
    codes = list(run.substrates.order_by("code").values_list("code", flat=True))
    return ", ".join(codes) if codes else "no pieces yet"


def deposition_verdict(run) -> Verdict:
    """ON TARGET / OFF TARGET / NOT PLANNED / NO FILE YET, in one sentence, then next steps."""
    if run.charge_C is None:
        return Verdict(None, "NO FILE YET", f"{run.code} has no chronoamperogram and no "
                       "entered charge yet, so its charge and film height are not known.",
                       "Next: attach the run's chronoamperogram (its record on the Make "
                       "page's deposition step, or the import command), or enter the charge "
                       "the potentiostat reported.")
    check = deposition_run_check_target(run)
    rows = _key_figures(run, check)
    if run.stale_reason:
        return stale_verdict(run.code, run.stale_reason, figures_=rows, next_step=(
            "Next: do not rely on these figures; attach the chronoamperogram again or amend "
            "the input back." if run.chronoamperogram_sha256 else
            "Next: do not rely on these figures; amend the input back."))
    flags = flag_words(check.open_flag_codes)
    sentence = f"{run.code} deposited {_produced(run)}"
    if check.within_tolerance is None:
        planned = ("a flat film has no h/D to compare with a plan" if run.template_id is None
                   else "no planned h/D was recorded, so it was not compared with a plan")
        sentence += f"; {planned}"
        passed, headline = (False, "FLAGGED") if flags else (None, "NOT PLANNED")
    else:
        limit = check.tolerance.max_abs_deviation_height_over_diameter
        side = "within" if check.within_tolerance else "outside"
        sentence += (f"; that is {check.deviation_height_over_diameter:+.3f} from the planned "
                     f"h/D {run.target_height_over_diameter:.3f} (planned charge "
                     f"{check.target_charge_C:.3g} C), {side} the ±{limit:g} tolerance "
                     f"({check.tolerance.source})")
        passed = bool(check.within_tolerance) and not flags
        headline = "ON TARGET" if check.within_tolerance else "OFF TARGET"
    sentence += f"; {flags}." if flags else "; no open flags."
    if passed is False:
        next_step = (f"Next: resolve the flag in Review before the pieces cut from it "
                     f"({_pieces(run)}) are used: measure their QC, or reject them with a "
                     "signature.")
    else:
        next_step = (f"Next: carry on with the pieces cut from it ({_pieces(run)}): linker "
                     "layer, particles, then QC.")
    return Verdict(passed, headline, sentence, next_step, rows)
