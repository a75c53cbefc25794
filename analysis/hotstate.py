"""A hot-state model: two hidden states (hot and cold) that switch as a Markov chain.

Each attempt is a make with the probability of the state the shooter is in;
the state stays or switches from one attempt to the next, and every session
(game) starts from the chain's stationary distribution. Optionally the states
act on top of a difficulty model: the log-odds of a make are the attempt's
fitted log-odds (an offset) plus the state's effect.

:func:`fit_hot_state` fits the model by EM (Baum-Welch, scaled
forward-backward) from several starts, labels the state with the higher rate
"hot", gives the posterior probability of the hot state for every attempt,
intervals for the rates and stay probabilities, and tests the model against a
single state with the likelihood-ratio statistic. Game-to-game form alone
looks like hot and cold states, so the null keeps every game's makes: the
outcomes are shuffled within games (or, with a difficulty offset, redrawn by
conditional Bernoulli sampling given each game's makes) and the model refitted
on every draw.

Everything runs in batches: all starts of all null draws are fitted together,
sessions padded to one length with a mask, one loop over attempt positions.
:func:`hot_state_posterior` gives the forward-backward posterior for given
parameters.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import special, stats

from ._values import json_number as _number
from .conditional import (
    _check_count,
    _check_offsets,
    _padded,
    _resolve_rng,
    _show,
    sample_conditional_bernoulli,
)

__all__ = ["HotStateResult", "fit_hot_state", "hot_state_posterior"]

INTERVAL_METHODS = ("information", "bootstrap")
#: State log-odds are kept within +-6 (rates between 0.25% and 99.75% on an
#: attempt with offset 0): beyond that EM only crawls towards a state that
#: always makes or always misses, for a negligible gain in likelihood.
_LOGIT_LIMIT = 6.0
#: Stay probabilities are kept within expit(+-9) (a state lasting about 8,000
#: attempts already never changes inside a game); without a bound EM crawls
#: towards 1 on data whose "states" are whole games.
_STAY_LIMIT = 9.0
_RATE_FLOOR = 1e-9

#: Starting points (cold shift, hot shift, stay cold, stay hot) around the
#: one-state log-odds; the first ``n_starts`` are used, in this order.
_STARTS = (
    (-0.5, 0.5, 0.90, 0.90),
    (-1.0, 1.0, 0.80, 0.80),
    (-0.3, 0.3, 0.95, 0.95),
    (-0.8, 0.8, 0.60, 0.60),
    (-0.4, 0.8, 0.95, 0.85),
    (-0.8, 0.4, 0.85, 0.95),
    (-1.5, 1.5, 0.90, 0.90),
    (-0.2, 0.2, 0.70, 0.70),
)

_CAVEATS = (
    "Chance explains many streaks: a shooter with no hot hand also shows stretches the model "
    "calls hot. Read the posterior only together with the p-value.",
    "Game-to-game form looks like hot and cold states; the test keeps every game's makes, so "
    "only changes inside games count.",
    "Streakiness is not a cause: a hot state describes a pattern of makes and misses, not why it "
    "happened. Decisions about an athlete's wellbeing belong to licensed practitioners.",
)


# ---------------------------------------------------------------------------
# Result
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class HotStateResult:
    """The fitted hot-state model of one player, with its test against one state.

    Attributes
    ----------
    player : str or None
    attempts, sessions, makes : int
    hot_rate, cold_rate : float
        Make probability in each state. Without a difficulty offset these
        are the states' rates; with one, the state's probability averaged over
        the player's attempts, ``mean(expit(offset + effect))``.
    hot_effect, cold_effect : float
        The states' log-odds (added to the offset when there is one).
    stay_hot, stay_cold : float
        Probability of staying in the state from one attempt to the next.
    hot_share : float
        Stationary probability of the hot state (where every session starts).
    intervals : dict
        ``{"hot_rate": (low, high), "cold_rate": ..., "stay_hot": ...,
        "stay_cold": ...}`` at ``confidence_level`` (None where undefined).
    interval_method : {'information', 'bootstrap'}
    confidence_level : float
    log_likelihood, log_likelihood_one_state : float
    lr_statistic : float
        ``2 (log_likelihood - log_likelihood_one_state)``, at least 0.
    p_value, p_value_se : float or None
        ``(b + 1)/(m + 1)`` over the m null refits, and its Monte Carlo
        standard error (None with no permutations).
    null_mean_lr : float or None
        Mean of the statistic over the null draws.
    permutations : int
    null_method : str
        ``'within-game permutations'`` or ``'conditional Bernoulli draws'``
        (with a difficulty offset).
    with_difficulty : bool
    seed : int or None
    n_starts, iterations : int
    converged : bool
    log_likelihood_trace : tuple of float
        Log-likelihood after every EM iteration of the best start (never
        decreases).
    made : ndarray of int8
    hot_probability : ndarray of float
        Posterior probability of the hot state for every attempt.
    session, seq : ndarray
        Session id and seq of every attempt (positions when not given).
    warnings : tuple of str
    """

    player: str | None
    attempts: int
    sessions: int
    makes: int
    hot_rate: float
    cold_rate: float
    hot_effect: float
    cold_effect: float
    stay_hot: float
    stay_cold: float
    hot_share: float
    intervals: dict
    interval_method: str
    confidence_level: float
    log_likelihood: float
    log_likelihood_one_state: float
    lr_statistic: float
    p_value: float | None
    p_value_se: float | None
    null_mean_lr: float | None
    permutations: int
    null_method: str
    with_difficulty: bool
    seed: int | None
    n_starts: int
    iterations: int
    converged: bool
    log_likelihood_trace: tuple = field(repr=False)
    made: np.ndarray = field(repr=False)
    hot_probability: np.ndarray = field(repr=False)
    session: np.ndarray = field(repr=False)
    seq: np.ndarray = field(repr=False)
    warnings: tuple = ()
    null_distribution: np.ndarray | None = field(default=None, repr=False)

    def to_frame(self):
        """One row per attempt: ``player``, ``session``, ``seq``, ``made``, ``hot_probability``."""
        return pd.DataFrame(
            {
                "player": self.player,
                "session": self.session,
                "seq": self.seq,
                "made": self.made.astype(bool),
                "hot_probability": self.hot_probability,
            }
        )

    def to_dict(self):
        """The stable JSON layout (``player``, rates, stays, ``p_value``, ``attempts``) plus extras."""
        return {
            "player": self.player,
            "hot_rate": _number(self.hot_rate),
            "cold_rate": _number(self.cold_rate),
            "stay_hot": _number(self.stay_hot),
            "stay_cold": _number(self.stay_cold),
            "p_value": _number(self.p_value),
            "attempts": [
                {"session": str(s), "seq": int(q), "made": bool(m), "hot_probability": float(h)}
                for s, q, m, h in zip(self.session, self.seq, self.made, self.hot_probability, strict=True)
            ],
            "intervals": {
                name: None if value is None else [float(value[0]), float(value[1])]
                for name, value in self.intervals.items()
            },
            "interval_method": self.interval_method,
            "confidence_level": self.confidence_level,
            "hot_effect": _number(self.hot_effect),
            "cold_effect": _number(self.cold_effect),
            "hot_share": _number(self.hot_share),
            "log_likelihood": _number(self.log_likelihood),
            "log_likelihood_one_state": _number(self.log_likelihood_one_state),
            "lr_statistic": _number(self.lr_statistic),
            "p_value_se": _number(self.p_value_se),
            "null_mean_lr": _number(self.null_mean_lr),
            "permutations": self.permutations,
            "null_method": self.null_method,
            "with_difficulty": self.with_difficulty,
            "n_attempts": self.attempts,
            "n_sessions": self.sessions,
            "makes": self.makes,
            "seed": self.seed,
            "converged": self.converged,
            "warnings": list(self.warnings),
        }

    def summary(self):
        """Readable text with numbered caveats."""

        def interval(name):
            value = self.intervals.get(name)
            return "" if value is None else f"  ({value[0]:.3f} to {value[1]:.3f})"

        level = f"{100 * self.confidence_level:g}%"
        lines = [
            f"Hot-state model for {self.player or 'the player'}: {self.attempts:,} attempts in "
            f"{self.sessions} sessions" + (" (on top of the difficulty model)" if self.with_difficulty else ""),
            f"  hot rate   {self.hot_rate:.3f}{interval('hot_rate')}",
            f"  cold rate  {self.cold_rate:.3f}{interval('cold_rate')}",
            f"  stay hot   {self.stay_hot:.3f}{interval('stay_hot')}",
            f"  stay cold  {self.stay_cold:.3f}{interval('stay_cold')}",
            f"  ({level} intervals, {self.interval_method}; hot share {self.hot_share:.2f})",
            f"  likelihood ratio vs one state {self.lr_statistic:.2f}; p = "
            + ("-" if self.p_value is None else f"{self.p_value:.4f}")
            + f" ({self.permutations} refits, {self.null_method}; seed {self.seed})",
        ]
        if self.warnings:
            lines += ["", "Warnings:"] + [f"  - {w}" for w in self.warnings]
        lines += ["", "Caveats:"] + [f"  {i}. {text}" for i, text in enumerate(_CAVEATS, start=1)]
        return "\n".join(lines)


# ---------------------------------------------------------------------------
# The batched engine
# ---------------------------------------------------------------------------


class _Data:
    """One player's sessions, padded: shared by every batch element.

    Kept time-major inside the engine: ``mask_t`` and ``offset_t`` are
    (L, S), so that each attempt position is one contiguous (batch, session)
    slice in the forward-backward loop.
    """

    def __init__(self, made, offsets, logit_offset):
        self.offsets = offsets
        self.lengths = np.diff(offsets)
        self.x, self.mask = _padded(made.astype(float), offsets, 0.0)
        self.offset = None if logit_offset is None else _padded(logit_offset, offsets, 0.0)[0]
        self.n_sessions = int((self.lengths > 0).sum())
        self.mask_t = np.ascontiguousarray(self.mask.T)
        self.weight_t = self.mask_t.astype(float)[:, None, :]  # (L, 1, S)
        self.offset_t = None if self.offset is None else np.ascontiguousarray(self.offset.T)[:, None, :]
        self.first = self.mask[:, 0] if self.mask.shape[1] else np.zeros(0, dtype=bool)


def _time_major(x):
    """(B, S, L) -> contiguous (L, B, S)."""
    return np.ascontiguousarray(np.transpose(x, (2, 0, 1)))


def _stationary_hot(stay_cold, stay_hot):
    leave_hot, leave_cold = 1.0 - stay_hot, 1.0 - stay_cold
    total = leave_hot + leave_cold
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(total > 0, leave_cold / np.where(total > 0, total, 1.0), 0.5)


def _state_rates(data, theta):
    """P(make | state) per attempt with an offset: two (L, B, S) arrays; None without one."""
    if data.offset_t is None:
        return None
    return [np.clip(special.expit(data.offset_t + theta[None, :, j, None]), _RATE_FLOOR, 1 - _RATE_FLOOR)
            for j in (0, 1)]


def _emissions(xt, data, theta, rates=None):
    """P(x_t | cold), P(x_t | hot) as (L, B, S) arrays; 1 on padded positions."""
    out = []
    if rates is None:
        rates = _state_rates(data, theta)
    for j in (0, 1):
        if rates is None:
            rate = np.clip(special.expit(theta[:, j]), _RATE_FLOOR, 1 - _RATE_FLOOR)[None, :, None]
            q = (1.0 - rate) + xt * (2.0 * rate - 1.0)
        else:
            q = np.where(xt > 0.5, rates[j], 1.0 - rates[j])
        out.append(np.where(data.mask_t[:, None, :], q, 1.0))
    return out


def _forward_backward(xt, data, theta, stay, need_posterior=True, rates=None):
    """Scaled forward-backward for a batch, time-major.

    Parameters: ``xt`` (L, B, S) outcomes, ``theta`` (B, 2) state log-odds
    (cold, hot), ``stay`` (B, 2) stay probabilities (cold, hot).
    Returns the log-likelihood (B,) and, when asked, the posterior of the hot
    state (L, B, S), the expected transition counts (B, 2, 2) ``[from, to]``
    and the expected first states (B, 2).
    """
    width, n_batch, n_sessions = xt.shape
    if width == 0:
        return np.zeros(n_batch), None, None, None
    q_c, q_h = _emissions(xt, data, theta, rates)
    a_cc, a_hh = stay[:, 0][:, None], stay[:, 1][:, None]
    a_ch, a_hc = 1.0 - a_cc, 1.0 - a_hh
    pi_h = _stationary_hot(stay[:, 0], stay[:, 1])[:, None]
    alpha_c = np.empty((width, n_batch, n_sessions))
    alpha_h = np.empty((width, n_batch, n_sessions))
    scale = np.empty((width, n_batch, n_sessions))
    f_c = (1.0 - pi_h) * q_c[0]
    f_h = pi_h * q_h[0]
    for t in range(width):
        if t > 0:
            prev_c, prev_h = alpha_c[t - 1], alpha_h[t - 1]
            f_c = (prev_c * a_cc + prev_h * a_hc) * q_c[t]
            f_h = (prev_c * a_ch + prev_h * a_hh) * q_h[t]
        total = np.maximum(f_c + f_h, 1e-300)
        scale[t] = total
        np.divide(f_c, total, out=alpha_c[t])
        np.divide(f_h, total, out=alpha_h[t])
    log_likelihood = (np.log(scale) * data.weight_t).sum(axis=(0, 2))
    if not need_posterior:
        return log_likelihood, None, None, None
    beta_c = np.empty_like(alpha_c)
    beta_h = np.empty_like(alpha_h)
    beta_c[-1] = 1.0
    beta_h[-1] = 1.0
    # b_j(t) = q_j(t) beta_j(t) / c_t, reused for the transition counts
    b_c = np.empty_like(alpha_c)
    b_h = np.empty_like(alpha_h)
    b_c[-1] = q_c[-1] / scale[-1]
    b_h[-1] = q_h[-1] / scale[-1]
    for t in range(width - 2, -1, -1):
        beta_c[t] = a_cc * b_c[t + 1] + a_ch * b_h[t + 1]
        beta_h[t] = a_hc * b_c[t + 1] + a_hh * b_h[t + 1]
        b_c[t] = q_c[t] * beta_c[t] / scale[t]
        b_h[t] = q_h[t] * beta_h[t] / scale[t]
    g_c = alpha_c * beta_c
    g_h = alpha_h * beta_h
    gamma_h = g_h / np.maximum(g_c + g_h, 1e-300)
    step = data.weight_t[1:]
    w_c, w_h = b_c[1:] * step, b_h[1:] * step
    prev_c, prev_h = alpha_c[:-1], alpha_h[:-1]
    transitions = np.empty((n_batch, 2, 2))
    transitions[:, 0, 0] = (prev_c * w_c).sum(axis=(0, 2)) * stay[:, 0]
    transitions[:, 0, 1] = (prev_c * w_h).sum(axis=(0, 2)) * (1.0 - stay[:, 0])
    transitions[:, 1, 0] = (prev_h * w_c).sum(axis=(0, 2)) * (1.0 - stay[:, 1])
    transitions[:, 1, 1] = (prev_h * w_h).sum(axis=(0, 2)) * stay[:, 1]
    first = data.first[None, :]
    initial_h = (gamma_h[0] * first).sum(axis=1)
    initial = np.column_stack([first.sum() - initial_h, initial_h])
    return log_likelihood, gamma_h, transitions, initial


def _transition_objective(u, v, n_hh, m_u, n_cc, m_v, sessions):
    """Expected complete-data log-likelihood of the chain (leave-hot u, leave-cold v)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return (n_hh * np.log1p(-u) + m_u * np.log(u) + n_cc * np.log1p(-v) + m_v * np.log(v)
                - sessions * np.log(u + v))


def _maximise_transitions(stay, transitions, initial, sessions):
    """M-step of the stay probabilities with the stationary start (2-d Newton, guarded).

    Maximises ``Q(u, v) = n_hh log(1-u) + (n_hc + g_c) log u + n_cc log(1-v)
    + (n_ch + g_h) log v - G log(u + v)`` over the leave probabilities on the
    logit scale; a step is taken only when it raises Q, so every EM iteration
    raises the likelihood.
    """
    n_cc, n_ch = transitions[:, 0, 0], transitions[:, 0, 1]
    n_hc, n_hh = transitions[:, 1, 0], transitions[:, 1, 1]
    g_c, g_h = initial[:, 0], initial[:, 1]
    m_u, m_v = n_hc + g_c, n_ch + g_h
    a = np.clip(special.logit(np.clip(1.0 - stay[:, 1], 1e-12, 1 - 1e-12)), -_STAY_LIMIT, _STAY_LIMIT)  # leave hot
    b = np.clip(special.logit(np.clip(1.0 - stay[:, 0], 1e-12, 1 - 1e-12)), -_STAY_LIMIT, _STAY_LIMIT)  # leave cold
    args = (n_hh, m_u, n_cc, m_v, sessions)
    current = _transition_objective(special.expit(a), special.expit(b), *args)
    # a generalised M-step: a few guarded Newton steps from the current values (warm start)
    for _ in range(4):
        u, v = special.expit(a), special.expit(b)
        du, dv = u * (1 - u), v * (1 - v)
        s = u + v
        grad_a = -n_hh * u + m_u * (1 - u) - sessions * du / s
        grad_b = -n_cc * v + m_v * (1 - v) - sessions * dv / s
        h_aa = -(n_hh + m_u) * du - sessions * du * ((1 - 2 * u) * s - du) / s**2
        h_bb = -(n_cc + m_v) * dv - sessions * dv * ((1 - 2 * v) * s - dv) / s**2
        h_ab = sessions * du * dv / s**2
        det = h_aa * h_bb - h_ab**2
        newton = (h_aa < 0) & (det > 0)
        safe_det = np.where(newton, det, 1.0)
        step_a = np.where(newton, -(h_bb * grad_a - h_ab * grad_b) / safe_det,
                          grad_a / np.maximum(np.abs(h_aa), 1.0))
        step_b = np.where(newton, -(-h_ab * grad_a + h_aa * grad_b) / safe_det,
                          grad_b / np.maximum(np.abs(h_bb), 1.0))
        step_a, step_b = np.clip(step_a, -2.0, 2.0), np.clip(step_b, -2.0, 2.0)
        if max(np.abs(step_a).max(), np.abs(step_b).max()) < 1e-9:
            break
        size = np.ones_like(a)
        accepted = np.zeros(a.shape, dtype=bool)
        new_a, new_b = a.copy(), b.copy()
        for _ in range(6):
            try_a = np.clip(a + size * step_a, -_STAY_LIMIT, _STAY_LIMIT)
            try_b = np.clip(b + size * step_b, -_STAY_LIMIT, _STAY_LIMIT)
            value = _transition_objective(special.expit(try_a), special.expit(try_b), *args)
            good = ~accepted & (value >= current)
            new_a, new_b = np.where(good, try_a, new_a), np.where(good, try_b, new_b)
            current = np.where(good, value, current)
            accepted |= good
            if accepted.all():
                break
            size = np.where(accepted, size, size / 2)
        moved = max(np.abs(new_a - a).max(), np.abs(new_b - b).max())
        a, b = new_a, new_b
        if moved < 1e-9:
            break
    return np.column_stack([1.0 - special.expit(b), 1.0 - special.expit(a)])


def _maximise_emissions(theta, xt, gamma_h, data, rates=None):
    """M-step of the state log-odds.

    Without an offset the maximum is closed form (a weighted make rate).
    With one, it is a generalised M-step: one Newton step from the current
    value (whose rates the E-step already computed), halved until it raises
    the expected log-likelihood. That is all EM needs to raise the
    likelihood, and the fixed points are the same.
    """
    weight_h = gamma_h * data.weight_t
    weight_c = data.weight_t - weight_h
    weights = (weight_c, weight_h)
    totals = np.column_stack([w.sum(axis=(0, 2)) for w in weights])  # (B, 2)
    makes = np.column_stack([(w * xt).sum(axis=(0, 2)) for w in weights])
    if data.offset_t is None:
        rate = np.clip(makes / np.maximum(totals, 1e-300), _RATE_FLOOR, 1 - _RATE_FLOOR)
        return np.clip(special.logit(rate), -_LOGIT_LIMIT, _LOGIT_LIMIT)
    if rates is None:
        rates = _state_rates(data, theta)
    theta = theta.copy()
    offset = data.offset_t
    for j in (0, 1):
        w, mu, th = weights[j], rates[j], theta[:, j]
        current = (w * (xt * (offset + th[None, :, None]) + np.log1p(-mu))).sum(axis=(0, 2))
        grad = makes[:, j] - (w * mu).sum(axis=(0, 2))
        hess = (w * mu * (1 - mu)).sum(axis=(0, 2))
        step = np.clip(grad / np.maximum(hess, 1e-12), -2.0, 2.0)
        new = th.copy()
        pending = np.abs(step) > 1e-12
        size = 1.0
        for _ in range(8):
            if not pending.any():
                break
            trial = np.clip(th + size * step, -_LOGIT_LIMIT, _LOGIT_LIMIT)
            eta = offset + trial[None, :, None]
            trial_mu = np.clip(special.expit(eta), _RATE_FLOOR, 1 - _RATE_FLOOR)
            value = (w * (xt * eta + np.log1p(-trial_mu))).sum(axis=(0, 2))
            good = pending & (value >= current)
            new = np.where(good, trial, new)
            pending &= ~good
            size /= 2
        theta[:, j] = new
    return theta


def _em_step(xt, data, theta, stay, sessions):
    """One EM iteration for a batch: (log-likelihood at the input, new theta, new stay)."""
    rates = _state_rates(data, theta)
    ll, gamma_h, transitions, initial = _forward_backward(xt, data, theta, stay, rates=rates)
    new_theta = _maximise_emissions(theta, xt, gamma_h, data, rates)
    new_stay = _maximise_transitions(stay, transitions, initial, sessions)
    return ll, new_theta, new_stay


def _to_phi(theta, stay):
    return np.column_stack([theta, special.logit(np.clip(stay, 1e-12, 1 - 1e-12))])


def _from_phi(phi):
    theta = np.clip(phi[:, :2], -_LOGIT_LIMIT, _LOGIT_LIMIT)
    return theta, special.expit(np.clip(phi[:, 2:], -_STAY_LIMIT, _STAY_LIMIT))


def _run_em(x, data, theta, stay, max_iter, tol, accelerate=True):
    """EM for every batch element of ``x`` (B, S, L).

    With ``accelerate``, each cycle is a squared extrapolation step (SQUAREM)
    built from two EM steps, kept only when its log-likelihood is at least
    that after the first EM step (else the cycle falls back to plain EM), and
    followed by one EM step from wherever it landed. Either way the
    log-likelihood at the start of successive cycles never decreases.

    Returns theta, stay, log-likelihood, EM steps, converged and the
    log-likelihood history (cycles, B) at the start of every cycle, NaN where
    an element had stopped.
    """
    xt = _time_major(x)
    n_batch = x.shape[0]
    theta, stay = theta.copy(), stay.copy()
    log_likelihood = np.full(n_batch, -np.inf)
    steps = np.zeros(n_batch, dtype=np.int64)
    converged = np.zeros(n_batch, dtype=bool)
    history = []
    active = np.arange(n_batch)
    sessions = float(data.n_sessions)
    while len(active) and steps[active].max() < max_iter:
        ll0, theta1, stay1 = _em_step(xt, data, theta[active], stay[active], sessions)
        row = np.full(n_batch, np.nan)
        row[active] = ll0
        history.append(row)
        done = np.abs(ll0 - log_likelihood[active]) < tol
        log_likelihood[active] = ll0
        steps[active] += 1
        converged[active[done]] = True
        keep = ~done
        if not keep.all():
            xt, theta1, stay1 = xt[:, keep], theta1[keep], stay1[keep]
            active = active[keep]
        if len(active) == 0:
            break
        if not accelerate:
            theta[active], stay[active] = theta1, stay1
            continue
        ll1, theta2, stay2 = _em_step(xt, data, theta1, stay1, sessions)
        steps[active] += 1
        phi0, phi1, phi2 = _to_phi(theta[active], stay[active]), _to_phi(theta1, stay1), _to_phi(theta2, stay2)
        r = phi1 - phi0
        v = phi2 - phi1 - r
        norm_r = np.sqrt((r**2).sum(axis=1))
        norm_v = np.sqrt((v**2).sum(axis=1))
        alpha = -np.divide(norm_r, norm_v, out=np.ones_like(norm_r), where=norm_v > 0)
        alpha = np.minimum(alpha, -1.0)
        phi_x = phi0 - 2 * alpha[:, None] * r + alpha[:, None] ** 2 * v
        theta_x, stay_x = _from_phi(phi_x)
        ll_x, theta_next, stay_next = _em_step(xt, data, theta_x, stay_x, sessions)
        steps[active] += 1
        bad = ~(ll_x >= ll1) | ~np.isfinite(ll_x)
        if bad.any():
            # fall back to plain EM from the second step
            sub = np.flatnonzero(bad)
            _, theta_fb, stay_fb = _em_step(xt[:, sub], data, theta2[sub], stay2[sub], sessions)
            theta_next[sub], stay_next[sub] = theta_fb, stay_fb
        theta[active], stay[active] = theta_next, stay_next
    if len(active):
        # parameters moved after the last E-step: record their log-likelihood
        ll, _, _, _ = _forward_backward(xt, data, theta[active], stay[active], need_posterior=False)
        log_likelihood[active] = ll
        row = np.full(n_batch, np.nan)
        row[active] = ll
        history.append(row)
    history = np.array(history) if history else np.full((0, n_batch), np.nan)
    return theta, stay, log_likelihood, steps, converged, history


def _one_state(x, data):
    """Log-likelihood and log-odds of the one-state model, per batch element of ``x`` (B, S, L)."""
    mask = data.mask[None]
    makes = (x * mask).sum(axis=(1, 2))
    n = float(data.mask.sum())
    if data.offset is None:
        rate = np.clip(makes / max(n, 1.0), _RATE_FLOOR, 1 - _RATE_FLOOR)
        theta = special.logit(rate)
        ll = makes * np.log(rate) + (n - makes) * np.log1p(-rate)
        return ll, theta
    theta = np.zeros(x.shape[0])
    offset = data.offset[None]
    for _ in range(50):
        mu = special.expit(offset + theta[:, None, None])
        grad = makes - (mu * mask).sum(axis=(1, 2))
        hess = (mu * (1 - mu) * mask).sum(axis=(1, 2))
        step = np.clip(grad / np.maximum(hess, 1e-12), -2.0, 2.0)
        theta = np.clip(theta + step, -_LOGIT_LIMIT, _LOGIT_LIMIT)
        if np.abs(step).max() < 1e-12:
            break
    eta = offset + theta[:, None, None]
    ll = ((x * eta - np.logaddexp(0.0, eta)) * mask).sum(axis=(1, 2))
    return ll, theta


_BURN_IN = 12  # EM steps every start gets before only the best one per dataset goes on


def _fit_batch(x, data, n_starts, max_iter, tol, trace=False, accelerate=True):
    """Best-of-starts EM fit of every dataset in ``x`` (D, S, L).

    Every start runs ``_BURN_IN`` EM steps; then only the start with the
    highest log-likelihood of each dataset continues to convergence. The
    rule is deterministic, so it is the same statistic on the observed data
    and on every null draw.
    """
    n_data = x.shape[0]
    _, base = _one_state(x, data)
    starts = np.array(_STARTS[:n_starts])
    theta = np.stack([base[:, None] + starts[None, :, 0], base[:, None] + starts[None, :, 1]], axis=-1)
    stay = np.broadcast_to(starts[None, :, 2:], (n_data, n_starts, 2))
    theta = theta.reshape(n_data * n_starts, 2)
    stay = stay.reshape(n_data * n_starts, 2)
    history = []
    if n_starts > 1:
        xx = np.repeat(x, n_starts, axis=0)
        theta, stay, ll, steps, _, first = _run_em(xx, data, theta, stay, min(_BURN_IN, max_iter), tol, accelerate)
        ll = ll.reshape(n_data, n_starts)
        best = np.argmax(np.where(np.isfinite(ll), ll, -np.inf), axis=1)
        pick = np.arange(n_data) * n_starts + best
        theta, stay, used = theta[pick], stay[pick], steps[pick]
        history.append(first[:, pick])
        remaining = max(1, max_iter - min(_BURN_IN, max_iter))
    else:
        used = np.zeros(n_data, dtype=np.int64)
        remaining = max_iter
    # the same budget for every dataset: a fit never depends on what else is in the batch
    theta, stay, ll, steps, converged, second = _run_em(x, data, theta, stay, remaining, tol, accelerate)
    history.append(second)
    result = theta, stay, ll, steps + used, converged
    if not trace:
        return result
    column = np.concatenate([h[:, 0] for h in history])
    return (*result, tuple(float(v) for v in column[~np.isnan(column)]))


def _label(theta, stay):
    """Order the states so that index 1 (hot) has the higher log-odds."""
    swap = theta[:, 0] > theta[:, 1]
    theta = np.where(swap[:, None], theta[:, ::-1], theta)
    stay = np.where(swap[:, None], stay[:, ::-1], stay)
    return theta, stay


def _average_rate(data, effect):
    if data.offset is None:
        return special.expit(effect)
    values = special.expit(data.offset[None] + np.asarray(effect)[:, None, None])
    return (values * data.mask[None]).sum(axis=(1, 2)) / max(float(data.mask.sum()), 1.0)


def _pad_draws(draws, data):
    """Flat draws (D, n) to padded (D, S, L)."""
    out = np.zeros((draws.shape[0], *data.mask.shape))
    out[:, data.mask] = draws
    return out


def _shuffle_padded(x, data, n, rng):
    """n within-session shuffles of the padded outcomes (padding stays at the end)."""
    keys = rng.random((n, *data.mask.shape))
    keys = np.where(data.mask[None], keys, 2.0)
    order = np.argsort(keys, axis=-1)
    return np.take_along_axis(np.broadcast_to(x, (n, *x.shape)), order, axis=-1)


def _information_intervals(x, data, theta, stay, level):
    """Wald intervals from the observed information (numerical Hessian on the logit scale)."""
    phi = np.array([theta[0], theta[1], special.logit(stay[0]), special.logit(stay[1])])
    h = 1e-3
    points = [phi]
    for i in range(4):
        for sign in (1, -1):
            e = np.zeros(4)
            e[i] = sign * h
            points.append(phi + e)
    for i in range(4):
        for j in range(i + 1, 4):
            for si in (1, -1):
                for sj in (1, -1):
                    e = np.zeros(4)
                    e[i], e[j] = si * h, sj * h
                    points.append(phi + e)
    points = np.array(points)
    xt = _time_major(np.broadcast_to(x, (len(points), *x.shape)))
    ll, _, _, _ = _forward_backward(xt, data, points[:, :2], special.expit(points[:, 2:]), need_posterior=False)
    f0 = ll[0]
    hessian = np.zeros((4, 4))
    index = 1
    single = {}
    for i in range(4):
        single[(i, 1)], single[(i, -1)] = ll[index], ll[index + 1]
        hessian[i, i] = (ll[index] - 2 * f0 + ll[index + 1]) / h**2
        index += 2
    for i in range(4):
        for j in range(i + 1, 4):
            pp, pm, mp, mm = ll[index:index + 4]
            hessian[i, j] = hessian[j, i] = (pp - pm - mp + mm) / (4 * h**2)
            index += 4
    names = ("cold_effect", "hot_effect", "stay_cold", "stay_hot")
    try:
        eigenvalues = np.linalg.eigvalsh(-hessian)
        if eigenvalues.min() <= 0:
            raise np.linalg.LinAlgError
        covariance = np.linalg.inv(-hessian)
    except np.linalg.LinAlgError:
        return {n: None for n in names}, "the observed information is not positive definite (a state is barely used, or the two are alike)"
    z = stats.norm.ppf(0.5 + level / 2)
    se = np.sqrt(np.diag(covariance))
    return {n: (phi[i] - z * se[i], phi[i] + z * se[i]) for i, n in enumerate(names)}, None


def _simulate(data, theta, stay, n, rng):
    """n datasets from the fitted model with the player's sessions and offsets: (n, S, L)."""
    n_sessions, width = data.mask.shape
    pi_h = float(_stationary_hot(stay[0], stay[1]))
    hot = rng.random((n, n_sessions)) < pi_h
    x = np.zeros((n, n_sessions, width))
    for t in range(width):
        if t > 0:
            stay_here = np.where(hot, stay[1], stay[0])
            hot = np.where(rng.random((n, n_sessions)) < stay_here, hot, ~hot)
        eta = np.where(hot, theta[1], theta[0])
        if data.offset is not None:
            eta = eta + data.offset[None, :, t]
        x[:, :, t] = rng.random((n, n_sessions)) < special.expit(eta)
    return x * data.mask[None]


# ---------------------------------------------------------------------------
# Public functions
# ---------------------------------------------------------------------------


def _made_iv(made):
    try:
        x = np.asarray(made)
    except (TypeError, ValueError):
        raise ValueError(f"`made` must be 0/1 outcomes (got {_show(made)})") from None
    if x.ndim != 1 or not np.isin(x, (0, 1)).all():
        raise ValueError(f"`made` must be a 1-d array of 0/1 outcomes (got {_show(made)})")
    return x.astype(np.int8)


def _logit_offset_iv(logit_offset, n):
    if logit_offset is None:
        return None
    try:
        offset = np.asarray(logit_offset, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"`logit_offset` must be numbers (got {_show(logit_offset)})") from None
    if offset.shape != (n,):
        raise ValueError(f"`logit_offset` must hold one value per attempt ({n}; got shape {offset.shape})")
    if not np.isfinite(offset).all():
        raise ValueError("`logit_offset` must be finite (got inf or nan)")
    return offset


def _fit_hot_state_iv(made, offsets, logit_offset, sessions, seq, player, permutations, n_starts, max_iter,
                      tol, interval, resamples, confidence_level, keep_null):
    x = _made_iv(made)
    offsets = _check_offsets(offsets, len(x))
    if len(x) < 2:
        raise ValueError(f"`made` must hold at least 2 attempts (got {len(x)})")
    offset = _logit_offset_iv(logit_offset, len(x))
    n_sessions = len(offsets) - 1
    if sessions is None:
        sessions = np.arange(n_sessions)
    sessions = np.asarray(sessions)
    if sessions.shape != (n_sessions,):
        raise ValueError(f"`sessions` must name every session ({n_sessions}; got shape {sessions.shape})")
    if seq is None:
        seq = np.arange(len(x)) - np.repeat(offsets[:-1], np.diff(offsets))
    seq = np.asarray(seq)
    if seq.shape != x.shape:
        raise ValueError(f"`seq` must hold one value per attempt ({len(x)}; got shape {seq.shape})")
    if player is not None and not isinstance(player, str):
        raise ValueError(f"`player` must be a string or None (got {_show(player)})")
    permutations = _check_count("permutations", permutations)
    n_starts = _check_count("n_starts", n_starts, minimum=1)
    if n_starts > len(_STARTS):
        raise ValueError(f"`n_starts` must be at most {len(_STARTS)} (got {n_starts})")
    max_iter = _check_count("max_iter", max_iter, minimum=1)
    if isinstance(tol, bool) or not isinstance(tol, numbers.Real) or not tol > 0:
        raise ValueError(f"`tol` must be a positive number (got {_show(tol)})")
    if interval not in INTERVAL_METHODS:
        raise ValueError(f"`interval` must be one of {', '.join(map(repr, INTERVAL_METHODS))} (got {interval!r})")
    resamples = _check_count("resamples", resamples, minimum=1)
    if (isinstance(confidence_level, bool) or not isinstance(confidence_level, numbers.Real)
            or not 0 < confidence_level < 1):
        raise ValueError(f"`confidence_level` must be between 0 and 1 (got {_show(confidence_level)})")
    if not isinstance(keep_null, (bool, np.bool_)):
        raise ValueError(f"`keep_null` must be True or False (got {_show(keep_null)})")
    return (x, offsets, offset, sessions, seq, permutations, n_starts, max_iter, float(tol), resamples,
            float(confidence_level))


def fit_hot_state(
    made,
    offsets=None,
    *,
    logit_offset=None,
    sessions=None,
    seq=None,
    player=None,
    permutations=99,
    n_starts=4,
    max_iter=300,
    tol=1e-4,
    interval="information",
    resamples=199,
    confidence_level=0.95,
    rng=None,
    batch=None,
    keep_null=False,
):
    r"""Fit the two-state hot/cold model to one player and test it against one state.

    Parameters
    ----------
    made : array_like of 0/1, shape (n_attempts,)
        Outcomes, sessions concatenated in season order.
    offsets : array_like of int, optional
        Session starts plus the total; default one session.
    logit_offset : array_like of float, optional
        Per-attempt log-odds from a difficulty model (``logit`` of the fitted
        probability); the states then shift these log-odds.
    sessions, seq : array_like, optional
        Session id of every session and seq of every attempt, carried to the
        per-attempt output (default: positions).
    player : str, optional
        Player id (with an integer ``rng``, the stream derives from both).
    permutations : int, optional
        Null refits for the p-value (default 99; 0 skips the test). Use 999
        or more for a p-value to report.
    n_starts : int, optional
        EM starting points (1-8, default 4); the best final likelihood wins.
    max_iter : int, optional
        EM steps per dataset (default 300).
    tol : float, optional
        EM stops when the log-likelihood changes by less than this between
        cycles (default 1e-4: the likelihood-ratio statistic is then good to
        about 0.01, far below its null spread; lower it for precise
        estimates).
    interval : {'information', 'bootstrap'}, optional
        Intervals from the observed information (default; Wald on the logit
        scale, mapped back) or a parametric bootstrap (percentiles).
    resamples : int, optional
        Parametric bootstrap resamples (default 199).
    confidence_level : float, optional
        Default 0.95.
    rng : None, int or numpy.random.Generator, optional
    batch : int, optional
        Null datasets fitted at once (default: about 200 starts' worth).
    keep_null : bool, optional
        Keep the null likelihood-ratio statistics on the result.

    Returns
    -------
    HotStateResult

    Notes
    -----
    States :math:`s_t \in \{\text{cold}, \text{hot}\}`;
    :math:`P(x_t = 1 \mid s_t = j) = \operatorname{expit}(o_t + \theta_j)`
    (:math:`o_t = 0` without a difficulty offset); :math:`P(s_t = s_{t-1})`
    is ``stay_hot`` or ``stay_cold``; every session starts from the
    stationary distribution :math:`\pi_{\text{hot}} = (1 - a_{cc}) / (2 -
    a_{hh} - a_{cc})`.

    EM [1]_: the E-step is the scaled forward-backward recursion
    (:math:`\hat\alpha_t \propto (\hat\alpha_{t-1} A) \circ q_t`, scale
    factors :math:`c_t`, :math:`\log L = \sum \log c_t`) [2]_; the M-step
    for the states' log-odds is closed form (a weighted rate) or a guarded
    Newton iteration with an offset; for the chain it maximises the
    expected complete log-likelihood including the stationary start,
    :math:`Q(u, v) = n_{hh}\log(1-u) + (n_{hc}+g_c)\log u + n_{cc}\log(1-v) +
    (n_{ch}+g_h)\log v - G\log(u+v)` (u, v the leave probabilities, g the
    expected first states, G the sessions), by Newton steps that are kept
    only when they raise Q. So the likelihood never decreases.

    The statistic :math:`\Lambda = 2(\log L_2 - \log L_1)` has no chi-square
    null (the one-state model sits on the boundary, and game-to-game form
    inflates it), so its null is simulated: each game's outcomes are shuffled
    within the game (or, with ``logit_offset``, redrawn from
    :math:`\operatorname{expit}(o_t)` conditional on the game's makes, which
    is the same null when :math:`o_t` is constant in a game), the model is
    refitted with the same starts, and :math:`p = (b + 1)/(m + 1)`.

    The state log-odds are kept within :math:`\pm 6` and the stay log-odds
    within :math:`\pm 9`: beyond them EM only crawls towards a state that
    always makes or misses, or never changes inside a game, for a negligible
    gain in likelihood. EM stops when a cycle raises the log-likelihood by
    less than ``tol``; cycles are SQUAREM steps [5]_ (two EM steps
    extrapolated, kept only if the likelihood does not fall), and the
    starts all run a short burn-in before only the best of each dataset goes
    on. The rule is deterministic, so observed and null data get the same
    statistic.

    Intervals: ``'information'`` inverts the numerical Hessian of the exact
    log-likelihood in :math:`(\theta_c, \theta_h, \operatorname{logit}
    a_{cc}, \operatorname{logit} a_{hh})` and maps Wald intervals back;
    ``'bootstrap'`` refits ``resamples`` datasets simulated from the fit.

    References
    ----------
    .. [1] Baum, L. E., Petrie, T., Soules, G. & Weiss, N. (1970). A
       maximization technique occurring in the statistical analysis of
       probabilistic functions of Markov chains. Annals of Mathematical
       Statistics 41(1), 164-171.
    .. [2] Rabiner, L. R. (1989). A tutorial on hidden Markov models and
       selected applications in speech recognition. Proceedings of the IEEE
       77(2), 257-286.
    .. [3] Wetzels, R., Tutschkow, D., Dolan, C., van der Sluis, S., Dutilh,
       G. & Wagenmakers, E.-J. (2016). A Bayesian test for the hot hand
       phenomenon. Journal of Mathematical Psychology 72, 200-209.
    .. [4] Chen, X.-H., Dempster, A. P. & Liu, J. S. (1994). Weighted finite
       population sampling to maximize entropy. Biometrika 81(3), 457-469.
    .. [5] Varadhan, R. & Roland, C. (2008). Simple and globally convergent
       methods for accelerating the convergence of any EM algorithm.
       Scandinavian Journal of Statistics 35(2), 335-353.

    Examples
    --------
    >>> from streakwise.analysis.simulate import simulate_hidden_state
    >>> from streakwise.analysis.hotstate import fit_hot_state
    >>> draw = simulate_hidden_state(15, hot_rate=0.65, cold_rate=0.3, stay_hot=0.9,
    ...                              stay_cold=0.9, n_sequences=60, rng=4)
    >>> result = fit_hot_state(draw.made.ravel().astype(int), list(range(0, 901, 15)),
    ...                        permutations=19, rng=1, player="a")
    >>> result.hot_rate > result.cold_rate, len(result.hot_probability)
    (True, 900)
    """
    (x, offsets, offset, sessions, seq, permutations, n_starts, max_iter, tol, resamples,
     confidence_level) = _fit_hot_state_iv(made, offsets, logit_offset, sessions, seq, player, permutations,
                                            n_starts, max_iter, tol, interval, resamples, confidence_level,
                                            keep_null)
    if batch is not None:
        batch = _check_count("batch", batch, minimum=1)
    null_rng, seed = _resolve_rng(rng, player, "hot_state")
    bootstrap_rng, _ = _resolve_rng(seed if seed is not None else null_rng, player, "hot_state_bootstrap")
    data = _Data(x, offsets, offset)
    notes = []
    observed = data.x[None]
    theta, stay, ll, iterations, converged, trace = _fit_batch(observed, data, n_starts, max_iter, tol, trace=True)
    theta, stay = _label(theta, stay)
    ll_one, _ = _one_state(observed, data)
    lr = max(0.0, float(2 * (ll[0] - ll_one[0])))
    if not converged[0]:
        notes.append(f"EM stopped after {max_iter} iterations without converging (tol {tol:g})")
    # posterior for every attempt
    _, gamma_h, _, _ = _forward_backward(_time_major(observed), data, theta, stay)
    hot_probability = gamma_h[:, 0, :].T[data.mask]

    # the null: refit on shuffled (or conditionally redrawn) games
    null = np.zeros(0)
    p_value = p_se = null_mean = None
    if permutations:
        per_batch = batch or max(1, 200 // n_starts)
        values = []
        lengths = np.diff(offsets)
        makes = np.add.reduceat(x.astype(np.int64), offsets[:-1]) if len(x) else np.zeros(0, np.int64)
        makes = np.where(lengths > 0, makes, 0)
        for start in range(0, permutations, per_batch):
            n = min(per_batch, permutations - start)
            if offset is None:
                drawn = _shuffle_padded(data.x, data, n, null_rng)
            else:
                flat = sample_conditional_bernoulli(special.expit(offset), makes, offsets, n_draws=n, rng=null_rng)
                drawn = _pad_draws(flat, data)
            _, _, ll_null, _, _ = _fit_batch(drawn, data, n_starts, max_iter, tol)
            ll_null_one, _ = _one_state(drawn, data)
            values.append(np.maximum(0.0, 2 * (ll_null - ll_null_one)))
        null = np.concatenate(values)
        b = int((null >= lr - 1e-9 * max(1.0, lr)).sum())
        p_value = (b + 1) / (permutations + 1)
        p_se = math.sqrt(p_value * (1 - p_value) / (permutations + 1))
        null_mean = float(null.mean())

    # intervals
    hot_rate = float(_average_rate(data, theta[:, 1])[0])
    cold_rate = float(_average_rate(data, theta[:, 0])[0])
    if interval == "information":
        raw, problem = _information_intervals(data.x, data, theta[0], stay[0], confidence_level)
        if problem:
            notes.append(problem)
        intervals = {
            "hot_rate": None if raw["hot_effect"] is None else tuple(
                float(_average_rate(data, np.array([v]))[0]) for v in raw["hot_effect"]),
            "cold_rate": None if raw["cold_effect"] is None else tuple(
                float(_average_rate(data, np.array([v]))[0]) for v in raw["cold_effect"]),
            "stay_hot": None if raw["stay_hot"] is None else tuple(float(special.expit(v)) for v in raw["stay_hot"]),
            "stay_cold": None if raw["stay_cold"] is None else tuple(
                float(special.expit(v)) for v in raw["stay_cold"]),
        }
    else:
        simulated = _simulate(data, theta[0], stay[0], resamples, bootstrap_rng)
        boot_theta, boot_stay = _fit_from(simulated, data, theta[0], stay[0], max_iter, tol)
        boot_theta, boot_stay = _label(boot_theta, boot_stay)
        tail = (1 - confidence_level) / 2
        values = {
            "hot_rate": _average_rate(data, boot_theta[:, 1]),
            "cold_rate": _average_rate(data, boot_theta[:, 0]),
            "stay_hot": boot_stay[:, 1],
            "stay_cold": boot_stay[:, 0],
        }
        intervals = {n: (float(np.quantile(v, tail)), float(np.quantile(v, 1 - tail))) for n, v in values.items()}
    if hot_rate - cold_rate < 0.02:
        notes.append("the two states barely differ: the data look like one state")
    if min(cold_rate, 1 - hot_rate) < 0.02:
        notes.append(
            "a state makes (or misses) nearly every attempt: the fit describes dependence on the previous "
            "outcome rather than hot and cold stretches"
        )
    longest = int(np.diff(offsets).max())
    if max(stay[0]) > 1 - 1 / (2 * max(longest, 1)):
        notes.append(
            "a state rarely changes inside a game: the fit mostly describes game-to-game form, which the "
            "test's null keeps (so it does not count as a hot hand)"
        )
    return HotStateResult(
        player=player,
        attempts=int(len(x)),
        sessions=int(len(offsets) - 1),
        makes=int(x.sum()),
        hot_rate=hot_rate,
        cold_rate=cold_rate,
        hot_effect=float(theta[0, 1]),
        cold_effect=float(theta[0, 0]),
        stay_hot=float(stay[0, 1]),
        stay_cold=float(stay[0, 0]),
        hot_share=float(_stationary_hot(stay[0, 0], stay[0, 1])),
        intervals=intervals,
        interval_method=interval,
        confidence_level=confidence_level,
        log_likelihood=float(ll[0]),
        log_likelihood_one_state=float(ll_one[0]),
        lr_statistic=lr,
        p_value=p_value,
        p_value_se=p_se,
        null_mean_lr=null_mean,
        permutations=permutations,
        null_method="conditional Bernoulli draws" if offset is not None else "within-game permutations",
        with_difficulty=offset is not None,
        seed=seed,
        n_starts=n_starts,
        iterations=int(iterations[0]),
        converged=bool(converged[0]),
        log_likelihood_trace=tuple(trace),
        made=x,
        hot_probability=hot_probability,
        session=np.repeat(sessions, np.diff(offsets)),
        seq=seq,
        warnings=tuple(notes),
        null_distribution=null if keep_null else None,
    )


def _fit_from(x, data, theta, stay, max_iter, tol):
    """EM on every dataset of ``x`` from one given start (the bootstrap's refits)."""
    n = x.shape[0]
    th = np.broadcast_to(theta, (n, 2)).copy()
    st = np.broadcast_to(stay, (n, 2)).copy()
    th, st, _, _, _, _ = _run_em(x, data, th, st, max_iter, tol)
    return th, st


def _hot_state_posterior_iv(made, offsets, hot_rate, cold_rate, stay_hot, stay_cold, logit_offset):
    x = _made_iv(made)
    offsets = _check_offsets(offsets, len(x))
    values = []
    for name, value in (("hot_rate", hot_rate), ("cold_rate", cold_rate), ("stay_hot", stay_hot),
                        ("stay_cold", stay_cold)):
        if isinstance(value, bool) or not isinstance(value, numbers.Real) or not 0 < value < 1:
            raise ValueError(f"`{name}` must be strictly between 0 and 1 (got {_show(value)})")
        values.append(float(value))
    offset = _logit_offset_iv(logit_offset, len(x))
    return x, offsets, offset, values


def hot_state_posterior(made, offsets=None, *, hot_rate, cold_rate, stay_hot, stay_cold, logit_offset=None):
    r"""Posterior probability of the hot state for every attempt, for given parameters.

    Parameters
    ----------
    made : array_like of 0/1
        Outcomes, sessions concatenated.
    offsets : array_like of int, optional
        Session starts plus the total; default one session.
    hot_rate, cold_rate, stay_hot, stay_cold : float
        The model's parameters, strictly between 0 and 1. With
        ``logit_offset`` the state's make probability on attempt t is
        ``expit(logit(rate) + logit_offset[t])``.
    logit_offset : array_like of float, optional

    Returns
    -------
    posterior : ndarray of float
        P(hot at attempt t | all of the session's outcomes).
    log_likelihood : float
        Log-probability of the outcomes (sessions independent, each from
        the stationary distribution).

    Notes
    -----
    The scaled forward-backward recursion of [1]_ (section V.A), run for all
    sessions at once.

    References
    ----------
    .. [1] Rabiner, L. R. (1989). A tutorial on hidden Markov models and
       selected applications in speech recognition. Proceedings of the IEEE
       77(2), 257-286.

    Examples
    --------
    >>> from streakwise.analysis.hotstate import hot_state_posterior
    >>> post, ll = hot_state_posterior([1, 1, 1, 0, 0, 0], hot_rate=0.7, cold_rate=0.3,
    ...                                stay_hot=0.9, stay_cold=0.9)
    >>> bool(post[0] > 0.5 > post[-1])
    True
    """
    x, offsets, offset, (h, c, a_hh, a_cc) = _hot_state_posterior_iv(made, offsets, hot_rate, cold_rate, stay_hot,
                                                                     stay_cold, logit_offset)
    data = _Data(x, offsets, offset)
    theta = np.array([[special.logit(c), special.logit(h)]])
    stay = np.array([[a_cc, a_hh]])
    ll, gamma_h, _, _ = _forward_backward(_time_major(data.x[None]), data, theta, stay)
    if gamma_h is None:
        return np.zeros(0), 0.0
    return gamma_h[:, 0, :].T[data.mask], float(ll[0])
