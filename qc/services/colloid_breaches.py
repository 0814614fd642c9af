"""A UV-vis record against the lab's colloid limits, and the flags its breaches raise (services).

Every breach is stored on the record; each raises an open flag on the batch unless a UV-vis
flag for the same limit is still open.  An open flag on a batch already makes every
substrate decorated with it NOT READY (inventory.readiness).
"""

from __future__ import annotations

from inventory.flags import flags_open
from inventory.models import Flag, NanoparticleBatch
from inventory.services import flag_raise

from ..models.colloid import ColloidLimitSet, UvVisRecord

FLAG_CATEGORY = "colloid"




def _breach(limit: str, value: float, limit_value: float, sentence: str) -> dict:
    return {"limit": limit, "value": float(value), "limit_value": float(limit_value),
            "message": sentence, "flag_code": "", "flag_raised": False}


def review_breaches(record: UvVisRecord) -> list[dict]:
    """Results that need a person whatever the limits: no size, a fit at its bounds."""
    found = []
    if record.peak_nm is None:
        found.append(_breach("size_methods", 0.0, 0.0, "no plasmon maximum, so no size: "
                             "review the spectrum (large particles or aggregates)"))
    if record.mie_diameter_bound_nm is not None:
        found.append(_breach("mie_fit_range", record.mie_diameter_bound_nm,
                             record.mie_diameter_bound_nm, f"Mie fit {record.mie_fit_note}"))
    if record.mie_sigma_bound == "upper" and record.mie_geometric_sigma is not None:
        found.append(_breach("mie_width_bound", record.mie_geometric_sigma,
                             record.mie_geometric_sigma, f"Mie fit: {record.mie_fit_note}"))
    return found


def evaluate_limits(record: UvVisRecord, limits: ColloidLimitSet | None) -> list[dict]:
    """The lab's colloid rules: one breach per limit exceeded (stored on the record)."""
    if limits is None:
        record.limits_note = f"no colloid limits are set for {record.batch.metal}; not evaluated"
        return []
    record.limit_set = limits
    record.limits_version = limits.version
    notes, breaches = [], []
    if record.peak_nm is None:
        record.limits_note = "no plasmon maximum: peak, width and aggregation limits not evaluated"
        return []
    if not limits.peak_min_nm <= record.peak_nm <= limits.peak_max_nm:
        breaches.append(_breach("peak_window_nm", record.peak_nm, limits.peak_min_nm
                                if record.peak_nm < limits.peak_min_nm else limits.peak_max_nm,
                                f"peak at {record.peak_nm:.1f} nm is outside "
                                f"{limits.peak_min_nm:g}–{limits.peak_max_nm:g} nm"))
    if record.fwhm_nm is None:
        notes.append(f"FWHM not evaluated ({record.fwhm_note})")
    elif record.fwhm_nm > limits.fwhm_max_nm:
        breaches.append(_breach("fwhm_max_nm", record.fwhm_nm, limits.fwhm_max_nm,
                                f"FWHM {record.fwhm_nm:.1f} nm exceeds {limits.fwhm_max_nm:g} nm"))
    if record.aggregation_index > limits.aggregation_index_max:
        breaches.append(_breach("aggregation_index_max", record.aggregation_index,
                                limits.aggregation_index_max,
                                f"aggregation index {record.aggregation_index:.3f} exceeds "
                                f"{limits.aggregation_index_max:g}"))
    if record.first_record is not None:
        breaches.extend(_stability_breaches(record, limits))
    if limits.flag_size_disagreement and record.sizes_agree is False:
        breaches.append(_breach("size_tolerance_percent", record.size_difference_percent,
                                limits.size_tolerance_percent, record.size_agreement_message))
    record.limits_note = "; ".join(notes)
    return breaches


def _stability_breaches(record: UvVisRecord, limits: ColloidLimitSet) -> list[dict]:
    since = f"since {record.first_record.code}"
    found = []
    # A shift either way is a change of the particles (red: growth or coupling; blue: etching).
    if abs(record.peak_shift_nm) > limits.peak_shift_max_nm:
        found.append(_breach("peak_shift_max_nm", record.peak_shift_nm, limits.peak_shift_max_nm,
                             f"peak shifted {record.peak_shift_nm:+.1f} nm {since} (limit "
                             f"±{limits.peak_shift_max_nm:g} nm)"))
    if record.absorbance_loss_fraction > limits.absorbance_loss_max_fraction:
        found.append(_breach("absorbance_loss_max_fraction", record.absorbance_loss_fraction,
                             limits.absorbance_loss_max_fraction,
                             f"peak absorbance fell {100 * record.absorbance_loss_fraction:.0f} % "
                             f"{since} (limit {100 * limits.absorbance_loss_max_fraction:g} %)"))
    return found


def _open_flags_by_limit(batch: NanoparticleBatch, exclude: UvVisRecord) -> dict[str, str]:
    """Limit name → code of an open flag an earlier UV-vis record raised for it."""
    raised: dict[str, str] = {}
    for breaches in UvVisRecord.objects.filter(batch=batch).exclude(pk=exclude.pk) \
            .values_list("breaches", flat=True):
        for breach in breaches:
            if breach.get("flag_raised"):
                raised.setdefault(breach["limit"], breach["flag_code"])
    still_open = set(flags_open().filter(code__in=raised.values())
                     .values_list("code", flat=True))
    return {limit: code for limit, code in raised.items() if code in still_open}


def flag_breaches(actor, batch: NanoparticleBatch, record: UvVisRecord,
                   breaches: list[dict]) -> list[Flag]:
    """One open flag per breach, unless a UV-vis flag for that limit is still open."""
    open_by_limit = _open_flags_by_limit(batch, record)
    flags = []
    for breach in breaches:
        if breach["limit"] in open_by_limit:
            breach["flag_code"] = open_by_limit[breach["limit"]]
            continue
        flag = flag_raise(actor=actor, target=batch, category=FLAG_CATEGORY,
                          message=f"UV-vis {record.code} of {record.measured_on.isoformat()}: "
                                  f"{breach['message']}.")
        breach["flag_code"], breach["flag_raised"] = flag.code, True
        flags.append(flag)
    return flags
