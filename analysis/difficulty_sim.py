"""Sampling shot difficulty, and shooters whose next attempt depends on the last one.

Pure numpy/scipy, like :mod:`streakwise.analysis.simulate`, which holds the
outcome models (independent attempts, a hidden hot/cold state, dependence on
the previous outcome). This module adds what a realistic shot log needs on
top of them:

- :func:`sample_shot_covariates` draws where attempts come from (distance,
  points, distance to the nearest defender) for a shooter's mix of shot zones,
  optionally shifted towards harder attempts;
- :class:`DifficultyModel` is a logistic difficulty model written as
  coefficients and reference values, whose :meth:`~DifficultyModel.linear_predictor`
  is the logit offset that the outcome simulators take;
- :func:`simulate_outcome_dependent` draws sequences in which every attempt
  has two candidate linear predictors, one used after a make and one
  otherwise. That covers a previous-outcome (Markov) effect on top of shot
  difficulty, and shot selection (harder attempts after makes), alone or
  together with a hidden state.

The demo league generator and the power planner draw from here.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from ._values import show_value as _show


__all__ = [
    "DifficultyModel",
    "OutcomeDependentDraw",
    "SHOT_ZONES",
    "ShotCovariates",
    "ShotZone",
    "sample_shot_covariates",
    "simulate_outcome_dependent",
]


@dataclass(frozen=True)
class ShotZone:
    """A band of shot distances, and how closely attempts from it are guarded.

    Attributes
    ----------
    name : str
        Plain name of the band.
    low, high : float
        Distances (feet) of attempts from this band are uniform on [low, high).
    defender_mean : float
        Mean distance (feet) from the shooter to the nearest defender.
    """

    name: str
    low: float
    high: float
    defender_mean: float


#: The four distance bands, nearest first. Zone shares given to
#: :func:`sample_shot_covariates` follow this order.
SHOT_ZONES: tuple[ShotZone, ...] = (
    ShotZone("at the rim", 0.5, 4.0, 2.6),
    ShotZone("short", 4.0, 14.0, 3.6),
    ShotZone("middle", 14.0, 23.0, 4.4),
    ShotZone("beyond the arc", 23.0, 27.5, 5.6),
)

_DEFENDER_SHAPE = 4.0  # gamma shape of the defender distance (coefficient of variation 0.5)
_DISTANCE_LIMITS = (0.5, 35.0)
_DEFENDER_LIMITS = (0.3, 25.0)


@dataclass(frozen=True)
class ShotCovariates:
    """Where a batch of attempts came from.

    Attributes
    ----------
    distance : ndarray of float
        Shot distance in feet, rounded to 0.1.
    points : ndarray of int64
        2, or 3 when ``distance`` is at least the three-point distance.
    defender_distance : ndarray of float
        Distance to the nearest defender in feet, rounded to 0.1.
    """

    distance: np.ndarray
    points: np.ndarray
    defender_distance: np.ndarray

    def to_frame(self):
        """One row per attempt: ``distance``, ``points``, ``defender_distance``."""
        import pandas as pd

        return pd.DataFrame(
            {
                "distance": np.ravel(self.distance),
                "points": np.ravel(self.points),
                "defender_distance": np.ravel(self.defender_distance),
            }
        )


@dataclass(frozen=True)
class OutcomeDependentDraw:
    """Sequences drawn by :func:`simulate_outcome_dependent`.

    Attributes
    ----------
    made : ndarray of bool, shape (n_sequences, n_attempts)
        Outcome of every attempt (True = make).
    after_make : ndarray of bool, shape (n_sequences, n_attempts)
        Whether the attempt followed a make in its sequence (then it was drawn
        with the after-make linear predictor). False for every first attempt.
    probability : ndarray of float, shape (n_sequences, n_attempts)
        The make probability each attempt was drawn with.
    """

    made: np.ndarray
    after_make: np.ndarray
    probability: np.ndarray

    def to_frame(self):
        """One row per attempt: ``sequence``, ``seq``, ``made``, ``after_make``, ``probability``."""
        import pandas as pd

        n_sequences, n_attempts = self.made.shape
        return pd.DataFrame(
            {
                "sequence": np.repeat(np.arange(n_sequences), n_attempts),
                "seq": np.tile(np.arange(n_attempts), n_sequences),
                "made": np.ravel(self.made),
                "after_make": np.ravel(self.after_make),
                "probability": np.ravel(self.probability),
            }
        )


@dataclass(frozen=True)
class DifficultyModel:
    r"""A logistic shot-difficulty model: coefficients and reference values.

    The model's part of an attempt's log-odds of a make is

    .. math:: \eta_{\text{difficulty}} = \sum_k \beta_k (x_k - r_k),

    with one coefficient :math:`\beta_k` and reference value :math:`r_k` per
    covariate. It is zero for an attempt at the reference values, so a
    shooter's own term (skill, game form, hot state) is the log-odds of a make
    on a reference attempt. A covariate may have coefficient 0: present in the
    data, no effect on makes.

    Attributes
    ----------
    coefficients : mapping of str to float
        :math:`\beta_k` per covariate name (log-odds per unit).
    reference : mapping of str to float
        :math:`r_k` per covariate name; the same names as ``coefficients``.
    """

    coefficients: Mapping[str, float]
    reference: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self):
        coefficients, reference = _difficulty_model_iv(self.coefficients, self.reference)
        object.__setattr__(self, "coefficients", coefficients)
        object.__setattr__(self, "reference", reference)

    def linear_predictor(self, covariates):
        """The difficulty part of the log-odds of every attempt.

        Parameters
        ----------
        covariates : mapping of str to array_like
            One array per covariate of the model (extra names are ignored);
            the arrays broadcast together. Booleans count as 0/1. No NaN.

        Returns
        -------
        ndarray of float
            :math:`\\sum_k \\beta_k (x_k - r_k)`, of the broadcast shape.

        Examples
        --------
        >>> from streakwise.analysis.difficulty_sim import DifficultyModel
        >>> model = DifficultyModel({"distance": -0.05}, {"distance": 15.0})
        >>> model.linear_predictor({"distance": [5.0, 15.0, 25.0]})
        array([ 0.5,  0. , -0.5])
        """
        arrays = _linear_predictor_iv(self, covariates)
        total = np.zeros(np.broadcast_shapes(*(a.shape for a in arrays.values())), dtype=float)
        for name, values in arrays.items():
            beta = self.coefficients[name]
            if beta != 0.0:
                total = total + beta * (values - self.reference[name])
        return total

    def to_dict(self):
        """``{"coefficients": {...}, "reference": {...}}`` with plain floats."""
        return {"coefficients": dict(self.coefficients), "reference": dict(self.reference)}


# ---------------------------------------------------------------------------
# Validation helpers
# ---------------------------------------------------------------------------


def _finite_real(name, value):
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise ValueError(f"`{name}` must be a finite number (got {_show(value)})")
    value = float(value)
    if not math.isfinite(value):
        raise ValueError(f"`{name}` must be a finite number (got {_show(value)})")
    return value


def _difficulty_model_iv(coefficients, reference):
    if not isinstance(coefficients, Mapping) or not coefficients:
        raise ValueError(
            "`coefficients` must be a non-empty mapping of covariate name to "
            f"coefficient (got {_show(coefficients)})"
        )
    if not isinstance(reference, Mapping):
        raise ValueError(
            "`reference` must be a mapping of covariate name to reference value "
            f"(got {_show(reference)})"
        )
    extra = sorted(set(reference) - set(coefficients), key=str)
    if extra:
        raise ValueError(
            f"`reference` names a covariate with no coefficient (got {extra[0]!r})"
        )
    checked_coefficients = {}
    checked_reference = {}
    for name, beta in coefficients.items():
        if not isinstance(name, str) or not name:
            raise ValueError(f"covariate names must be non-empty text (got {_show(name)})")
        checked_coefficients[name] = _finite_real(f"coefficients[{name!r}]", beta)
        checked_reference[name] = _finite_real(f"reference[{name!r}]", reference.get(name, 0.0))
    return checked_coefficients, checked_reference


def _linear_predictor_iv(model, covariates):
    if not isinstance(covariates, Mapping):
        raise ValueError(
            f"`covariates` must be a mapping of covariate name to values (got {_show(covariates)})"
        )
    missing = [name for name in model.coefficients if name not in covariates]
    if missing:
        raise ValueError(
            f"`covariates` must hold every covariate of the model (missing {missing[0]!r})"
        )
    arrays = {}
    for name in model.coefficients:
        try:
            values = np.asarray(covariates[name], dtype=float)
        except (TypeError, ValueError):
            raise ValueError(
                f"`covariates[{name!r}]` must be numbers (got {_show(covariates[name])})"
            ) from None
        if np.isnan(values).any():
            raise ValueError(f"`covariates[{name!r}]` must not contain NaN (got nan)")
        arrays[name] = values
    try:
        np.broadcast_shapes(*(a.shape for a in arrays.values()))
    except ValueError:
        shapes = ", ".join(f"{n}: {a.shape}" for n, a in arrays.items())
        raise ValueError(f"`covariates` must broadcast together (got shapes {shapes})") from None
    return arrays


def _sample_shot_covariates_iv(shape, zone_shares, distance_shift, defender_shift,
                               three_point_distance):
    if isinstance(shape, numbers.Integral) and not isinstance(shape, (bool, np.bool_)):
        shape = (int(shape),)
    try:
        shape = tuple(int(n) for n in shape)
    except (TypeError, ValueError):
        raise ValueError(
            f"`shape` must be a count or a tuple of counts (got {_show(shape)})"
        ) from None
    if any(n < 0 for n in shape):
        raise ValueError(f"`shape` must not hold negative counts (got {shape})")
    try:
        shares = np.asarray(zone_shares, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(
            f"`zone_shares` must be {len(SHOT_ZONES)} numbers (got {_show(zone_shares)})"
        ) from None
    if shares.shape != (len(SHOT_ZONES),):
        raise ValueError(
            f"`zone_shares` must be {len(SHOT_ZONES)} numbers, one per zone of "
            f"SHOT_ZONES (got shape {shares.shape})"
        )
    if not (np.isfinite(shares).all() and (shares >= 0).all()) or not abs(shares.sum() - 1.0) < 1e-9:
        raise ValueError(
            f"`zone_shares` must be non-negative and sum to 1 (got {shares.tolist()})"
        )
    distance_shift = _finite_real("distance_shift", distance_shift)
    defender_shift = _finite_real("defender_shift", defender_shift)
    three_point_distance = _finite_real("three_point_distance", three_point_distance)
    if three_point_distance <= 0:
        raise ValueError(
            f"`three_point_distance` must be positive (got {_show(three_point_distance)})"
        )
    return shape, shares, distance_shift, defender_shift, three_point_distance


def _simulate_outcome_dependent_iv(linear_predictor, linear_predictor_after_make):
    arrays = []
    for name, value in (
        ("linear_predictor", linear_predictor),
        ("linear_predictor_after_make", linear_predictor_after_make),
    ):
        try:
            array = np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(f"`{name}` must be real numbers (got {_show(value)})") from None
        if np.isnan(array).any():
            raise ValueError(f"`{name}` must not contain NaN (got nan)")
        arrays.append(array)
    eta, eta_after_make = arrays
    if eta.ndim != 2:
        raise ValueError(
            "`linear_predictor` must be 2-d, shape (n_sequences, n_attempts) "
            f"(got shape {eta.shape})"
        )
    try:
        eta_after_make = np.broadcast_to(eta_after_make, eta.shape)
    except ValueError:
        raise ValueError(
            "`linear_predictor_after_make` must broadcast to the shape of "
            f"`linear_predictor` {eta.shape} (got shape {eta_after_make.shape})"
        ) from None
    return eta, eta_after_make


# ---------------------------------------------------------------------------
# Public functions
# ---------------------------------------------------------------------------


def sample_shot_covariates(
    shape,
    zone_shares,
    *,
    distance_shift=0.0,
    defender_shift=0.0,
    three_point_distance=23.0,
    rng=None,
):
    r"""Draw shot distance, points and defender distance for a batch of attempts.

    Parameters
    ----------
    shape : int or tuple of int
        Shape of the batch (for sequences: ``(n_sequences, n_attempts)``).
    zone_shares : array_like of 4 floats
        Share of attempts from each zone of :data:`SHOT_ZONES` (rim, short,
        middle, beyond the arc); non-negative, summing to 1.
    distance_shift : float, optional
        Feet added to every distance (then kept in [0.5, 35]); positive for
        longer attempts. Default 0.
    defender_shift : float, optional
        Feet added to every defender distance (then kept in [0.3, 25]);
        negative for tighter defence. Default 0.
    three_point_distance : float, optional
        Attempts from at least this far (after rounding) are worth 3 points.
        Default 23 feet.
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.

    Returns
    -------
    ShotCovariates
        ``distance`` and ``defender_distance`` rounded to 0.1 foot, and
        ``points``, each of ``shape``.

    Notes
    -----
    Each attempt's zone :math:`z` is drawn with probabilities ``zone_shares``;
    its distance is uniform on the zone's [low, high) plus ``distance_shift``,
    and its defender distance is gamma distributed with shape 4 and the zone's
    mean, plus ``defender_shift``. Rounding happens before the points are set,
    so a logistic model fitted to the rounded values sees exactly the values
    the makes were drawn from. Shifting both (longer, tighter) gives the harder
    attempts a shooter may choose after a make.

    References
    ----------
    .. [1] Devroye, L. (1986). Non-Uniform Random Variate Generation, ch. II
       (the inversion method) and ch. IX (the gamma distribution). Springer.

    Examples
    --------
    >>> from streakwise.analysis.difficulty_sim import sample_shot_covariates
    >>> shots = sample_shot_covariates((200, 15), [0.3, 0.2, 0.2, 0.3], rng=5)
    >>> shots.distance.shape, int(shots.points.min()), int(shots.points.max())
    ((200, 15), 2, 3)
    >>> bool(((shots.distance >= 23.0) == (shots.points == 3)).all())
    True
    """
    shape, shares, distance_shift, defender_shift, arc = _sample_shot_covariates_iv(
        shape, zone_shares, distance_shift, defender_shift, three_point_distance
    )
    rng = np.random.default_rng(rng)
    low = np.array([z.low for z in SHOT_ZONES])
    high = np.array([z.high for z in SHOT_ZONES])
    defender_mean = np.array([z.defender_mean for z in SHOT_ZONES])
    cumulative = np.cumsum(shares)
    cumulative[-1] = 1.0
    zone = np.searchsorted(cumulative, rng.random(shape), side="right")
    zone = np.minimum(zone, len(SHOT_ZONES) - 1)
    distance = low[zone] + (high[zone] - low[zone]) * rng.random(shape) + distance_shift
    distance = np.round(np.clip(distance, *_DISTANCE_LIMITS), 1)
    defender = rng.gamma(_DEFENDER_SHAPE, defender_mean[zone] / _DEFENDER_SHAPE) + defender_shift
    defender = np.round(np.clip(defender, *_DEFENDER_LIMITS), 1)
    points = np.where(distance >= arc, 3, 2).astype(np.int64)
    return ShotCovariates(distance=distance, points=points, defender_distance=defender)


def simulate_outcome_dependent(linear_predictor, linear_predictor_after_make, *, rng=None):
    r"""Draw sequences whose every attempt depends on whether the last one was made.

    Parameters
    ----------
    linear_predictor : array_like, shape (n_sequences, n_attempts)
        Log-odds of a make for each attempt when it is the first of its
        sequence or follows a miss. No NaN; -inf and inf give 0 and 1.
    linear_predictor_after_make : array_like
        Log-odds of a make for each attempt when it follows a make; broadcast
        to the shape of ``linear_predictor``.
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.

    Returns
    -------
    OutcomeDependentDraw
        ``made``, ``after_make`` (bool) and ``probability`` (float), each of
        shape ``(n_sequences, n_attempts)``.

    Notes
    -----
    With :math:`X_{s,t}` the outcome of attempt :math:`t` of sequence
    :math:`s`,

    .. math::

        P(X_{s,t} = 1 \mid X_{s,t-1}) =
        \operatorname{expit}\big(X_{s,t-1}\, \eta^{\text{make}}_{s,t}
        + (1 - X_{s,t-1})\, \eta_{s,t}\big),

    and :math:`X_{s,0}` uses :math:`\eta_{s,0}`. Two uses:

    - a previous-outcome effect on top of shot difficulty:
      :math:`\eta^{\text{make}} = \eta + \delta`. With constant :math:`\eta`
      this is the Markov model of
      :func:`~streakwise.analysis.simulate.simulate_markov` with
      ``rate_after_miss`` :math:`= \operatorname{expit}(\eta)` and
      ``rate_after_make`` :math:`= \operatorname{expit}(\eta + \delta)`,
      started at ``rate_after_miss``;
    - shot selection: each attempt has two candidate shots, a usual one and a
      harder one taken after a make (:func:`sample_shot_covariates` with a
      shift); ``after_make`` says which one was taken.

    The draw runs one step per attempt position, each step vectorised over all
    sequences, with one uniform draw per attempt: :math:`X = [U < p]`.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XV (Markov chains). Wiley.
    .. [2] Bocskocsky, A., Ezekowitz, J. & Stein, C. (2014). The hot hand: a
       new approach to an old "fallacy". MIT Sloan Sports Analytics
       Conference (players take harder attempts after makes).

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.difficulty_sim import simulate_outcome_dependent
    >>> eta = np.zeros((4000, 12))
    >>> draw = simulate_outcome_dependent(eta, eta + 0.2, rng=11)
    >>> draw.made.shape
    (4000, 12)
    >>> bool((draw.probability[draw.after_make] > 0.5).all())
    True
    >>> bool(draw.after_make[:, 0].any())
    False
    """
    eta, eta_after_make = _simulate_outcome_dependent_iv(
        linear_predictor, linear_predictor_after_make
    )
    rng = np.random.default_rng(rng)
    n_sequences, n_attempts = eta.shape
    uniform = rng.random((n_sequences, n_attempts))
    made = np.zeros((n_sequences, n_attempts), dtype=bool)
    after_make = np.zeros((n_sequences, n_attempts), dtype=bool)
    probability = np.empty((n_sequences, n_attempts), dtype=float)
    if n_attempts == 0:
        return OutcomeDependentDraw(made=made, after_make=after_make, probability=probability)
    p_usual = special.expit(eta)
    p_after_make = special.expit(eta_after_make)
    probability[:, 0] = p_usual[:, 0]
    made[:, 0] = uniform[:, 0] < probability[:, 0]
    for t in range(1, n_attempts):
        previous = made[:, t - 1]
        after_make[:, t] = previous
        probability[:, t] = np.where(previous, p_after_make[:, t], p_usual[:, t])
        made[:, t] = uniform[:, t] < probability[:, t]
    return OutcomeDependentDraw(made=made, after_make=after_make, probability=probability)
