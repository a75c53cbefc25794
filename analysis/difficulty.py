"""Shot difficulty: a logistic model of the make probability of every attempt.

Permutation tests treat a game's attempts as exchangeable. They are not when
difficulty varies: a shooter who feels hot may take longer, better-guarded
attempts, which hides a real hot hand in raw rates. :func:`fit_difficulty_model`
fits the league's make probability from the shot covariates present
(distance, points, defender distance, period, clock, score margin, home/away)
with one effect per player, on all players at once and with no streak terms,
so the fitted probability of an attempt is its expected make rate for that
shooter *if attempts did not depend on earlier outcomes*. The adjusted tests
(:mod:`streakwise.analysis.adjusted`) and the hot-state model
(:mod:`streakwise.analysis.hotstate`) use it.

Game-to-game form is left out on purpose: the adjusted nulls condition on each
game's number of makes, which absorbs it.
"""

from __future__ import annotations

import math
import numbers
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import special, stats

__all__ = [
    "COVARIATES",
    "DifficultyModelResult",
    "DifficultyModelWarning",
    "fit_difficulty_model",
]

#: Covariates the model knows, in the order they enter.
COVARIATES = ("distance", "points", "defender_distance", "period", "clock_s", "score_margin", "home")

ENGINES = ("logit", "glm")
POOLED_PLAYER = "(pooled)"

#: A decile whose make rate is off its mean fitted probability by more than
#: this much AND by more than ``CALIBRATION_SE`` binomial standard errors
#: makes the fit "poorly calibrated".
CALIBRATION_TOLERANCE = 0.05
CALIBRATION_SE = 3.0
#: The fit "barely beats the base rate" when its log loss is less than this
#: share below the log loss of the league's base rate.
MIN_LOG_LOSS_GAIN = 0.01

_CAVEATS = (
    "The model adjusts only for the covariates recorded; anything else that makes an "
    "attempt harder (a tired shooter, a double team) is not in it.",
    "Game-to-game form is not in the model on purpose: the adjusted tests condition on "
    "each game's number of makes, which absorbs it. Coefficients are therefore "
    "population-averaged (slightly attenuated towards 0).",
    "No streak terms: the fitted probability is what an attempt's difficulty predicts if "
    "attempts did not depend on earlier outcomes.",
)


class DifficultyModelWarning(UserWarning):
    """Covariates are missing, or the difficulty model fits poorly."""


@dataclass(frozen=True, eq=False)
class DifficultyModelResult:
    """A fitted difficulty model.

    Attributes
    ----------
    formula : str
        The model in patsy notation (``made ~ 0 + C(player) + ...``).
    engine : {'logit', 'glm'}
        statsmodels ``Logit`` or ``GLM(Binomial)``.
    covariates : tuple of str
        Covariates in the model.
    missing_covariates : tuple of str
        Known covariates absent from the data (or entirely missing).
    imputed_covariates : tuple of str
        Covariates missing on some attempts: filled with the median, with an
        indicator term ``<name>_missing``.
    splines : tuple of str
        Covariates entered as natural cubic splines (``cr``, ``spline_df``
        degrees of freedom); the others enter linearly, ``points`` as a factor.
    spline_df : int
    coefficients : DataFrame
        One row per covariate term: ``term``, ``estimate``, ``se``, ``z``,
        ``p_value`` (log-odds scale; player effects not included).
    player_effects : Series
        Log-odds of a make for each player at the covariates' zero / centre
        (players with too few attempts share :data:`POOLED_PLAYER`).
    pooled_players : tuple of str
        Players sharing the pooled effect.
    fitted_probability : ndarray of float
        Fitted make probability of every attempt, in the input frame's row
        order.
    index : pandas.Index
        The input frame's index (aligned with ``fitted_probability``).
    n_attempts, n_players : int
    log_loss : float
        Mean negative log-likelihood per attempt.
    base_log_loss : float
        The same for the league's base rate alone (one probability for all).
    calibration : DataFrame
        By decile of fitted probability: ``decile``, ``attempts``,
        ``mean_fitted``, ``make_rate``, ``difference``, ``se``.
    converged : bool
    warnings : tuple of str
        Everything worth warning about (also issued with ``warnings.warn``).
    """

    formula: str
    engine: str
    covariates: tuple[str, ...]
    missing_covariates: tuple[str, ...]
    imputed_covariates: tuple[str, ...]
    splines: tuple[str, ...]
    spline_df: int
    coefficients: pd.DataFrame
    player_effects: pd.Series
    pooled_players: tuple[str, ...]
    fitted_probability: np.ndarray
    index: pd.Index
    n_attempts: int
    n_players: int
    log_loss: float
    base_log_loss: float
    calibration: pd.DataFrame
    converged: bool
    warnings: tuple[str, ...]
    _params: np.ndarray = field(repr=False, default=None)
    _covariance: np.ndarray = field(repr=False, default=None)
    _covariate_columns: slice = field(repr=False, default=None)
    _design_info: object = field(repr=False, default=None)
    _data: dict = field(repr=False, default=None)

    @property
    def log_loss_gain(self):
        """Share by which the log loss is below the base rate's: ``1 - log_loss / base_log_loss``."""
        return 1.0 - self.log_loss / self.base_log_loss if self.base_log_loss > 0 else float("nan")

    def fitted(self):
        """Fitted probabilities as a Series on the input frame's index."""
        return pd.Series(self.fitted_probability, index=self.index, name="fitted_probability")

    def average_slope(self, covariate):
        """Average change in the log-odds per unit of ``covariate``, with its standard error.

        For a linear term this is its coefficient. For a spline it is the
        derivative of the fitted curve averaged over the attempts (a central
        difference of the spline basis), with a delta-method standard error:
        the average derivative is linear in the coefficients,
        :math:`\\bar d = g^\\top \\beta`, so :math:`\\operatorname{se} =
        \\sqrt{g^\\top V g}`.

        Parameters
        ----------
        covariate : str
            A covariate in the model (not ``points``, a factor).

        Returns
        -------
        (float, float)
            Estimate and standard error.
        """
        if covariate not in self.covariates or covariate == "points":
            raise ValueError(
                f"`covariate` must be a numeric covariate of the model, one of "
                f"{', '.join(c for c in self.covariates if c != 'points')} (got {covariate!r})"
            )
        import patsy

        values = self._data[covariate]
        step = 1e-3 * max(1.0, float(np.nanstd(values)))
        gradient = np.zeros(len(self._params))
        columns = self._covariate_columns
        for sign in (1.0, -1.0):
            data = dict(self._data)
            data[covariate] = values + sign * step
            (design,) = patsy.build_design_matrices([self._design_info], data)
            gradient[columns] += sign * np.asarray(design)[:, 1:].mean(axis=0) / (2.0 * step)
        estimate = float(gradient @ self._params)
        se = float(np.sqrt(max(gradient @ self._covariance @ gradient, 0.0)))
        return estimate, se

    def to_frame(self):
        """One row per covariate term: ``term``, ``estimate``, ``se``, ``z``, ``p_value``."""
        return self.coefficients.copy()

    def summary(self):
        """Readable text: terms, fit quality, calibration, warnings and caveats."""
        lines = [
            f"Difficulty model ({self.engine}): {self.n_attempts:,} attempts, {self.n_players} players",
            f"  covariates: {', '.join(self.covariates) or 'none'}"
            + (f" (splines: {', '.join(self.splines)})" if self.splines else ""),
        ]
        if self.missing_covariates:
            lines.append(f"  missing: {', '.join(self.missing_covariates)}")
        lines.append(
            f"  log loss {self.log_loss:.4f} vs {self.base_log_loss:.4f} for the base rate "
            f"({100 * self.log_loss_gain:.1f}% lower)"
        )
        lines.append("")
        lines.append(f"  {'term':<44} {'estimate':>9} {'se':>8} {'p':>8}")
        for row in self.coefficients.itertuples(index=False):
            lines.append(f"  {row.term[:44]:<44} {row.estimate:>9.4f} {row.se:>8.4f} {row.p_value:>8.4f}")
        for name in self.splines:
            slope, se = self.average_slope(name)
            lines.append(f"  {name + ' (average slope of the spline)':<44} {slope:>9.4f} {se:>8.4f}")
        lines.append("")
        lines.append("  calibration by decile of fitted probability:")
        lines.append(f"  {'decile':>6} {'attempts':>9} {'fitted':>7} {'made':>7}")
        for row in self.calibration.itertuples(index=False):
            lines.append(f"  {row.decile:>6} {row.attempts:>9,} {row.mean_fitted:>7.3f} {row.make_rate:>7.3f}")
        if self.warnings:
            lines.append("")
            lines.append("Warnings:")
            lines.extend(f"  - {text}" for text in self.warnings)
        lines.append("")
        lines.append("Caveats:")
        lines.extend(f"  {i}. {text}" for i, text in enumerate(_CAVEATS, start=1))
        return "\n".join(lines)


# ---------------------------------------------------------------------------
# Validation
# ---------------------------------------------------------------------------


def _fit_difficulty_model_iv(frame, covariates, splines, spline_df, engine, min_player_attempts):
    if not isinstance(frame, pd.DataFrame):
        raise ValueError(f"`frame` must be a pandas DataFrame of attempts (got {type(frame).__name__})")
    needed = [c for c in ("player", "made") if c not in frame.columns]
    if needed:
        raise ValueError(f"`frame` needs the columns player and made (missing {', '.join(needed)})")
    if len(frame) == 0:
        raise ValueError("`frame` has no attempts")
    if frame["made"].isna().any():
        raise ValueError("`made` has missing values; every attempt needs an outcome")
    if covariates is None:
        covariates = COVARIATES
    elif isinstance(covariates, str) or not isinstance(covariates, Sequence):
        raise ValueError(f"`covariates` must be a sequence of names (got {covariates!r})")
    unknown = [c for c in covariates if c not in COVARIATES]
    if unknown:
        raise ValueError(f"`covariates` must be among {', '.join(COVARIATES)} (got {unknown[0]!r})")
    if isinstance(splines, str) or not isinstance(splines, Sequence):
        raise ValueError(f"`splines` must be a sequence of covariate names (got {splines!r})")
    bad = [s for s in splines if s not in COVARIATES or s in ("points", "home")]
    if bad:
        raise ValueError(f"`splines` must name numeric covariates such as 'distance' (got {bad[0]!r})")
    if isinstance(spline_df, bool) or not isinstance(spline_df, numbers.Integral) or not 3 <= spline_df <= 10:
        raise ValueError(f"`spline_df` must be an integer from 3 to 10 (got {spline_df!r})")
    if engine not in ENGINES:
        raise ValueError(f"`engine` must be one of {', '.join(map(repr, ENGINES))} (got {engine!r})")
    if isinstance(min_player_attempts, bool) or not isinstance(min_player_attempts, numbers.Integral) or min_player_attempts < 1:
        raise ValueError(f"`min_player_attempts` must be an integer >= 1 (got {min_player_attempts!r})")
    return tuple(covariates), tuple(splines), int(spline_df), int(min_player_attempts)


# ---------------------------------------------------------------------------
# Building the design
# ---------------------------------------------------------------------------


def _numeric(series):
    return pd.to_numeric(series.astype("float64") if series.dtype == "boolean" else series, errors="coerce").to_numpy(
        dtype=float, na_value=np.nan
    )


def _player_levels(player, made, min_attempts):
    """Player labels for the fixed effects: small or one-sided players share one level."""
    frame = pd.DataFrame({"player": player, "made": made})
    grouped = frame.groupby("player", sort=True)["made"].agg(["size", "sum"])
    keep = (grouped["size"] >= min_attempts) & (grouped["sum"] > 0) & (grouped["sum"] < grouped["size"])
    pooled = tuple(str(p) for p in grouped.index[~keep])
    labels = np.where(np.isin(player, list(pooled)), POOLED_PLAYER, player).astype(object)
    return labels, pooled


def _terms(data, covariates, splines, spline_df):
    terms, used = [], []
    for name in covariates:
        values = data[name]
        distinct = np.unique(values[~np.isnan(values)]) if values.dtype.kind == "f" else np.unique(values)
        if len(distinct) < 2:
            continue  # constant: nothing to estimate
        used.append(name)
        if name == "points":
            data["points"] = np.array([f"{v:g}" for v in values], dtype=object)
            terms.append("C(points)")
        elif name in splines and len(distinct) > 2 * spline_df:
            terms.append(f'cr({name}, df={spline_df}, constraints="center")')
        else:
            terms.append(name)
    return terms, used


def _check_rank(design, names):
    """Refuse a design whose columns are linearly dependent (cheap: on the Gram matrix)."""
    gram = design.T @ design
    scale = np.sqrt(np.clip(np.diag(gram), 1e-300, None))
    eigenvalues, vectors = np.linalg.eigh(gram / np.outer(scale, scale))
    if eigenvalues[0] < 1e-10 * max(eigenvalues[-1], 1.0):
        weights = np.abs(vectors[:, 0])
        involved = [names[i] for i in np.argsort(weights)[::-1][:3] if weights[i] > 0.1]
        raise ValueError(
            "the covariates are linearly dependent, so the model cannot separate them "
            f"(involving {', '.join(involved)}); leave one out with `covariates`"
        )


def _calibration(probability, made):
    deciles = pd.qcut(pd.Series(probability), 10, labels=False, duplicates="drop")
    frame = pd.DataFrame({"decile": deciles.to_numpy() + 1, "p": probability, "made": made})
    table = frame.groupby("decile").agg(attempts=("p", "size"), mean_fitted=("p", "mean"), make_rate=("made", "mean"))
    table = table.reset_index()
    table["difference"] = table["make_rate"] - table["mean_fitted"]
    table["se"] = np.sqrt(table["mean_fitted"] * (1 - table["mean_fitted"]) / table["attempts"])
    table["attempts"] = table["attempts"].astype(np.int64)
    table["decile"] = table["decile"].astype(np.int64)
    return table


def fit_difficulty_model(
    frame,
    *,
    covariates=None,
    splines=("distance",),
    spline_df=4,
    engine="logit",
    min_player_attempts=30,
):
    r"""Fit the league's logistic difficulty model with one effect per player.

    Parameters
    ----------
    frame : DataFrame
        Canonical attempts of ONE attempt type (``player``, ``made`` and any
        covariates), all players together.
    covariates : sequence of str, optional
        Covariates to use when present; default all of :data:`COVARIATES`.
    splines : sequence of str, optional
        Covariates entered as natural cubic regression splines (patsy ``cr``,
        centred) instead of straight lines; default ``("distance",)``.
    spline_df : int, optional
        Degrees of freedom of each spline (3-10, default 4).
    engine : {'logit', 'glm'}, optional
        statsmodels ``Logit`` (Newton) or ``GLM`` with a binomial family
        (IRLS); the same model and estimates.
    min_player_attempts : int, optional
        Players with fewer attempts, or with no makes or no misses (whose own
        effect would be infinite), share one pooled effect. Default 30.

    Returns
    -------
    DifficultyModelResult

    Warns
    -----
    DifficultyModelWarning
        When covariates are missing (naming them), when there are none, when
        a covariate is missing on some attempts, when a decile of fitted
        probability is off by more than ``CALIBRATION_TOLERANCE`` (and more
        than ``CALIBRATION_SE`` standard errors), when the model barely beats
        the base rate, or when the fit did not converge.

    Notes
    -----
    The model is

    .. math:: \operatorname{logit} P(Y_{ij} = 1) = \alpha_i + \sum_k f_k(x_{ijk}),

    with :math:`\alpha_i` a fixed effect of player :math:`i` and :math:`f_k`
    linear, a factor (``points``), or a natural cubic spline (linear beyond
    the boundary knots). No streak term enters: the fitted probability is the
    attempt's expected rate if outcomes did not depend on earlier ones.
    Game-to-game form :math:`u_{ig}` is not modelled; omitting a random
    intercept of variance :math:`\sigma^2` attenuates logistic coefficients
    by about :math:`1/\sqrt{1 + 0.346\,\sigma^2}` [2]_, and the adjusted
    nulls, which condition on each game's makes, are unaffected by it.
    A covariate missing on some attempts is filled with its median, with an
    indicator term (the missing-indicator method: a nuisance adjustment).

    Fit quality: the log loss :math:`-\frac1n \sum \{y \log \hat p + (1-y)
    \log(1-\hat p)\}` against that of the base rate, and the make rate by
    decile of :math:`\hat p` against the mean :math:`\hat p`.

    References
    ----------
    .. [1] McCullagh, P. & Nelder, J. A. (1989). Generalized Linear Models,
       2nd ed., ch. 4. Chapman & Hall.
    .. [2] Zeger, S. L., Liang, K.-Y. & Albert, P. S. (1988). Models for
       longitudinal data: a generalized estimating equation approach.
       Biometrics 44, 1049-1060.
    .. [3] Wood, S. N. (2017). Generalized Additive Models, 2nd ed., sec. 5.3
       (cubic regression splines). CRC Press.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> from streakwise.analysis.difficulty import fit_difficulty_model
    >>> rng = np.random.default_rng(3)
    >>> n = 4000
    >>> distance = rng.uniform(1, 27, n)
    >>> player = rng.choice(["a", "b", "c"], n)
    >>> p = 1 / (1 + np.exp(-(0.2 - 0.05 * (distance - 15))))
    >>> frame = pd.DataFrame({"player": player, "made": rng.random(n) < p, "distance": distance})
    >>> import warnings
    >>> with warnings.catch_warnings():
    ...     warnings.simplefilter("ignore")
    ...     model = fit_difficulty_model(frame)
    >>> model.missing_covariates[:2]
    ('points', 'defender_distance')
    >>> slope, se = model.average_slope("distance")
    >>> bool(abs(slope + 0.05) < 4 * se)
    True
    """
    covariates, splines, spline_df, min_player_attempts = _fit_difficulty_model_iv(
        frame, covariates, splines, spline_df, engine, min_player_attempts
    )
    import patsy
    import statsmodels.api as sm

    notes = []
    made = frame["made"].to_numpy(dtype=bool).astype(float)
    player = frame["player"].astype(str).to_numpy(dtype=object)
    data = {}
    missing, imputed = [], []
    for name in covariates:
        if name not in frame.columns:
            missing.append(name)
            continue
        values = _numeric(frame[name])
        absent = np.isnan(values)
        if absent.all():
            missing.append(name)
            continue
        if name == "points" and np.allclose(values[~absent], np.round(values[~absent])):
            values = np.round(values)
        if absent.any():
            values = np.where(absent, np.nanmedian(values), values)
            data[f"{name}_missing"] = absent.astype(float)
            imputed.append(name)
            notes.append(
                f"{name} is missing on {int(absent.sum()):,} of {len(values):,} attempts: filled with the "
                f"median and an indicator term"
            )
        data[name] = values
    present = [c for c in covariates if c in data]
    terms, used = _terms(data, present, splines, spline_df)
    terms += [f"{name}_missing" for name in imputed if name in used]
    if missing:
        notes.insert(
            0,
            f"covariates missing from the data: {', '.join(missing)}; the model adjusts only for "
            f"{', '.join(used) if used else 'nothing'}",
        )
    if not used:
        notes.append(
            "no shot covariates: the model holds only player effects and says nothing about shot "
            "difficulty; adjusted tests then reduce to within-game tests"
        )
    labels, pooled = _player_levels(player, made, min_player_attempts)
    if pooled:
        notes.append(
            f"{len(pooled)} player(s) with fewer than {min_player_attempts} attempts, or no makes or no "
            f"misses, share one pooled player effect"
        )
    levels = sorted(set(labels.tolist()))
    codes = pd.Categorical(labels, categories=levels).codes
    players_design = np.zeros((len(made), len(levels)))
    players_design[np.arange(len(made)), codes] = 1.0
    if terms:
        # built with an intercept (so the factor gets treatment coding), which is then
        # dropped: the player effects take its place
        covariate_design = patsy.dmatrix("1 + " + " + ".join(terms), data, return_type="matrix",
                                         NA_action="raise")
        design_info = covariate_design.design_info
        covariate_names = list(design_info.column_names)[1:]
        covariate_matrix = np.asarray(covariate_design)[:, 1:]
    else:
        design_info, covariate_names, covariate_matrix = None, [], np.zeros((len(made), 0))
    design = np.hstack([players_design, covariate_matrix])
    names = [f"player[{level}]" for level in levels] + covariate_names
    _check_rank(design, names)
    formula = "made ~ 0 + C(player)" + ("".join(f" + {t}" for t in terms))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # convergence is checked below
        if engine == "logit":
            # the player columns add up to 1 (an implicit constant) and the rank was checked
            # above: skipping statsmodels' own checks saves two decompositions of the design
            fit = sm.Logit(made, design, hasconst=True, check_rank=False).fit(method="newton", maxiter=100, disp=0)
            converged = bool(fit.mle_retvals.get("converged", True))
        else:
            fit = sm.GLM(made, design, family=sm.families.Binomial(), hasconst=True).fit(maxiter=100)
            converged = bool(getattr(fit, "converged", True))
    params = np.asarray(fit.params, dtype=float)
    covariance = np.asarray(fit.cov_params(), dtype=float)
    se = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    probability = special.expit(design @ params)
    eps = 1e-15
    clipped = np.clip(probability, eps, 1 - eps)
    log_loss = float(-np.mean(made * np.log(clipped) + (1 - made) * np.log1p(-clipped)))
    base = float(made.mean())
    base_log_loss = float(-(base * math.log(base) + (1 - base) * math.log(1 - base))) if 0 < base < 1 else 0.0
    calibration = _calibration(probability, made)
    far = (calibration["difference"].abs() > CALIBRATION_TOLERANCE) & (
        calibration["difference"].abs() > CALIBRATION_SE * calibration["se"]
    )
    for row in calibration[far].itertuples(index=False):
        notes.append(
            f"poor calibration: in decile {row.decile} of fitted probability the make rate is "
            f"{row.make_rate:.3f} against {row.mean_fitted:.3f} expected (off by more than "
            f"{CALIBRATION_TOLERANCE} and {CALIBRATION_SE:g} standard errors)"
        )
    if used and base_log_loss > 0 and 1 - log_loss / base_log_loss < MIN_LOG_LOSS_GAIN:
        notes.append(
            f"the model barely beats the base rate (log loss {log_loss:.4f} vs {base_log_loss:.4f}, "
            f"less than {100 * MIN_LOG_LOSS_GAIN:g}% lower): the covariates say little about makes"
        )
    if not converged:
        notes.append("the fit did not converge: treat the fitted probabilities with care")
    for text in notes:
        warnings.warn(text, DifficultyModelWarning, stacklevel=2)
    n_players = len(levels)
    covariate_slice = slice(n_players, len(names))
    z = np.divide(params, se, out=np.full_like(params, np.nan), where=se > 0)
    table = pd.DataFrame(
        {
            "term": names[n_players:],
            "estimate": params[covariate_slice],
            "se": se[covariate_slice],
            "z": z[covariate_slice],
            "p_value": 2 * stats.norm.sf(np.abs(z[covariate_slice])),
        }
    )
    return DifficultyModelResult(
        formula=formula,
        engine=engine,
        covariates=tuple(used),
        missing_covariates=tuple(missing),
        imputed_covariates=tuple(imputed),
        splines=tuple(s for s in splines if any(t.startswith(f"cr({s},") for t in terms)),
        spline_df=spline_df,
        coefficients=table,
        player_effects=pd.Series(params[:n_players], index=pd.Index(levels, name="player"), name="effect"),
        pooled_players=pooled,
        fitted_probability=probability,
        index=frame.index,
        n_attempts=int(len(made)),
        n_players=int(pd.unique(player).size),
        log_loss=log_loss,
        base_log_loss=base_log_loss,
        calibration=calibration,
        converged=converged,
        warnings=tuple(notes),
        _params=params,
        _covariance=covariance,
        _covariate_columns=covariate_slice,
        _design_info=design_info,
        _data=data,
    )
