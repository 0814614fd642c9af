"""Pass rates with Wilson score intervals."""

from __future__ import annotations

from dataclasses import dataclass

from statsmodels.stats.proportion import proportion_confint

from .errors import NotEnoughData


@dataclass(frozen=True)
class PassRate:
    """``passed`` of ``n`` with the Wilson interval (fractions 0–1)."""

    passed: int
    n: int
    rate: float
    low: float
    high: float

    def as_dict(self) -> dict:
        return {"passed": self.passed, "n": self.n, "rate": self.rate, "ci_low": self.low,
                "ci_high": self.high}

    def sentence(self) -> str:
        return (f"{self.rate:.0%} (n = {self.n}, 95 % CI {self.low * 100:.0f}–"
                f"{self.high * 100:.0f} %)")


def wilson_pass_rate(passed: int, n: int, *, confidence: float = 0.95) -> PassRate:
    """Pass rate with its Wilson score interval.

    Parameters
    ----------
    passed, n : int
        Substrates that passed, and substrates judged (n ≥ 1).
    confidence : float
        Two-sided confidence level (0.95 gives the 95 % interval).

    Returns
    -------
    PassRate
        Rate and interval as fractions.

    References
    ----------
    .. [1] Wilson, E. B. Probable inference, the law of succession, and statistical
       inference. J. Am. Stat. Assoc. 1927, 22, 209–212 (statsmodels
       ``proportion_confint(method="wilson")``).
    """
    passed, n = int(passed), int(n)
    if n < 1:
        raise NotEnoughData("no substrate was judged", field="n")
    if not 0 <= passed <= n:
        raise ValueError(f"passed must be between 0 and n={n}, not {passed}")
    low, high = proportion_confint(passed, n, alpha=1 - confidence, method="wilson")
    return PassRate(passed, n, passed / n, float(low), float(high))
