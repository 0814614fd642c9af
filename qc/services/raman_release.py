"""Releasing a substrate: the QC rule release applies (services).

A substrate is released only when its latest QC at its current stage passed, no import of
it is still being analysed and no ``qc`` flag on it is open.  The rule is plugged into
``SERSLEDGER_RELEASE_CHECKS``, so a signed release (``inventory.services.record_release``)
applies it too.
"""

from __future__ import annotations

from django.db import transaction

from inventory.errors import refusal
from inventory.flags import flags_open
from inventory.models import Status, Substrate
from inventory.services import record_release, record_transition
from inventory.services.toolkit import User
from inventory.signatures import SignatureIntent

from ..models.imports import QcImport
from ..selectors.current import qc_measurement_get_latest

#: The category of the flags Raman QC raises; an open one blocks release.
FLAG_CATEGORY = "qc"


def substrate_release_check(record) -> str | None:
    """Release rule for substrates (``SERSLEDGER_RELEASE_CHECKS``): QC passed, no open flag.

    Refused when there is no QC at the substrate's current stage, the latest failed, or a
    ``qc`` flag on it is still open (it must be resolved with a reason first).  Voided
    measurements and flags do not count.  Returns the note for the status-change reason.
    """
    if not isinstance(record, Substrate):
        return None
    if QcImport.objects.filter(substrate=record, state__in=QcImport.PENDING).exists():
        raise refusal("substrate", f"A QC file of {record.code} is still being analysed; "
                                   "release it once that QC is judged.", "qc_pending")
    latest = qc_measurement_get_latest(record, fields=("code", "passed", "failure_reasons"))
    if latest is None:
        raise refusal("substrate", f"{record.code} has no QC measurement at its current "
                                   f"stage ({record.get_stage_display()}).", "qc_missing")
    if latest.stale_reason:
        raise refusal("substrate", f"The latest QC of {record.code} ({latest.code}) has stale "
                                   f"figures: {latest.stale_reason}", "figures_stale")
    if not latest.passed:
        raise refusal("substrate", f"The latest QC of {record.code} ({latest.code}) failed: "
                                   f"{' '.join(latest.failure_reasons)}", "qc_failed")
    open_flags = list(flags_open(target_codes=[record.code], category=FLAG_CATEGORY)
                      .values_list("code", flat=True))
    if open_flags:
        raise refusal("substrate", f"Resolve the open QC flag(s) {', '.join(open_flags)} on "
                                   f"{record.code} first.", "open_flag")
    return f"QC {latest.code} passed"


@transaction.atomic
def substrate_release(*, actor: User | None, substrate: Substrate,
                      signature: SignatureIntent | None = None) -> Substrate:
    """Release a substrate whose latest QC (at its current stage) passed.

    With a ``signature`` this is ``inventory.services.record_release`` (which applies the
    same QC rule through ``SERSLEDGER_RELEASE_CHECKS``); without one it is the unsigned
    release the system and the demo loader use.
    """
    if signature is not None:
        return record_release(actor=actor, record=substrate, signature=signature)
    locked = Substrate.objects.select_for_update().get(pk=substrate.pk)
    note = substrate_release_check(locked)
    return record_transition(actor=actor, record=locked, to_status=Status.RELEASED,
                             reason=note)
