"""The verdict of a colloid UV-vis spectrum (and of a batch, by its latest spectrum).

Size with its uncertainty and the published calibration it came from, concentration,
whether the Mie fit stopped at a search bound, and the lab's colloid limits as the import
judged them (``UvVisRecord.breaches``, stored then); nothing is judged here.
"""

from __future__ import annotations

from inventory.flags import flags_open

from ..make.results import uvvis_figures
from .base import Verdict, figures, flag_words, sci, stale_verdict, with_u

# Breaches the import raises whatever the limits: they ask a person to look at the spectrum.
REVIEW_LIMITS = {"size_methods", "mie_fit_range", "mie_width_bound"}


def _size(record) -> str:
    if record.diameter_nm is None:
        return "no calibration size (" + (record.concentration_note or "outside the "
                                          "calibration's range") + ")"
    uncertainty = "" if record.diameter_u_nm else " (the calibration gives no uncertainty)"
    return (f"size {with_u(record.diameter_nm, record.diameter_u_nm, 'nm')}{uncertainty} by "
            f"{record.diameter_method} [{record.calibration_source}]")


def _concentration(record) -> str:
    if record.molar_concentration_M is None:
        return "no concentration"
    number = "" if record.number_per_mL is None else \
        f", {sci(record.number_per_mL)} particles/mL"
    return f"concentration {sci(record.molar_concentration_M)} mol/L{number}"


def _fit(record) -> str:
    if record.mie_median_diameter_nm is None:
        return f"the Mie fit stopped at its {record.mie_diameter_bound_nm:g} nm search bound"
    said = "Mie fit " + with_u(record.mie_median_diameter_nm, record.mie_median_diameter_u_nm,
                               "nm")
    if record.mie_sigma_bound == "upper":
        said += ", its width at the upper bound (flagged)"
    return said


def _limits(record, limit_breaches: list[dict]) -> str:
    metal = record.batch.metal
    if not record.limit_set_id:
        return f"no colloid limits are set for {metal}, so it was not judged against limits"
    which = colloid_limits_version_words(record)
    if limit_breaches:
        return f"outside the lab's {metal} colloid limits ({which}): " + "; ".join(
            breach["message"] for breach in limit_breaches)
    return f"within the lab's {metal} colloid limits ({which})"


def colloid_limits_version_words(record) -> str:
    """Which version of the colloid limits judged a spectrum (stored at import)."""
    if record.limits_version is None:
        return "the version then current, not recorded"
    return f"version {record.limits_version}; later changes do not re-judge it"


def uvvis_verdict(record, *, lead: str = "") -> Verdict:
    """WITHIN LIMITS / OUT OF LIMITS / REVIEW / NOT JUDGED; ``lead`` names the batch page."""
    batch = record.batch.code
    rows = figures(uvvis_figures(record))
    if record.stale_reason:
        return stale_verdict(record.code, record.stale_reason, figures_=rows, next_step=(
            "Next: import the spectrum again so its figures follow the batch as recorded."))
    review = [b for b in record.breaches if b["limit"] in REVIEW_LIMITS]
    limit_breaches = [b for b in record.breaches if b["limit"] not in REVIEW_LIMITS]
    open_flags = list(flags_open(target_codes=[batch], mentioning=record.code)
                      .order_by("code").values_list("code", flat=True))
    parts = [_size(record), _concentration(record), _fit(record), _limits(record, limit_breaches)]
    flags = flag_words(open_flags)
    sentence = f"{lead}{record.code} of colloid {batch}: " + "; ".join(parts) + (
        f"; {flags}." if flags else ".")
    if limit_breaches or review:
        passed = False
        headline = "OUT OF LIMITS" if limit_breaches else "REVIEW"
        next_step = (f"Next: do not use {batch} for new substrates until its flags are "
                     "resolved in Review: look at the spectrum, measure a fresh dilution, or "
                     "reject the batch.")
    elif record.limit_set_id:
        passed, headline = True, "WITHIN LIMITS"
        next_step = (f"Next: {batch} can decorate substrates while it is released and in "
                     "date; measure it again as it ages.")
    else:
        passed, headline = None, "NOT JUDGED"
        next_step = (f"Next: an administrator sets the lab's {record.batch.metal} colloid "
                     "limits, so later spectra are judged against them.")
    return Verdict(passed, headline, sentence, next_step, rows)


def batch_verdict(batch, latest) -> Verdict:
    """A colloid batch is as good as its latest spectrum says; without one, unknown."""
    if latest is None:
        return Verdict(None, "NO UV-VIS YET", f"{batch.code} has no UV-vis spectrum yet, so "
                       "its size and concentration are not known.",
                       "Next: record a UV-vis spectrum of it (Make page, UV-vis step).")
    lead = f"{batch.code}, by its latest spectrum ({latest.measured_on:%Y-%m-%d}, day " \
           f"{latest.age_days}): "
    return uvvis_verdict(latest, lead=lead)
