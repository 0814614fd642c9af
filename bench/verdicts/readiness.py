"""The readiness verdict in words ("can I use this piece today?") and the figures behind it.

The reasons come from ``inventory.readiness.substrate_check_readiness`` (with qc's plug-in
reasons); the figures are reads: the current QC through qc's one selector for it, the
deposition run the piece was cut from, and the colloid it carries.
"""

from __future__ import annotations

from inventory.lineage import record_get_ancestors
from inventory.models import NanoparticleBatch
from qc.selectors import nanoparticle_batch_get_latest_size, qc_measurement_get_latest

from .base import KeyFigure, Verdict, sci, with_u

# Each reason in a few words for the sentence, and what a person does about it.
SHORT = {
    "status_quarantine": "it is in quarantine", "status_rejected": "it was rejected",
    "status_consumed": "it was used up", "status_disposed": "it was disposed of",
    "expired": "it has expired", "voided": "a record in its making was voided",
    "open_flag": "it has an open flag", "qc_missing": "it has no QC", "qc_failed": "its QC failed",
    "qc_stale": "its QC is too old", "qc_pending": "its QC is still being analysed",
    "figures_stale": "figures upstream are stale", "linker_layer_too_old":
    "its linker layer is too old", "colloid_not_released": "its colloid is not released",
    "colloid_expired": "its colloid has expired", "upstream_rejected":
    "an input was rejected", "upstream_expired_at_use": "an input had expired when used",
}
NEXT = {
    "status_quarantine": "a reviewer releases it with a signature once its QC has passed",
    "open_flag": "a reviewer resolves the flag in Review",
    "qc_missing": "measure its QC map", "qc_failed": "measure QC again or reject the piece",
    "qc_stale": "measure its QC again", "qc_pending": "wait for the QC analysis to finish",
    "figures_stale": "have the stale figures worked out again",
}
OTHER_PIECE = "take another piece (Stock lists what is released and in date)"


def _reasons_in_words(reasons) -> tuple[str, str]:
    codes = list(dict.fromkeys(reason.code for reason in reasons))
    said = ", ".join(SHORT.get(code, code.replace("_", " ")) for code in codes)
    steps = list(dict.fromkeys(NEXT.get(code, OTHER_PIECE) for code in codes))
    return said, "; ".join(steps)


def readiness_verdict(result, substrate) -> Verdict:
    """READY / NOT READY in one sentence, the next step, and the supporting figures."""
    day = f"{result.checked_on:%Y-%m-%d}"
    rows = supporting_figures(substrate)
    if result.ready:
        expires = "" if substrate.expires_on is None else \
            f", in date until {substrate.expires_on:%Y-%m-%d}"
        return Verdict(True, "READY", f"{substrate.code} is ready to use today ({day}): "
                       f"released{expires}, its QC current and passed, no open flags, and "
                       "every upstream lot was good when used.",
                       "Next: use it, and record the dataset it goes into (Make).", rows)
    said, steps = _reasons_in_words(result.reasons)
    count = len(result.reasons)
    return Verdict(False, "NOT READY", f"{substrate.code} is not ready to use today ({day}): "
                   f"{said} ({count} reason{'s' if count > 1 else ''}, listed below).",
                   f"Next: {steps}.", rows)


def supporting_figures(substrate) -> list[KeyFigure]:
    """The piece's state, its current QC, its film and its colloid, with their records."""
    rows = [KeyFigure("Stage", substrate.get_stage_display()),
            KeyFigure("Status", substrate.get_status_display()),
            KeyFigure("Expires on", "no shelf-life rule applies" if substrate.expires_on is None
                      else f"{substrate.expires_on:%Y-%m-%d}")]
    qc = qc_measurement_get_latest(substrate)
    if qc is None:
        rows.append(KeyFigure("Current QC", "none"))
    else:
        ef = "—" if qc.enhancement_factor is None else sci(qc.enhancement_factor)
        rsd = "—" if qc.rsd_percent is None else f"{qc.rsd_percent:.1f} %"
        rows.append(KeyFigure("Current QC", f"{'passed' if qc.passed else 'failed'} on "
                              f"{qc.measured_on:%Y-%m-%d}: enhancement factor {ef}, "
                              f"uniformity RSD {rsd}", qc.code))
    run = substrate.deposition_run
    if run is not None:
        ratio = "" if run.height_over_diameter is None else \
            f", h/D {run.height_over_diameter:.3f}"
        rows.append(KeyFigure("Film", "height not known (no chronoamperogram)"
                              if run.film_height_nm is None else
                              f"{with_u(run.film_height_nm, None, 'nm')} high{ratio}", run.code))
    for batch in record_get_ancestors(substrate).of_kind(NanoparticleBatch):
        size = nanoparticle_batch_get_latest_size(batch)
        rows.append(KeyFigure("Colloid", "no UV-vis yet" if size is None or size.diameter_nm
                              is None else f"{size.diameter_nm:.1f} nm particles "
                              f"(UV-vis {size.record_code}, {size.measured_on:%Y-%m-%d})",
                              batch.code))
    return rows
