"""Empirical-Bayes shrinkage of players' effects towards the league's distribution.

A player with 150 attempts can show a large corrected effect by chance alone.
Treating every player's true effect as a draw from the league's distribution
(normal, with a mean and a between-player spread estimated from all players),
each estimate is pulled towards the league mean, the more so the larger its
standard error: the normal-normal model of random-effects meta-analysis.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import optimize, stats

from .conditional import _show

__all__ = ["ShrinkageResult", "shrink_effects", "shrink_scan_effects"]

METHODS = ("dersimonian-laird", "reml")


@dataclass(frozen=True, eq=False)
class ShrinkageResult:
    """Shrunk effects of every player.

    Attributes
    ----------
    players : tuple of str
    estimate, se : ndarray of float
        The inputs.
    shrunk : ndarray of float
        Posterior mean of each player's effect.
    weight : ndarray of float
        Weight on the player's own estimate, ``tau2 / (tau2 + se**2)``
        (0: all league, 1: all own).
    interval_low, interval_high : ndarray of float
        Posterior intervals at ``confidence_level`` (including the
        uncertainty of the league mean).
    league_mean, league_mean_se : float
    tau2 : float
        Between-player variance of the true effects (0 when the spread is
        what chance alone gives).
    method : {'dersimonian-laird', 'reml'}
    q_statistic, q_p_value : float
        Cochran's heterogeneity statistic and its chi-square p-value.
    i2 : float
        Share of the variation beyond chance, ``max(0, (Q - (n-1))/Q)``.
    confidence_level : float
    """

    players: tuple
    estimate: np.ndarray
    se: np.ndarray
    shrunk: np.ndarray
    weight: np.ndarray
    interval_low: np.ndarray
    interval_high: np.ndarray
    league_mean: float
    league_mean_se: float
    tau2: float
    method: str
    q_statistic: float
    q_p_value: float
    i2: float
    confidence_level: float

    def to_frame(self):
        """One row per player: ``player``, ``estimate``, ``se``, ``shrunk``, ``interval_low``, ``interval_high``, ``weight``."""
        return pd.DataFrame(
            {
                "player": list(self.players),
                "estimate": self.estimate,
                "se": self.se,
                "shrunk": self.shrunk,
                "interval_low": self.interval_low,
                "interval_high": self.interval_high,
                "weight": self.weight,
            }
        )

    def to_dict(self):
        return {
            "league_mean": self.league_mean,
            "league_mean_se": self.league_mean_se,
            "tau2": self.tau2,
            "method": self.method,
            "q_statistic": self.q_statistic,
            "q_p_value": self.q_p_value,
            "i2": self.i2,
            "confidence_level": self.confidence_level,
            "players": [
                {"player": p, "estimate": float(e), "se": float(s), "shrunk": float(m),
                 "interval": [float(lo), float(hi)], "weight": float(w)}
                for p, e, s, m, lo, hi, w in zip(self.players, self.estimate, self.se, self.shrunk,
                                                 self.interval_low, self.interval_high, self.weight, strict=True)
            ],
        }

    def summary(self):
        level = f"{100 * self.confidence_level:g}%"
        lines = [
            f"Shrinkage towards the league ({self.method}): {len(self.players)} players, league mean "
            f"{self.league_mean:+.4f} (se {self.league_mean_se:.4f}), between-player sd "
            f"{math.sqrt(self.tau2):.4f}, I2 {100 * self.i2:.0f}%",
            f"  {'player':<12} {'estimate':>9} {'se':>7} {'shrunk':>9} {level + ' interval':>22} {'weight':>7}",
        ]
        for p, e, s, m, lo, hi, w in zip(self.players, self.estimate, self.se, self.shrunk, self.interval_low,
                                         self.interval_high, self.weight, strict=True):
            lines.append(f"  {str(p)[:12]:<12} {e:>+9.4f} {s:>7.4f} {m:>+9.4f} {lo:>+10.4f} to {hi:>+8.4f} {w:>7.2f}")
        lines += [
            "",
            "Caveats:",
            "  1. Shrinkage assumes players' true effects come from one normal league distribution; a "
            "player unlike the rest is pulled too far towards it.",
            "  2. A shrunk effect near zero is not proof of no effect: small samples carry little information.",
        ]
        return "\n".join(lines)


def _shrink_effects_iv(estimates, standard_errors, players, method, confidence_level):
    try:
        y = np.asarray(estimates, dtype=float)
        s = np.asarray(standard_errors, dtype=float)
    except (TypeError, ValueError):
        raise ValueError("`estimates` and `standard_errors` must be numbers") from None
    if y.ndim != 1 or s.shape != y.shape:
        raise ValueError(
            f"`estimates` and `standard_errors` must be 1-d and of equal length (got shapes {y.shape}, {s.shape})"
        )
    if not np.isfinite(y).all():
        raise ValueError("`estimates` must be finite (drop players whose effect is undefined)")
    if not (np.isfinite(s).all() and (s > 0).all()):
        raise ValueError(f"`standard_errors` must be positive and finite (got {_show(s[~(s > 0)][0]) if (~(s > 0)).any() else 'inf'})")
    if players is None:
        players = tuple(str(i) for i in range(len(y)))
    else:
        players = tuple(players)
        if len(players) != len(y):
            raise ValueError(f"`players` must name every estimate ({len(y)}; got {len(players)})")
    if method not in METHODS:
        raise ValueError(f"`method` must be one of {', '.join(map(repr, METHODS))} (got {method!r})")
    if (isinstance(confidence_level, bool) or not isinstance(confidence_level, numbers.Real)
            or not 0 < confidence_level < 1):
        raise ValueError(f"`confidence_level` must be between 0 and 1 (got {_show(confidence_level)})")
    return y, s, players, float(confidence_level)


def _dersimonian_laird(y, v):
    w = 1 / v
    mean_fixed = (w * y).sum() / w.sum()
    q = float((w * (y - mean_fixed) ** 2).sum())
    denominator = w.sum() - (w**2).sum() / w.sum()
    tau2 = max(0.0, (q - (len(y) - 1)) / denominator) if denominator > 0 else 0.0
    return tau2, q


def _reml(y, v):
    def negative_restricted_loglik(log_tau2):
        tau2 = math.exp(log_tau2)
        w = 1 / (v + tau2)
        mean = (w * y).sum() / w.sum()
        return 0.5 * (np.log(v + tau2).sum() + math.log(w.sum()) + (w * (y - mean) ** 2).sum())

    scale = float(np.var(y)) + float(v.max())
    lower, upper = math.log(1e-12 * scale + 1e-300), math.log(10 * scale + 1e-300)
    found = optimize.minimize_scalar(negative_restricted_loglik, bounds=(lower, upper), method="bounded",
                                     options={"xatol": 1e-10})
    tau2 = math.exp(found.x)
    # the boundary: compare with tau2 = 0
    zero = 0.5 * (np.log(v).sum() + math.log((1 / v).sum()) + ((1 / v) * (y - (y / v).sum() / (1 / v).sum()) ** 2).sum())
    return 0.0 if zero <= found.fun or tau2 < 1e-10 * scale else tau2


def shrink_effects(estimates, standard_errors, players=None, *, method="reml", confidence_level=0.95):
    r"""Shrink players' effects towards the league's distribution (normal-normal empirical Bayes).

    Parameters
    ----------
    estimates : array_like of float
        Each player's effect (e.g. the corrected residual difference).
    standard_errors : array_like of float
        Their standard errors (positive).
    players : sequence of str, optional
        Player ids, in the same order.
    method : {'reml', 'dersimonian-laird'}, optional
        Estimator of the between-player variance: restricted maximum
        likelihood (default) or the DerSimonian-Laird moment estimator.
    confidence_level : float, optional
        Of the posterior intervals (default 0.95).

    Returns
    -------
    ShrinkageResult

    Notes
    -----
    :math:`y_i \mid \theta_i \sim N(\theta_i, s_i^2)`, :math:`\theta_i \sim
    N(\mu, \tau^2)`. DerSimonian-Laird:
    :math:`\hat\tau^2 = \max\{0, (Q - (n-1)) / (\sum w_i - \sum w_i^2 / \sum w_i)\}`
    with :math:`w_i = 1/s_i^2` and Cochran's :math:`Q = \sum w_i (y_i -
    \bar y_w)^2` [1]_; REML maximises the restricted likelihood
    :math:`-\tfrac12 [\sum \log(s_i^2 + \tau^2) + \log \sum w_i^* + \sum w_i^*
    (y_i - \hat\mu)^2]`, :math:`w_i^* = 1/(s_i^2 + \tau^2)` [2]_. Then
    :math:`\hat\mu = \sum w_i^* y_i / \sum w_i^*`, the weight on the player's
    own estimate is :math:`B_i = \hat\tau^2 / (\hat\tau^2 + s_i^2)`, the
    shrunk effect :math:`\hat\mu + B_i (y_i - \hat\mu)`, and its variance
    :math:`B_i s_i^2 + (1 - B_i)^2 \operatorname{Var}(\hat\mu)` (Morris's
    correction for estimating :math:`\mu` [3]_; the uncertainty in
    :math:`\hat\tau^2` is not propagated, so intervals are slightly narrow
    with few players).

    References
    ----------
    .. [1] DerSimonian, R. & Laird, N. (1986). Meta-analysis in clinical
       trials. Controlled Clinical Trials 7(3), 177-188.
    .. [2] Viechtbauer, W. (2005). Bias and efficiency of meta-analytic
       variance estimators in the random-effects model. Journal of
       Educational and Behavioral Statistics 30(3), 261-293.
    .. [3] Morris, C. N. (1983). Parametric empirical Bayes inference: theory
       and applications. JASA 78(381), 47-55.
    .. [4] Efron, B. & Morris, C. (1975). Data analysis using Stein's
       estimator and its generalizations. JASA 70(350), 311-319.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.shrinkage import shrink_effects
    >>> rng = np.random.default_rng(0)
    >>> se = rng.uniform(0.01, 0.05, 40)
    >>> y = rng.normal(0.0, 0.02, 40) + rng.normal(0.0, se)
    >>> r = shrink_effects(y, se, method="dersimonian-laird")
    >>> bool(np.all(np.abs(r.shrunk - r.league_mean) <= np.abs(y - r.league_mean)))
    True
    """
    y, s, players, level = _shrink_effects_iv(estimates, standard_errors, players, method, confidence_level)
    v = s**2
    n = len(y)
    if n == 0:
        empty = np.zeros(0)
        return ShrinkageResult((), empty, empty, empty, empty, empty, empty, float("nan"), float("nan"), 0.0,
                               method, float("nan"), float("nan"), 0.0, level)
    tau2_dl, q = _dersimonian_laird(y, v)
    tau2 = tau2_dl if method == "dersimonian-laird" or n < 3 else _reml(y, v)
    w = 1 / (v + tau2)
    mean = float((w * y).sum() / w.sum())
    mean_var = float(1 / w.sum())
    weight = tau2 / (tau2 + v) if tau2 > 0 else np.zeros(n)
    shrunk = mean + weight * (y - mean)
    posterior_var = weight * v + (1 - weight) ** 2 * mean_var
    z = stats.norm.ppf(0.5 + level / 2)
    half = z * np.sqrt(posterior_var)
    q_p = float(stats.chi2.sf(q, n - 1)) if n > 1 else float("nan")
    i2 = max(0.0, (q - (n - 1)) / q) if q > 0 else 0.0
    return ShrinkageResult(
        players=players,
        estimate=y,
        se=s,
        shrunk=shrunk,
        weight=weight,
        interval_low=shrunk - half,
        interval_high=shrunk + half,
        league_mean=mean,
        league_mean_se=math.sqrt(mean_var),
        tau2=float(tau2),
        method=method,
        q_statistic=q,
        q_p_value=q_p,
        i2=i2,
        confidence_level=level,
    )


def shrink_scan_effects(scan, k, *, method="reml"):
    """Shrink a league scan's corrected D_k towards the league's spread of effects.

    Parameters
    ----------
    scan : dict
        A league scan payload (``LeagueScanResult.to_dict()``).
    k : int
        Streak length.
    method : {"reml", "dersimonian-laird"}

    Returns
    -------
    ShrinkageResult or None
        None when fewer than three players have a defined effect and interval.

    Notes
    -----
    The scan keeps each corrected effect's 95% game-resampling interval, not
    its standard error; the standard error is read off the interval as
    width / 3.92 (its normal-theory width), an approximation.
    """
    players, estimates, errors = [], [], []
    for entry in scan.get("players", []):
        streak = entry["streak"][k - 1] if 0 < k <= len(entry["streak"]) else None
        if not streak or streak.get("corrected") is None or not streak.get("interval"):
            continue
        low, high = streak["interval"]
        if low is not None and high is not None and high > low:
            players.append(entry["player"])
            estimates.append(streak["corrected"])
            errors.append((high - low) / (2 * stats.norm.ppf(0.975)))
    if len(players) < 3:
        return None
    return shrink_effects(estimates, errors, players, method=method)
