"""Effects of the settings on an outcome, with lot (and batch) as random intercepts."""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from statsmodels.regression.mixed_linear_model import MixedLM

from .errors import MIN_PER_GROUP, NotEnoughData

MIN_GROUPS = 3          # fewer lots cannot separate a lot from a setting
MIN_COVERAGE = 0.5      # a setting known for fewer substrates than this is left out
MONOTONE_RHO = 0.999    # rank correlation at which one setting is a function of another


@dataclass(frozen=True)
class Effect:
    """Change of the outcome per unit of ``setting``, with its 95 % interval (Wald)."""

    setting: str
    estimate: float
    ci_low: float
    ci_high: float
    p_value: float
    n: int
    spread: float  # the setting's standard deviation: estimate × spread ranks effects

    @property
    def typical_change(self) -> float:
        return self.estimate * self.spread

    def as_dict(self) -> dict:
        return {"setting": self.setting, "estimate_per_unit": self.estimate,
                "ci_low": self.ci_low, "ci_high": self.ci_high, "p_value": self.p_value,
                "n": self.n, "change_per_sd": self.typical_change}


@dataclass(frozen=True)
class EffectsFit:
    outcome: str
    n: int
    groups: int
    effects: tuple[Effect, ...]
    group_variance: float
    residual_variance: float
    converged: bool
    omitted: dict[str, str] = field(default_factory=dict)
    #: Outcome less the settings' fitted effects (intercept kept), by the frame's row index:
    #: what is left for the lot, the batch and chance — the series drift charts should see.
    adjusted: pd.Series | None = None
    #: Outcome less everything fitted, lot and batch intercepts included (conditional
    #: residuals): what a change over time would show in once the lots are accounted for.
    residuals: pd.Series | None = None

    def as_dict(self) -> dict:
        return {"outcome": self.outcome, "n": self.n, "groups": self.groups,
                "effects": [e.as_dict() for e in self.effects],
                "group_variance": self.group_variance,
                "residual_variance": self.residual_variance, "converged": self.converged,
                "omitted": self.omitted}


def _usable_settings(frame: pd.DataFrame, settings) -> tuple[list[str], dict[str, str]]:
    kept, omitted = [], {}
    for name in settings:
        values = pd.to_numeric(frame[name], errors="coerce")
        known = values.notna().mean() if len(values) else 0.0
        if known < MIN_COVERAGE:
            omitted[name] = f"not enough data: known for {known:.0%} of substrates"
        elif values.dropna().nunique() < 2:
            omitted[name] = "not enough data: the setting never varies"
        else:
            kept.append(name)
    return kept, omitted


def _separable(data: pd.DataFrame, kept: list[str], omitted: dict[str, str]) -> list[str]:
    """Keep settings in order while each adds a direction the earlier ones do not span.

    Settings computed from one another (film height, charge density and h/D on one sphere
    size) cannot be told apart; the later one is named with the one it moves with.  Such a
    relation need not be linear: charge density is a cubic-like function of h/D (the metal
    fills spherical caps), which a rank test of the columns misses, and left in, its bend
    takes part of a curvature term's.  A setting whose ranks follow an earlier one's
    (Spearman |ρ| ≥ ``MONOTONE_RHO``) is therefore that setting again, whatever the curve.
    """
    chosen: list[str] = []
    columns = [np.ones(len(data))]
    ranks = data[kept].rank()
    for name in kept:
        values = data[name].to_numpy(dtype=float)
        twin = next((other for other in chosen
                     if abs(ranks[name].corr(ranks[other])) >= MONOTONE_RHO), None)
        if twin is not None:
            omitted[name] = (f"not enough data: a monotone function of {twin} here, "
                             "cannot be separated")
            continue
        scale = values.std() or 1.0
        trial = np.column_stack([*columns, (values - values.mean()) / scale])
        if np.linalg.matrix_rank(trial, tol=1e-6 * np.sqrt(len(data))) == trial.shape[1]:
            chosen.append(name)
            columns = list(trial.T)
        else:
            partner = max(chosen, key=lambda other: abs(np.corrcoef(values, data[other])[0, 1])
                          ) if chosen and values.std() > 0 else "the intercept"
            omitted[name] = f"not enough data: moves together with {partner}, cannot be separated"
    return chosen


def mixed_effects(frame: pd.DataFrame, *, outcome: str, settings, group: str,
                  nested: str | None = None, confidence: float = 0.95,
                  min_per_setting: int = MIN_PER_GROUP) -> EffectsFit:
    """Linear mixed model ``y = Xβ + u_group (+ v_batch within group) + ε`` fitted by REML.

    Each numeric setting enters linearly, so its coefficient is the change of the outcome
    per unit of the setting with the others held fixed; the lot's random intercept keeps a
    bad lot from appearing as a setting effect.  Settings that never vary or are known for
    fewer than half the substrates are left out and named in ``omitted``.

    Parameters
    ----------
    frame : pandas.DataFrame
        One row per substrate.
    outcome : str
        Column of the response (e.g. log10 EF).
    settings : sequence of str
        Numeric columns (units in their names).
    group : str
        Column naming the grouping (random-intercept) factor, e.g. the sphere lot.
    nested : str, optional
        A second grouping within ``group`` (e.g. colloid batch), as a variance component.
    min_per_setting : int
        At least this many substrates per estimated coefficient (intercept included).

    Returns
    -------
    EffectsFit

    Raises
    ------
    NotEnoughData
        Too few substrates, fewer than three groups, or no setting that varies.

    References
    ----------
    .. [1] Laird, N. M.; Ware, J. H. Random-effects models for longitudinal data.
       Biometrics 1982, 38, 963–974.
    .. [2] Lindstrom, M. J.; Bates, D. M. Newton–Raphson and EM algorithms for linear
       mixed-effects models for repeated-measures data. J. Am. Stat. Assoc. 1988, 83,
       1014–1022 (the REML fit of statsmodels ``MixedLM``).
    """
    settings = list(settings)
    data = frame[frame[outcome].notna() & frame[group].notna()]
    kept, omitted = _usable_settings(data, settings)
    if not kept:
        raise NotEnoughData("no setting varies among the substrates with a result",
                            field=outcome)
    columns = [outcome, group, *kept] + ([nested] if nested else [])
    data = data[columns].dropna()
    kept = _separable(data, kept, omitted)
    if not kept:
        raise NotEnoughData("no setting can be separated from the others", field=outcome)
    needed = min_per_setting * (len(kept) + 1)
    if len(data) < needed:
        raise NotEnoughData(f"{len(data)} substrates with every setting known (need "
                            f"{needed} for {len(kept)} settings)", field=outcome)
    groups = data[group].astype(str).to_numpy()
    if len(set(groups)) < MIN_GROUPS:
        raise NotEnoughData(f"{len(set(groups))} {group} value(s) (need {MIN_GROUPS})",
                            field=group)
    exog = np.column_stack([np.ones(len(data)), data[kept].to_numpy(dtype=float)])
    exog_vc = _vc_by_group(data[nested], groups, nested) if nested else None
    with warnings.catch_warnings():  # convergence is reported in the result, not as a warning
        warnings.simplefilter("ignore")
        try:
            result = MixedLM(data[outcome].to_numpy(dtype=float), exog, groups,
                             exog_re=np.ones((len(data), 1)), exog_vc=exog_vc).fit(reml=True)
        except (np.linalg.LinAlgError, ValueError) as error:
            raise NotEnoughData(f"the settings cannot be separated ({error})",
                                field=outcome) from None
    interval = np.asarray(result.conf_int(alpha=1 - confidence))
    params, pvalues = np.asarray(result.fe_params), np.asarray(result.pvalues)
    spreads = data[kept].std(ddof=1).to_numpy()
    effects = tuple(
        Effect(name, float(params[i + 1]), float(interval[i + 1, 0]),
               float(interval[i + 1, 1]), float(pvalues[i + 1]), len(data), float(spreads[i]))
        for i, name in enumerate(kept))
    return EffectsFit(outcome=outcome, n=len(data), groups=len(set(groups)), effects=effects,
                      group_variance=float(np.asarray(result.cov_re)[0, 0]),
                      residual_variance=float(result.scale), converged=bool(result.converged),
                      omitted=omitted,
                      adjusted=pd.Series(data[outcome].to_numpy(float)
                                         - exog[:, 1:] @ params[1:], index=data.index),
                      residuals=pd.Series(_conditional_residuals(result, exog), index=data.index))


def _conditional_residuals(result, exog: np.ndarray) -> np.ndarray:
    """Residuals after fixed and random effects; with a zero lot variance (a singular
    covariance, which statsmodels will not predict from) the random effects are zero."""
    try:
        return np.asarray(result.resid)
    except ValueError:
        return np.asarray(result.model.endog) - exog @ np.asarray(result.fe_params)


def _vc_by_group(labels: pd.Series, groups: np.ndarray, name: str) -> dict:
    """statsmodels' variance-component layout: per group, one indicator column per level."""
    codes = pd.factorize(labels.astype(str))[0]
    out = {}
    for label in pd.unique(groups):
        inside = codes[groups == label]
        levels = np.unique(inside)
        out[label] = (inside[:, None] == levels[None, :]).astype(float)
    return {name: out}
