"""The verdict of a QC measurement in one sentence, and its key figures, for its page.

Reads only what the QC service stored (``passed``, the figures, and ``limits_used`` — the
limits as they were when the measurement was judged); the judging itself lives in qc.
"""

from __future__ import annotations

from .base import Verdict, figures, sci


def _comparisons(m, limits: dict) -> list[tuple[bool, str]]:
    """(within limit, words) for each figure the lab limits, against the limits used."""
    out = []
    floor, ef = limits.get("min_enhancement_factor"), m.enhancement_factor
    if floor and ef is not None:
        out.append((ef >= floor, f"enhancement factor {sci(ef)} is {ef / floor:.2g}× the "
                                 f"floor of {sci(floor)}"))
    ceiling, rsd = limits.get("max_rsd_percent"), m.rsd_percent
    if ceiling is not None and rsd is not None:
        side = "under" if rsd <= ceiling else "over"
        out.append((rsd <= ceiling, f"uniformity RSD {rsd:.1f} % is {abs(rsd - ceiling):.1f} "
                                    f"points {side} the {ceiling:g} % ceiling"))
    min_snr, snr = limits.get("min_snr"), m.snr
    if min_snr is not None and snr is not None:
        side = "above" if snr >= min_snr else "below"
        out.append((snr >= min_snr, f"signal-to-noise {snr:.0f} is {side} the minimum of "
                                    f"{min_snr:g}"))
    return out


def limits_version_words(limits: dict) -> str:
    """Which limits judged a measurement, from the snapshot stored with its verdict."""
    if not limits:
        return "no limits recorded"
    version = limits.get("version")
    which = f"version {version}" if version else "the version then current (not recorded)"
    scope = " / ".join(str(limits[key]) for key in ("product_kind", "analyte") if limits.get(key))
    defaults = ", defaults to review" if limits.get("is_example") else ""
    return f"limits {which} ({scope}{defaults}); later changes do not re-judge it"


def qc_verdict(m) -> Verdict:
    limits = m.limits_used or {}
    comparisons = _comparisons(m, limits)
    substrate = m.substrate.code
    if m.passed:
        said = "; ".join(words for _ok, words in comparisons) or "every limit was met"
        sentence = f"{substrate} passed QC: {said}."
        next_step = (f"Next: a reviewer releases {substrate} with a signature (Review); "
                     "until then it stays in quarantine.")
    else:
        breached = [words for ok, words in comparisons if not ok]
        said = "; ".join(breached) or "; ".join(m.failure_reasons) or "a limit was not met"
        sentence = f"{substrate} failed QC: {said}."
        next_step = ("Next: do not use this piece. Resolve its flag, then measure again (a "
                     "new map) or reject the piece with a signature.")
    if limits.get("is_example"):
        next_step += " The limits used are the lab's defaults, still to be reviewed."
    ef = "—" if m.enhancement_factor is None else sci(m.enhancement_factor) + (
        f" ± {sci(m.enhancement_factor_u)}" if m.enhancement_factor_u else "")
    stale = getattr(m, "stale_reason", "")
    if stale:  # the verdict rests on an EF whose inputs changed: not presented as current
        sentence = f"{substrate}'s QC result is not current: stale: {stale}"
        next_step = "Next: import the map again so the EF is worked out from the current film."
        ef = f"stale (last worked out as {ef})"
    rows = [
        ("Enhancement factor (SSEF; Le Ru et al., J. Phys. Chem. C 2007)", ef),
        ("Uniformity RSD", "—" if m.rsd_percent is None else f"{m.rsd_percent:.1f} %"),
        ("Signal-to-noise", "—" if m.snr is None else f"{m.snr:.0f}"),
        ("Points within ±20 % of the median", "—" if m.fraction_within_20_percent is None
         else f"{100 * m.fraction_within_20_percent:.0f} %"),
        ("Band position", f"{m.band_position_cm1:.1f} cm⁻¹"),
        ("Points measured", f"{m.n_points}"),
        ("Judged by", limits_version_words(limits)),
    ]
    headline = "STALE" if stale else "PASS" if m.passed else "FAIL"
    return Verdict(bool(m.passed) and not stale, headline, sentence, next_step, figures(rows))
