"""Study planning: how often the streak tests find a hot hand of a given size.

A planner simulates many seasons of a shooter with a known hot hand, runs the
same tests an analyst would run on real data, and counts how often each test
rejects "no hot hand" at level alpha. Pure: numbers in, frozen results and
Plotly figures out; no files, no database.

Alternatives (both keep the long-run make rate at ``rate``):

- ``'hidden'``: a hidden hot/cold state. The hot state makes ``rate + effect/2``,
  the cold state ``rate - effect/2`` (``effect`` is the *boost*, hot minus cold
  in probability points); each state carries over to the next attempt with the
  stay probability ``persistence``; every game starts from the stationary
  state (hot or cold with probability 1/2). Drawn with
  :func:`~streakwise.analysis.simulate.simulate_hidden_state`, the simulator of
  the demo league.
- ``'markov'``: first-order dependence on the previous outcome with
  ``effect`` = P(make | make) - P(make | miss): P(make | make) =
  ``rate + effect (1 - rate)``, P(make | miss) = ``rate (1 - effect)``
  (the chain of :func:`~streakwise.analysis.simulate.simulate_markov`).

``effect = 0`` is the null (independent attempts at ``rate``): its "power" is
the size of each test.

The tests (one simulated season = one "player"): the within-game permutation
test of D_k for k = 1..max_k and of the longest run of makes (the engine
:func:`~streakwise.analysis.permutation.permutation_test`, its tabulated
arrangements make game-length sessions cheap), and the stratified
Wald-Wolfowitz runs test (:func:`~streakwise.analysis.runs.runs_test`, in the
engine's result). A test rejects when its p-value is at most alpha.

Randomness. Seasons are simulated in blocks of :data:`SEASON_BLOCK` seasons by
:data:`GAME_BLOCK` games, each block from its own stream derived from
``(seed, block)``; the permutation stream of simulated season ``i`` is derived
from ``(seed, "simulated season i")`` by
:func:`~streakwise.analysis.permutation.player_seed_sequence`. So a result does
not depend on the number of worker processes, season ``i`` is the same however
many seasons are simulated (more simulations extend a run), and common random
numbers are
used across effect sizes and numbers of games: the same hidden states, the
same uniforms (the hot state's makes are thresholds of them) and the same
permutations serve every effect size, and a season of G games is the first G
games of a longer one. Power curves are then smooth and nearly monotone, which
the bisection searches rely on.
"""

from __future__ import annotations

import math
import numbers
import warnings
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import Executor, ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ._values import json_number as _number
from .figures import OKABE_ITO
from .permutation import METHODS, permutation_test, player_seed_sequence
from .simulate import hidden_state_moments, simulate_hidden_state, simulate_session_lengths
from .streaks import _check_choice, _check_integer, _max_k_iv, _show

__all__ = [
    "MODELS",
    "PLAN_CAVEATS",
    "PlanAnswer",
    "PlanResult",
    "PowerResult",
    "estimate_power",
    "games_needed",
    "minimum_detectable_effect",
    "power_curve_figure",
]

#: The simulated alternatives.
MODELS = ("hidden", "markov")
ALTERNATIVES = ("hot", "two-sided")
SEASON_BLOCK = 50  # simulated seasons per random stream block
GAME_BLOCK = 20  # games per random stream block
DEFAULT_PERSISTENCE = 0.9
DEFAULT_MAX_EFFECT = {"hidden": 0.8, "markov": 0.5}

PLAN_CAVEATS = (
    "Power depends on the assumed model: these numbers hold for the simulated alternative "
    "(its effect, stay probability, make rate and games) and for nothing else. Game-to-game "
    "form, shot difficulty and shot selection, absent here, change real data.",
    "Published hot-hand effects are small, about 1-3 percentage points (difficulty-adjusted "
    "field goals; free throws): detecting effects that size needs thousands of attempts, more "
    "than one player's season. A non-significant test on one season says little.",
    "Every power is a Monte Carlo estimate with standard error sqrt(p(1 - p)/n_sim); "
    "run more simulations to narrow it. Random-permutation p-values, (b + 1)/(m + 1), "
    "cost a little power against exact ones.",
)

HIDDEN_CAVEAT = (
    "A hidden state's boost is not the outcome-level difference: the tests see "
    "P(make | make) - P(make | miss) (the 'diff' column), much smaller than hot minus cold "
    "(outcomes are noisy readings of the state)."
)

_TEST_COLOURS = (OKABE_ITO["blue"], OKABE_ITO["sky_blue"], OKABE_ITO["bluish_green"],
                 OKABE_ITO["vermillion"], OKABE_ITO["yellow"], OKABE_ITO["black"])
_RUNS_COLOUR = OKABE_ITO["orange"]
_LONGEST_COLOUR = OKABE_ITO["reddish_purple"]
_DASHES = ("solid", "dash", "dot", "dashdot", "longdash", "longdashdot")


# ---------------------------------------------------------------------------
# Small helpers
# ---------------------------------------------------------------------------


def _test_names(max_k):
    return tuple(f"D_{k}" for k in range(1, max_k + 1)) + ("runs", "longest_run")


def _fmt(value, digits=3):
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{value:.{digits}f}"


def _fresh_seed():
    return int(np.random.SeedSequence().generate_state(1)[0])


def _key(effect):
    """Effect sizes as dictionary keys (grid arithmetic leaves 1e-17 crumbs)."""
    return round(float(effect), 12)


def _monte_carlo_se(power, simulations):
    return np.sqrt(power * (1.0 - power) / simulations)


def _describe_lengths(lengths):
    if isinstance(lengths, int):
        return f"{lengths} attempts per game"
    if isinstance(lengths, tuple):
        return f"attempts per game drawn from {list(lengths)} (mean {np.mean(lengths):.1f})"
    return (f"attempts per game Poisson with mean {lengths['mean']:g}, truncated to "
            f"[{lengths['low']}, {lengths['high']}]")


def _lengths_json(lengths):
    if isinstance(lengths, int):
        return lengths
    if isinstance(lengths, tuple):
        return list(lengths)
    return dict(lengths)


def _rate_difference(model, effect, rate, persistence):
    """P(make | make) - P(make | miss) of the stationary alternative."""
    if model == "markov":
        return float(effect)
    if persistence < 1.0:
        return float(hidden_state_moments(rate + effect / 2, rate - effect / 2, persistence,
                                          persistence).rate_difference)
    # a state that is never left: each game is all hot or all cold (lambda = 1)
    return float(effect**2 / 4 / (rate * (1 - rate)))


def _model_label(model, rate, persistence):
    if model == "hidden":
        return (f"hidden hot/cold state, stay probability {persistence:.2f}, make rate {rate:.3f}; "
                "effect = hot minus cold make probability")
    return (f"Markov dependence on the previous outcome, make rate {rate:.3f}; "
            "effect = P(make | make) - P(make | miss)")


# ---------------------------------------------------------------------------
# Result containers
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class PowerResult:
    """Simulated power of every test on a grid of effect sizes and season lengths.

    Attributes
    ----------
    model : {'hidden', 'markov'}
    rate : float
        Long-run make rate of the simulated shooter.
    persistence : float or None
        Stay probability of each hidden state (None for ``'markov'``).
    attempts_per_game : int, tuple of int or dict
        Fixed attempts per game, the values game lengths are drawn from, or a
        truncated Poisson ``{'mean', 'low', 'high'}``.
    effects : tuple of float
        Effect sizes (boost or rate difference), ascending.
    games : tuple of int
        Games per simulated season, ascending.
    tests : tuple of str
        ``'D_1'``..``'D_K'``, ``'runs'``, ``'longest_run'``.
    alpha, alternative, simulations, permutations, method, max_k, seed
        The settings; ``seed`` is the integer every stream derives from.
    attempts : ndarray, shape (n_games,)
        Mean attempts per simulated season for each entry of ``games``.
    p_values : ndarray, shape (n_effects, n_games, simulations, n_tests)
        Every simulated season's p-value (NaN where the statistic is undefined).
    corrected : ndarray, same shape
        Every season's bias-corrected effect (observed minus permutation null
        mean; runs and longest run in their own units).
    """

    model: str
    rate: float
    persistence: float | None
    attempts_per_game: object
    effects: tuple[float, ...]
    games: tuple[int, ...]
    tests: tuple[str, ...]
    alpha: float
    alternative: str
    simulations: int
    permutations: int
    method: str
    max_k: int
    seed: int
    attempts: np.ndarray = field(repr=False)
    p_values: np.ndarray = field(repr=False)
    corrected: np.ndarray = field(repr=False)

    @property
    def power(self):
        """Share of seasons rejected at ``alpha``, shape (n_effects, n_games, n_tests)."""
        with np.errstate(invalid="ignore"):
            return (self.p_values <= self.alpha).mean(axis=2)

    @property
    def power_se(self):
        """Monte Carlo standard error sqrt(p(1 - p)/simulations), same shape as ``power``."""
        return _monte_carlo_se(self.power, self.simulations)

    @property
    def share_defined(self):
        """Share of seasons on which each test has a p-value."""
        return (~np.isnan(self.p_values)).mean(axis=2)

    @property
    def rate_differences(self):
        """P(make | make) - P(make | miss) of the alternative, per effect."""
        return np.array([_rate_difference(self.model, e, self.rate, self.persistence)
                         for e in self.effects])

    def power_at(self, effect, games=None, test="D_1"):
        """(power, Monte Carlo SE) of ``test`` at one evaluated point."""
        i = self._index(self.effects, _key(effect), "effect")
        j = 0 if games is None and len(self.games) == 1 else self._index(self.games, games, "games")
        t = self._index(self.tests, test, "test")
        return float(self.power[i, j, t]), float(self.power_se[i, j, t])

    @staticmethod
    def _index(values, value, name):
        for i, v in enumerate(values):
            if (v == value) if not isinstance(v, float) else _key(v) == _key(value):
                return i
        raise KeyError(f"{name} {value!r} was not evaluated (evaluated: {list(values)})")

    def rows(self):
        """One dict per (effect, games, test)."""
        power, se, defined = self.power, self.power_se, self.share_defined
        differences = self.rate_differences
        with np.errstate(invalid="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            mean_corrected = np.nanmean(self.corrected, axis=2)
        out = []
        for i, effect in enumerate(self.effects):
            for j, games in enumerate(self.games):
                for t, test in enumerate(self.tests):
                    out.append({
                        "model": self.model, "effect": float(effect),
                        "rate_difference": float(differences[i]), "games": int(games),
                        "attempts": float(self.attempts[j]), "test": test,
                        "power": float(power[i, j, t]), "power_se": float(se[i, j, t]),
                        "share_defined": float(defined[i, j, t]),
                        "mean_corrected": _number(mean_corrected[i, j, t]),
                    })
        return out

    def to_frame(self):
        """Tidy: one row per effect, games and test, with the settings as columns."""
        frame = pd.DataFrame(self.rows(), columns=[
            "model", "effect", "rate_difference", "games", "attempts", "test", "power",
            "power_se", "share_defined", "mean_corrected"])
        frame["mean_corrected"] = frame["mean_corrected"].astype(float)
        frame["rate"] = self.rate
        frame["persistence"] = np.nan if self.persistence is None else self.persistence
        frame["alpha"] = self.alpha
        frame["simulations"] = self.simulations
        frame["permutations"] = self.permutations
        frame["seed"] = self.seed
        return frame

    def _header(self):
        return [
            f"Power of the streak tests. Simulated shooter: {_model_label(self.model, self.rate, self.persistence)}",
            f"{_describe_lengths(self.attempts_per_game)}; {self.simulations:,} simulated seasons per "
            f"point, {self.permutations:,} within-game permutations each ({self.method}); alpha "
            f"{self.alpha:g} ({self.alternative}); seed {self.seed}",
        ]

    def _table(self):
        power, se = self.power, self.power_se
        differences = self.rate_differences
        head = f"{'effect':>7}{'diff':>8}{'games':>7}{'attempts':>10}" + "".join(
            f"{t:>16}" for t in self.tests)
        lines = [head]
        for i, effect in enumerate(self.effects):
            for j, games in enumerate(self.games):
                cells = "".join(f"{power[i, j, t]:>9.3f} ({se[i, j, t]:.3f})"
                                for t in range(len(self.tests)))
                lines.append(f"{effect:>7.3f}{differences[i]:>8.3f}{games:>7d}"
                             f"{self.attempts[j]:>10.0f}{cells}")
        lines.append("power (Monte Carlo SE); diff = P(make | make) - P(make | miss) of the model")
        return lines

    def summary(self):
        """A readable table of power (with Monte Carlo SE), with numbered caveats."""
        return "\n".join(self._header() + self._table() + _caveat_lines(self.model))

    def to_dict(self):
        """The stable JSON layout: settings and ``rows`` (one per effect, games and test)."""
        return {
            "model": self.model,
            "rate": self.rate,
            "persistence": self.persistence,
            "attempts_per_game": _lengths_json(self.attempts_per_game),
            "alpha": self.alpha,
            "alternative": self.alternative,
            "simulations": self.simulations,
            "permutations": self.permutations,
            "method": self.method,
            "max_k": self.max_k,
            "seed": self.seed,
            "tests": list(self.tests),
            "rows": self.rows(),
            "caveats": list(_caveats(self.model)),
        }


@dataclass(frozen=True)
class PlanAnswer:
    """One test's answer to a planning search.

    Attributes
    ----------
    test : str
    found : bool
        Whether the target power is crossed inside the search bounds.
    low, high : float or int or None
        The bracket: effect sizes (minimum detectable effect) or games (games
        needed), adjacent evaluated points with power below the target at
        ``low`` and at least the target at ``high``. ``low`` is None when the
        lowest bound already reaches the target; ``high`` is None when the
        highest bound does not.
    power_low, power_high, power_se_low, power_se_high : float or None
        Estimated power at the bracket's ends and its Monte Carlo SE.
    estimate : float or None
        Linear interpolation of the target crossing inside the bracket.
    attempts_low, attempts_high, attempts_estimate : float or None
        Mean attempts per season at those points.
    reason : str or None
        Why there is no bracket.
    """

    test: str
    found: bool
    low: float | int | None
    high: float | int | None
    power_low: float | None
    power_high: float | None
    power_se_low: float | None
    power_se_high: float | None
    estimate: float | None
    attempts_low: float | None
    attempts_high: float | None
    attempts_estimate: float | None
    reason: str | None = None

    def to_dict(self):
        return {
            "test": self.test, "found": self.found, "low": self.low, "high": self.high,
            "power_low": _number(self.power_low), "power_high": _number(self.power_high),
            "power_se_low": _number(self.power_se_low), "power_se_high": _number(self.power_se_high),
            "estimate": _number(self.estimate), "attempts_low": _number(self.attempts_low),
            "attempts_high": _number(self.attempts_high),
            "attempts_estimate": _number(self.attempts_estimate), "reason": self.reason,
        }


@dataclass(frozen=True, eq=False)
class PlanResult:
    """A planning search: the minimum detectable effect, or the games needed.

    Attributes
    ----------
    find : {'mde', 'games'}
    target_power : float
    effect : float or None
        The effect the games were searched for (``find='games'``).
    games : int or None
        Games per season the effect was searched at (``find='mde'``).
    bounds : (float, float) or (int, int)
        Search bounds (effects, or games).
    resolution : float or int
        Grid step of the effect search, or the bracket width the games search
        stopped at.
    answers : tuple of PlanAnswer
        One per searched test.
    evaluations : PowerResult
        Every point the search evaluated (for curves and checks).
    """

    find: str
    target_power: float
    effect: float | None
    games: int | None
    bounds: tuple
    resolution: float | int
    answers: tuple[PlanAnswer, ...]
    evaluations: PowerResult

    def answer(self, test):
        """The :class:`PlanAnswer` of ``test``."""
        for item in self.answers:
            if item.test == test:
                return item
        raise KeyError(f"no answer for test {test!r} (searched: {[a.test for a in self.answers]})")

    def to_frame(self):
        """One row per searched test."""
        frame = pd.DataFrame([a.to_dict() for a in self.answers], columns=[
            "test", "found", "low", "high", "power_low", "power_high", "power_se_low",
            "power_se_high", "estimate", "attempts_low", "attempts_high", "attempts_estimate",
            "reason"])
        for name in ("power_low", "power_high", "power_se_low", "power_se_high", "estimate",
                     "attempts_low", "attempts_high", "attempts_estimate"):
            frame[name] = frame[name].astype(float)
        frame.insert(0, "find", self.find)
        frame["target_power"] = self.target_power
        frame["model"] = self.evaluations.model
        frame["effect"] = np.nan if self.effect is None else self.effect
        frame["games"] = pd.array([self.games] * len(frame), dtype="Int64")
        return frame

    def summary(self):
        ev = self.evaluations
        if self.find == "mde":
            what = (f"Minimum detectable effect at {self.target_power:.0%} power, {self.games} games "
                    f"per season (about {ev.attempts[0]:,.0f} attempts); effects searched on "
                    f"[{self.bounds[0]:g}, {self.bounds[1]:g}] in steps of {self.resolution:g}")
        else:
            what = (f"Games needed for {self.target_power:.0%} power against effect {self.effect:g} "
                    f"(P(make | make) - P(make | miss) = "
                    f"{_rate_difference(ev.model, self.effect, ev.rate, ev.persistence):.3f}); "
                    f"games searched on [{self.bounds[0]}, {self.bounds[1]}]")
        lines = ev._header() + [what]
        unit = "effect" if self.find == "mde" else "games"
        lines.append(f"{'test':<14}{'bracket (' + unit + ')':>24}{'power at ends (SE)':>32}"
                     f"{'estimate':>11}{'attempts':>10}")
        for a in self.answers:
            if a.found:
                bracket = f"[{_plain(a.low)}, {_plain(a.high)}]"
                ends = (f"{a.power_low:.3f} ({a.power_se_low:.3f}) - "
                        f"{a.power_high:.3f} ({a.power_se_high:.3f})")
                estimate = _fmt(a.estimate, 3 if self.find == "mde" else 1)
                attempts = _fmt(a.attempts_estimate, 0)
                lines.append(f"{a.test:<14}{bracket:>24}{ends:>32}{estimate:>11}{attempts:>10}")
            else:
                lines.append(f"{a.test:<14}  {a.reason}")
        lines.append("Bracket: adjacent evaluated points with power below and at or above the "
                     "target (common random numbers across points).")
        return "\n".join(lines + _caveat_lines(ev.model))

    def to_dict(self):
        """The stable JSON layout: ``find``, settings, ``answers`` and ``evaluations``."""
        return {
            "find": self.find,
            "target_power": self.target_power,
            "effect": self.effect,
            "games": self.games,
            "bounds": list(self.bounds),
            "resolution": self.resolution,
            "answers": [a.to_dict() for a in self.answers],
            "evaluations": self.evaluations.to_dict(),
        }


def _plain(value):
    if isinstance(value, (int, np.integer)):
        return f"{int(value)}"
    return f"{value:g}"


def _caveats(model):
    return (*PLAN_CAVEATS[:2], HIDDEN_CAVEAT, *PLAN_CAVEATS[2:]) if model == "hidden" else PLAN_CAVEATS


def _caveat_lines(model):
    lines = ["Caveats:"]
    for i, text in enumerate(_caveats(model), start=1):
        lines.append(f"  {i}. {text}")
    return lines


# ---------------------------------------------------------------------------
# Simulated seasons (common random numbers)
# ---------------------------------------------------------------------------


class _Seasons:
    """Every simulated season's random inputs, grown a block of games at a time.

    ``state`` and ``uniform`` have shape (simulations, games, longest game):

    - hidden: ``state`` is the hot state, ``uniform`` the uniforms whose
      thresholds at the state's make probability are the makes;
    - markov: ``state`` is a fresh Bernoulli(rate) outcome, ``uniform`` decides
      whether an attempt copies the previous outcome (``uniform < effect``)
      or takes its fresh outcome. P(make | make) = effect + (1 - effect) rate
      and P(make | miss) = (1 - effect) rate: the chain of
      :func:`~streakwise.analysis.simulate.simulate_markov` with stationary
      rate ``rate``, written so that one set of uniforms serves every effect.
    """

    def __init__(self, model, rate, persistence, lengths, simulations, seed):
        self.model, self.rate, self.persistence = model, rate, persistence
        self.spec = lengths
        self.simulations = simulations
        self.base = player_seed_sequence(seed, "simulated seasons")
        if isinstance(lengths, int):
            self.longest = lengths
        elif isinstance(lengths, tuple):
            self.longest = max(lengths)
        else:
            self.longest = lengths["high"]
        self.blocks = []  # one (lengths, state, uniform) per block of games

    @property
    def games(self):
        return len(self.blocks) * GAME_BLOCK

    def grow(self, games):
        while self.games < games:
            parts = [self._draw(s, len(self.blocks))
                     for s in range(-(-self.simulations // SEASON_BLOCK))]
            self.blocks.append(tuple(np.concatenate(p)[: self.simulations] for p in zip(*parts)))

    def _draw(self, season_block, game_block):
        stream = np.random.SeedSequence(self.base.entropy, spawn_key=(season_block, game_block))
        rng = np.random.Generator(np.random.PCG64(stream))
        # always a whole block (extra seasons are dropped), so a season's draws do not depend
        # on how many seasons were asked for
        n = SEASON_BLOCK
        shape = (n * GAME_BLOCK, self.longest)
        if isinstance(self.spec, int):
            lengths = np.full(n * GAME_BLOCK, self.spec, dtype=np.int64)
        elif isinstance(self.spec, tuple):
            lengths = rng.choice(np.asarray(self.spec, dtype=np.int64), size=n * GAME_BLOCK)
        else:
            lengths = simulate_session_lengths(n * GAME_BLOCK, mean=self.spec["mean"],
                                               low=self.spec["low"], high=self.spec["high"], rng=rng)
        if self.model == "hidden":
            if self.persistence < 1.0:
                # rates 1 and 0 make the draw's makes the hidden state itself
                state = simulate_hidden_state(
                    self.longest, hot_rate=1.0, cold_rate=0.0, stay_hot=self.persistence,
                    stay_cold=self.persistence, n_sequences=shape[0], rng=rng).hot
            else:  # never left: the start state (hot with probability 1/2) all game
                state = np.repeat((rng.random(shape[0]) < 0.5)[:, None], self.longest, axis=1)
        else:
            state = rng.random(shape, dtype=np.float32) < np.float32(self.rate)
        uniform = rng.random(shape, dtype=np.float32)
        split = (n, GAME_BLOCK)
        return (lengths.reshape(split), state.reshape(split + (self.longest,)),
                uniform.reshape(split + (self.longest,)))

    def made(self, effect, games):
        """(made, lengths): bool (simulations, games, longest) and int (simulations, games)."""
        self.grow(games)
        lengths = np.concatenate([b[0] for b in self.blocks], axis=1)[:, :games]
        state = np.concatenate([b[1] for b in self.blocks], axis=1)[:, :games]
        uniform = np.concatenate([b[2] for b in self.blocks], axis=1)[:, :games]
        if self.model == "hidden":
            hot = np.float32(self.rate + effect / 2)
            cold = np.float32(self.rate - effect / 2)
            made = np.where(state, uniform < hot, uniform < cold)
        else:
            fresh = uniform >= np.float32(effect)
            fresh[..., 0] = True
            position = np.arange(self.longest)
            source = np.maximum.accumulate(np.where(fresh, position, 0), axis=-1)
            made = np.take_along_axis(state, source, axis=-1)
        return made, lengths

    def season(self, made, lengths, i):
        """Season ``i`` as (outcomes int8, offsets)."""
        rows = made[i]
        if isinstance(self.spec, int):
            flat = rows.reshape(-1)
        else:
            flat = rows[np.arange(self.longest)[None, :] < lengths[i][:, None]]
        offsets = np.concatenate([[0], np.cumsum(lengths[i])]).astype(np.int64)
        return flat.astype(np.int8), offsets


# ---------------------------------------------------------------------------
# Running the tests (serial or on a process pool)
# ---------------------------------------------------------------------------


def _season_id(index):
    return f"simulated season {index}"


def _test_seasons(seasons, settings):
    """p-values and corrected effects of each (index, made, offsets), in order.

    Columns follow :func:`_test_names`. Runs in worker processes: everything
    it needs comes in, and each season's permutations come from the stream of
    ``(seed, season index)`` only.
    """
    max_k = settings["max_k"]
    p = np.full((len(seasons), max_k + 2), np.nan)
    corrected = np.full_like(p, np.nan)
    with warnings.catch_warnings():
        # a season of all makes or all misses: every p-value 1 (no rejection)
        warnings.simplefilter("ignore", RuntimeWarning)
        for row, (index, made, offsets) in enumerate(seasons):
            result = permutation_test(
                made, offsets, player=_season_id(index), max_k=max_k,
                permutations=settings["permutations"], alternative=settings["alternative"],
                method=settings["method"], batch=settings["batch"], rng=settings["seed"],
                resamples=0, keep_null=False)
            tests = [result.test("difference", k) for k in range(1, max_k + 1)]
            tests += [result.test("runs"), result.test("longest_run")]
            for column, test in enumerate(tests):
                corrected[row, column] = np.nan if test.corrected is None else test.corrected
                if column < max_k or column == max_k + 1:
                    p[row, column] = np.nan if test.p_value is None else test.p_value
            runs = result.runs_test.p_value
            p[row, max_k] = np.nan if runs is None else runs
    return p, corrected


class _Runner:
    """Runs batches of seasons' tests, serially or on a pool, and reports progress."""

    def __init__(self, settings, workers, executor, progress):
        self.settings = settings
        self.workers = workers
        self.executor = executor
        self.progress = progress
        self.pool = None
        self.done = 0
        self.planned = 0

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        if self.pool is not None:
            self.pool.shutdown(cancel_futures=True)

    def _report(self):
        if self.progress is not None:
            self.progress(self.done, self.planned)

    def run(self, seasons):
        """Test every (index, made, offsets); returns (p, corrected) in order."""
        n = len(seasons)
        self.planned += n
        self._report()
        columns = self.settings["max_k"] + 2
        p = np.empty((n, columns))
        corrected = np.empty((n, columns))
        parallel = self.executor is not None or self.workers > 1
        size = max(1, min(64, -(-n // (self.workers * 8)))) if parallel else 8
        chunks = [(start, seasons[start:start + size]) for start in range(0, n, size)]
        if not parallel:
            for start, chunk in chunks:
                p[start:start + len(chunk)], corrected[start:start + len(chunk)] = _test_seasons(
                    chunk, self.settings)
                self.done += len(chunk)
                self._report()
            return p, corrected
        if self.executor is not None:
            pool = self.executor
        else:
            if self.pool is None:
                self.pool = ProcessPoolExecutor(max_workers=self.workers)
            pool = self.pool
        futures = {pool.submit(_test_seasons, chunk, self.settings): (start, len(chunk))
                   for start, chunk in chunks}
        for future in as_completed(futures):
            start, length = futures[future]
            p[start:start + length], corrected[start:start + length] = future.result()
            self.done += length
            self._report()
        return p, corrected


class _Evaluator:
    """Power at (effect, games) points, cached; every point uses the same seasons."""

    def __init__(self, spec, runner):
        self.spec = spec
        self.runner = runner
        self.seasons = _Seasons(spec["model"], spec["rate"], spec["persistence"],
                                spec["attempts_per_game"], spec["simulations"], spec["seed"])
        self.cache = {}
        self.attempts = {}

    def evaluate(self, points):
        points = [(_key(e), int(g)) for e, g in points]
        new = [pt for pt in dict.fromkeys(points) if pt not in self.cache]
        if not new:
            return
        self.seasons.grow(max(g for _, g in new))
        jobs, owners = [], []
        for effect, games in new:
            made, lengths = self.seasons.made(effect, games)
            self.attempts[games] = float(lengths.sum(axis=1).mean())
            for i in range(self.spec["simulations"]):
                jobs.append((i, *self.seasons.season(made, lengths, i)))
            owners.append((effect, games))
        p, corrected = self.runner.run(jobs)
        n = self.spec["simulations"]
        for j, point in enumerate(owners):
            self.cache[point] = (p[j * n:(j + 1) * n], corrected[j * n:(j + 1) * n])

    def power(self, point):
        """Power per test at an evaluated point."""
        p = self.cache[(_key(point[0]), int(point[1]))][0]
        with np.errstate(invalid="ignore"):
            return (p <= self.spec["alpha"]).mean(axis=0)

    def result(self, effects, games):
        effects = sorted({_key(e) for e in effects})
        games = sorted({int(g) for g in games})
        shape = (len(effects), len(games), self.spec["simulations"], self.spec["max_k"] + 2)
        p = np.empty(shape)
        corrected = np.empty(shape)
        for i, e in enumerate(effects):
            for j, g in enumerate(games):
                p[i, j], corrected[i, j] = self.cache[(e, g)]
        s = self.spec
        return PowerResult(
            model=s["model"], rate=s["rate"], persistence=s["persistence"],
            attempts_per_game=s["attempts_per_game"], effects=tuple(float(e) for e in effects),
            games=tuple(games), tests=_test_names(s["max_k"]), alpha=s["alpha"],
            alternative=s["alternative"], simulations=s["simulations"],
            permutations=s["permutations"], method=s["method"], max_k=s["max_k"], seed=s["seed"],
            attempts=np.array([self.attempts[g] for g in games]), p_values=p, corrected=corrected)


# ---------------------------------------------------------------------------
# Input validation
# ---------------------------------------------------------------------------


def _real(name, value):
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise ValueError(f"`{name}` must be a number (got {_show(value)})")
    value = float(value)
    if math.isnan(value):
        raise ValueError(f"`{name}` must be a number (got nan)")
    return value


def _probability_iv(name, value, *, low_open=False, high_open=False):
    value = _real(name, value)
    ok = (value > 0.0 if low_open else value >= 0.0) and (value < 1.0 if high_open else value <= 1.0)
    if not ok:
        interval = f"{'(' if low_open else '['}0, 1{')' if high_open else ']'}"
        raise ValueError(f"`{name}` must be in {interval} (got {value!r})")
    return value


def _attempts_per_game_iv(value):
    if isinstance(value, Mapping):
        keys = set(value)
        if keys != {"mean", "low", "high"}:
            raise ValueError("`attempts_per_game` as a mapping needs exactly the keys 'mean', 'low' "
                             f"and 'high' (got {sorted(keys)})")
        low = _check_integer("attempts_per_game['low']", value["low"], minimum=1)
        high = _check_integer("attempts_per_game['high']", value["high"], minimum=low)
        mean = _real("attempts_per_game['mean']", value["mean"])
        simulate_session_lengths(0, mean=mean, low=low, high=high)  # checks the mean
        return {"mean": mean, "low": low, "high": high}
    if isinstance(value, numbers.Integral) and not isinstance(value, (bool, np.bool_)):
        return _check_integer("attempts_per_game", value, minimum=1)
    if isinstance(value, (Sequence, np.ndarray)) and not isinstance(value, str):
        values = list(value)
        if not values:
            raise ValueError("`attempts_per_game` must not be empty")
        values = [_check_integer("attempts_per_game", v, minimum=1) for v in values]
        return values[0] if len(set(values)) == 1 else tuple(values)
    raise ValueError("`attempts_per_game` must be an integer, a list of integers (game lengths "
                     "to draw from) or {'mean', 'low', 'high'} (got "
                     f"{_show(value)})")


def _effect_iv(model, effect, rate, name="effect"):
    effect = _real(name, effect)
    if not 0.0 <= effect < 1.0:
        raise ValueError(f"`{name}` must be in [0, 1) (got {effect!r})")
    if model == "hidden":
        largest = 2 * min(rate, 1 - rate)
        if effect > largest + 1e-12:
            raise ValueError(
                f"`{name}` {effect:g} puts the hot and cold rates (rate +/- effect/2) outside "
                f"[0, 1]: with rate {rate:g} the largest boost is {largest:g}")
    return effect


def _common_iv(model, persistence, rate, attempts_per_game, simulations, permutations, alpha,
               alternative, max_k, method, batch, seed, workers, executor, progress):
    model = _check_choice("model", model, MODELS)
    rate = _probability_iv("rate", rate, low_open=True, high_open=True)
    if model == "hidden":
        persistence = DEFAULT_PERSISTENCE if persistence is None else _probability_iv(
            "persistence", persistence)
    elif persistence is not None:
        raise ValueError("`persistence` (the hidden state's stay probability) goes with "
                         f"model='hidden', not {model!r} (got {_show(persistence)})")
    attempts_per_game = _attempts_per_game_iv(attempts_per_game)
    simulations = _check_integer("simulations", simulations, minimum=1)
    permutations = _check_integer("permutations", permutations, minimum=1)
    alpha = _real("alpha", alpha)
    if not 0.0 < alpha < 1.0:
        raise ValueError(f"`alpha` must be strictly between 0 and 1 (got {alpha!r})")
    alternative = _check_choice("alternative", alternative, ALTERNATIVES)
    max_k = _max_k_iv(max_k)
    method = _check_choice("method", method, METHODS)
    batch = _check_integer("batch", batch, minimum=1)
    if seed is None:
        seed = _fresh_seed()
    elif isinstance(seed, (bool, np.bool_)) or not isinstance(seed, numbers.Integral) or seed < 0:
        raise ValueError(f"`seed` must be None or a non-negative integer (got {_show(seed)})")
    workers = _check_integer("workers", workers, minimum=1)
    if executor is not None and not isinstance(executor, Executor):
        raise ValueError(f"`executor` must be a concurrent.futures.Executor or None (got {_show(executor)})")
    if progress is not None and not callable(progress):
        raise ValueError(f"`progress` must be callable or None (got {_show(progress)})")
    spec = dict(model=model, rate=rate, persistence=persistence, attempts_per_game=attempts_per_game,
                simulations=simulations, permutations=permutations, alpha=alpha,
                alternative=alternative, max_k=max_k, method=method, seed=int(seed))
    settings = dict(max_k=max_k, permutations=permutations, alternative=alternative, method=method,
                    batch=batch, seed=int(seed))
    return spec, settings, workers, executor, progress


def _list_iv(name, value, check):
    values = list(value) if isinstance(value, (Sequence, np.ndarray)) and not isinstance(value, str) \
        else [value]
    if not values:
        raise ValueError(f"`{name}` must not be empty")
    return [check(v) for v in values]


def _tests_iv(tests, max_k):
    names = _test_names(max_k)
    if tests is None:
        return names
    tests = _list_iv("tests", tests, lambda t: _check_choice("tests", t, names))
    return tuple(t for t in names if t in set(tests))


# ---------------------------------------------------------------------------
# Power on a grid
# ---------------------------------------------------------------------------


def estimate_power(model="hidden", effects=0.2, *, persistence=None, rate=0.45,
                   attempts_per_game=15, games=80, simulations=500, permutations=1000, alpha=0.05,
                   alternative="hot", max_k=3, method="auto", batch=4096, seed=None, workers=1,
                   executor=None, progress: Callable[[int, int], object] | None = None):
    r"""Power of every streak test against a simulated hot hand.

    Parameters
    ----------
    model : {'hidden', 'markov'}, optional
        The alternative (module docstring): a hidden hot/cold state (default)
        or dependence on the previous outcome.
    effects : float or sequence of float, optional
        Effect sizes in [0, 1): the hidden state's boost (hot minus cold make
        probability) or P(make | make) - P(make | miss) for ``'markov'``. 0 is
        the null (the power is the test's size). Default 0.2.
    persistence : float, optional
        Stay probability of each hidden state, in [0, 1] (default 0.9; only
        for ``'hidden'``).
    rate : float, optional
        Long-run make rate, in (0, 1) (default 0.45).
    attempts_per_game : int, sequence of int or mapping, optional
        Attempts in every game (default 15); or game lengths to draw from with
        replacement (e.g. a player's observed games); or ``{'mean', 'low',
        'high'}`` for a Poisson truncated to [low, high] with that mean.
    games : int or sequence of int, optional
        Games per season (default 80); several give power against attempts.
    simulations : int, optional
        Simulated seasons per point (default 500).
    permutations : int, optional
        Within-game permutations per season (default 1,000).
    alpha : float, optional
        A test rejects when its p-value is at most ``alpha`` (default 0.05).
    alternative : {'hot', 'two-sided'}, optional
        Direction of every test (default 'hot').
    max_k : int, optional
        D_k for k = 1..max_k (default 3).
    method : {'auto', 'exact', 'random'}, optional
        The engine's p-values (default 'auto': exact only when a season has
        at most 20,000 arrangements, i.e. one short game).
    batch : int, optional
        Permutations per vectorised step of the engine.
    seed : int, optional
        Seed of every stream (None: a fresh one, recorded in the result).
    workers : int, optional
        Processes (default 1). The result does not depend on it.
    executor : concurrent.futures.Executor, optional
        Run the seasons' tests on this executor (not shut down).
    progress : callable, optional
        Called as ``progress(done, planned)`` with the numbers of simulated
        seasons tested so far and planned so far.

    Returns
    -------
    PowerResult

    Notes
    -----
    For each point (effect, games) the ``simulations`` seasons are tested as
    an analyst would test one player: the within-game permutation test of
    D_k and of the longest run of makes [2]_, [3]_ and the stratified
    Wald-Wolfowitz runs test [4]_, each in the hot direction. With
    :math:`R` rejections (:math:`p \le \alpha`) among :math:`n` seasons the
    power estimate is :math:`\hat\beta = R/n` with Monte Carlo standard error
    :math:`\sqrt{\hat\beta(1 - \hat\beta)/n}`. A season on which a statistic
    is undefined (no attempt after k misses, say) counts as no rejection;
    ``share_defined`` reports how often that happened. Random-permutation
    p-values :math:`(b + 1)/(m + 1)` keep the size at most alpha [5]_.

    For the hidden state with stay probability :math:`a` and boost
    :math:`\delta`, the outcome-level difference the tests see is
    :math:`P(\text{make}\mid\text{make}) - P(\text{make}\mid\text{miss})
    = \delta^2 (2a - 1) / (4\mu(1 - \mu))`, far below :math:`\delta` [6]_
    (``rate_differences``).

    References
    ----------
    .. [1] Ritzwoller, D. M. & Romano, J. P. (2022). Uncertainty in the hot
       hand fallacy: Detecting streaky alternatives to random Bernoulli
       sequences. Review of Economic Studies 89(2), 976-1007.
    .. [2] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.
    .. [3] Miller, J. B. & Sanjurjo, A. (2018). Surprised by the hot hand
       fallacy? A truth in the law of small numbers. Econometrica 86(6),
       2019-2047.
    .. [4] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are
       from the same population. Annals of Mathematical Statistics 11(2),
       147-162.
    .. [5] Phipson, B. & Smyth, G. K. (2010). Permutation p-values should never
       be zero. Statistical Applications in Genetics and Molecular Biology
       9(1), Article 39.
    .. [6] Stone, D. F. (2012). Measurement error and the hot hand. The
       American Statistician 66(1), 61-66.

    Examples
    --------
    >>> from streakwise.analysis.power import estimate_power
    >>> res = estimate_power("markov", [0.0, 0.3], attempts_per_game=10, games=20,
    ...                      simulations=40, permutations=200, seed=7)
    >>> res.tests
    ('D_1', 'D_2', 'D_3', 'runs', 'longest_run')
    >>> res.power.shape  # effects x games x tests
    (2, 1, 5)
    >>> bool(res.power_at(0.3, test="D_1")[0] > res.power_at(0.0, test="D_1")[0])
    True
    """
    spec, settings, workers, executor, progress = _common_iv(
        model, persistence, rate, attempts_per_game, simulations, permutations, alpha, alternative,
        max_k, method, batch, seed, workers, executor, progress)
    effects = _list_iv("effects", effects, lambda e: _effect_iv(spec["model"], e, spec["rate"], "effects"))
    games = _list_iv("games", games, lambda g: _check_integer("games", g, minimum=1))
    with _Runner(settings, workers, executor, progress) as runner:
        evaluator = _Evaluator(spec, runner)
        evaluator.evaluate([(e, g) for e in sorted(set(effects)) for g in sorted(set(games))])
    return evaluator.result(effects, games)


# ---------------------------------------------------------------------------
# Searches
# ---------------------------------------------------------------------------


def _answer(test, index, points, power_of, attempts_of, target, simulations, low, high):
    """The PlanAnswer of one test from its final (low, high) bracket on ``points``."""
    if low is None and high is None:
        raise AssertionError("a bracket needs an end")
    if high is None:
        p = float(power_of(points[low])[index])
        return PlanAnswer(
            test=test, found=False, low=points[low], high=None, power_low=p,
            power_high=None, power_se_low=float(_monte_carlo_se(p, simulations)), power_se_high=None,
            estimate=None, attempts_low=attempts_of(points[low]), attempts_high=None,
            attempts_estimate=None,
            reason=f"power {p:.3f} at the upper bound {_plain(points[low])} is below the "
                   f"target {target:g}: raise the bound")
    p_high = float(power_of(points[high])[index])
    se_high = float(_monte_carlo_se(p_high, simulations))
    if low is None:
        return PlanAnswer(
            test=test, found=False, low=None, high=points[high], power_low=None,
            power_high=p_high, power_se_low=None, power_se_high=se_high, estimate=None,
            attempts_low=None, attempts_high=attempts_of(points[high]), attempts_estimate=None,
            reason=f"power {p_high:.3f} already reaches the target {target:g} at the lower bound "
                   f"{_plain(points[high])}")
    p_low = float(power_of(points[low])[index])
    x0, x1 = points[low], points[high]
    share = (target - p_low) / (p_high - p_low) if p_high > p_low else 0.5
    estimate = x0 + min(1.0, max(0.0, share)) * (x1 - x0)
    a0, a1 = attempts_of(x0), attempts_of(x1)
    return PlanAnswer(
        test=test, found=True, low=x0, high=x1, power_low=p_low, power_high=p_high,
        power_se_low=float(_monte_carlo_se(p_low, simulations)), power_se_high=se_high,
        estimate=float(estimate), attempts_low=a0, attempts_high=a1,
        attempts_estimate=float(a0 + (estimate - x0) / (x1 - x0) * (a1 - a0)) if x1 != x0 else a0)


def _bisect(points, evaluate, power_of, indices, target, start=None):
    """Simultaneous bisection, one bracket per test index, on ascending ``points``.

    ``start`` lists point positions to evaluate first (default: the two ends).
    Returns {index: (low, high)} with positions into ``points`` (None where
    the target is not crossed inside).
    """
    last = len(points) - 1
    evaluated = set()

    def run(positions):
        fresh = sorted(set(positions) - evaluated)
        if fresh:
            evaluate([points[i] for i in fresh])
            evaluated.update(fresh)

    run(start if start is not None else [0, last])
    brackets = {}
    for t in indices:
        seen = sorted(evaluated)
        above = [i for i in seen if power_of(points[i])[t] >= target]
        if not above:
            brackets[t] = (max(seen), None)
        elif above[0] == 0:
            brackets[t] = (None, 0)
        else:
            brackets[t] = (max(i for i in seen if i < above[0]), above[0])
    while True:
        middles = {t: (lo + hi) // 2 for t, (lo, hi) in brackets.items()
                   if lo is not None and hi is not None and hi - lo > 1}
        if not middles:
            return brackets
        run(middles.values())
        for t, mid in middles.items():
            lo, hi = brackets[t]
            brackets[t] = (lo, mid) if power_of(points[mid])[t] >= target else (mid, hi)


def _target_iv(target_power):
    target_power = _real("target_power", target_power)
    if not 0.0 < target_power < 1.0:
        raise ValueError(f"`target_power` must be strictly between 0 and 1 (got {target_power!r})")
    return target_power


def minimum_detectable_effect(model="hidden", *, games=80, target_power=0.8, low=0.0, high=None,
                              resolution=0.01, tests=None, persistence=None, rate=0.45,
                              attempts_per_game=15, simulations=500, permutations=1000, alpha=0.05,
                              alternative="hot", max_k=3, method="auto", batch=4096, seed=None,
                              workers=1, executor=None,
                              progress: Callable[[int, int], object] | None = None):
    r"""Smallest effect each test detects with the target power: a bounded bisection.

    Parameters
    ----------
    model : {'hidden', 'markov'}, optional
    games : int, optional
        Games per season (default 80).
    target_power : float, optional
        Default 0.8.
    low, high : float, optional
        Search bounds for the effect (default 0 and the model's limit: 0.8 for
        'hidden', capped at ``2 min(rate, 1 - rate)``; 0.5 for 'markov').
    resolution : float, optional
        Step of the effect grid (default 0.01).
    tests : sequence of str, optional
        Tests to search for (default all: ``'D_1'``.., ``'runs'``,
        ``'longest_run'``).
    persistence, rate, attempts_per_game, simulations, permutations, alpha, alternative, max_k, method, batch, seed, workers, executor, progress
        As in :func:`estimate_power`.

    Returns
    -------
    PlanResult
        Per test, the bracket of adjacent grid effects whose power is below
        and at or above the target, the powers there with their Monte Carlo
        SE, and an interpolated estimate; ``evaluations`` holds every point.

    Notes
    -----
    The grid is ``low, low + resolution, ..., high``. Both ends are evaluated
    first; then, for every test whose bracket is wider than one step, the
    midpoint (all tests' midpoints in one batch of simulations). Every point
    reuses the same simulated seasons' random inputs and permutation streams
    (common random numbers), so the estimated power is nearly monotone in the
    effect and the bracket is where the estimated curve crosses the target,
    up to Monte Carlo error (see the SEs). About
    :math:`\log_2((high - low)/resolution)` rounds.

    Examples
    --------
    >>> from streakwise.analysis.power import minimum_detectable_effect
    >>> plan = minimum_detectable_effect("markov", games=20, attempts_per_game=10,
    ...                                  tests=["D_1"], high=0.4, resolution=0.05,
    ...                                  simulations=40, permutations=200, seed=3)
    >>> answer = plan.answer("D_1")
    >>> answer.found, answer.power_low < 0.8 <= answer.power_high
    (True, True)
    """
    spec, settings, workers, executor, progress = _common_iv(
        model, persistence, rate, attempts_per_game, simulations, permutations, alpha, alternative,
        max_k, method, batch, seed, workers, executor, progress)
    games = _check_integer("games", games, minimum=1)
    target_power = _target_iv(target_power)
    low = _effect_iv(spec["model"], low, spec["rate"], "low")
    if high is None:
        high = DEFAULT_MAX_EFFECT[spec["model"]]
        if spec["model"] == "hidden":
            high = min(high, 2 * min(spec["rate"], 1 - spec["rate"]))
    high = _effect_iv(spec["model"], high, spec["rate"], "high")
    if high <= low:
        raise ValueError(f"`high` must be above `low` = {low:g} (got {high:g})")
    resolution = _real("resolution", resolution)
    if not 0.0 < resolution <= high - low + 1e-12:
        raise ValueError(f"`resolution` must be in (0, high - low] = (0, {high - low:g}] "
                         f"(got {resolution!r})")
    tests = _tests_iv(tests, spec["max_k"])
    steps = int(math.floor((high - low) / resolution + 1e-9))
    grid = [_key(low + i * resolution) for i in range(steps + 1)]
    if grid[-1] < _key(high):
        grid.append(_key(high))
    names = _test_names(spec["max_k"])
    indices = [names.index(t) for t in tests]
    with _Runner(settings, workers, executor, progress) as runner:
        evaluator = _Evaluator(spec, runner)
        brackets = _bisect(grid, lambda effects: evaluator.evaluate([(e, games) for e in effects]),
                           lambda e: evaluator.power((e, games)), indices, target_power)
    attempts = evaluator.attempts[games]
    answers = tuple(
        _answer(names[t], t, grid, lambda e: evaluator.power((e, games)), lambda e: attempts,
                target_power, spec["simulations"], *brackets[t])
        for t in indices)
    evaluated = sorted(e for e, g in evaluator.cache if g == games)
    return PlanResult(find="mde", target_power=target_power, effect=None, games=games,
                      bounds=(low, high), resolution=resolution, answers=answers,
                      evaluations=evaluator.result(evaluated, [games]))


def games_needed(model="hidden", effect=0.2, *, target_power=0.8, min_games=1, max_games=640,
                 tolerance=0.05, tests=None, persistence=None, rate=0.45, attempts_per_game=15,
                 simulations=500, permutations=1000, alpha=0.05, alternative="hot", max_k=3,
                 method="auto", batch=4096, seed=None, workers=1, executor=None,
                 progress: Callable[[int, int], object] | None = None):
    r"""Games (and attempts) each test needs to detect ``effect`` with the target power.

    Parameters
    ----------
    model : {'hidden', 'markov'}, optional
    effect : float, optional
        The effect to detect (default 0.2), in [0, 1).
    target_power : float, optional
        Default 0.8.
    min_games, max_games : int, optional
        Search bounds (default 1 and 640 games).
    tolerance : float, optional
        Stop when a bracket [g0, g1] has ``g1 - g0 <= max(1, tolerance * g1)``
        (default 0.05).
    tests : sequence of str, optional
        Tests to search for (default all).
    persistence, rate, attempts_per_game, simulations, permutations, alpha, alternative, max_k, method, batch, seed, workers, executor, progress
        As in :func:`estimate_power`.

    Returns
    -------
    PlanResult
        Per test, the bracket in games (and mean attempts per season).

    Notes
    -----
    Games at fixed attempts per game: the number of games doubles from
    ``min_games`` (ending at ``max_games``) until every searched test reaches
    the target, then each test's bracket is bisected. A season of G games is
    the first G games of the same simulated seasons (common random numbers),
    so power grows smoothly with G. The cost of a point grows with its
    attempts: weak tests (the longest run, often) drive the search to large
    seasons; pass ``tests`` to search only some.

    Examples
    --------
    >>> from streakwise.analysis.power import games_needed
    >>> plan = games_needed("markov", 0.3, attempts_per_game=10, tests=["D_1"],
    ...                     max_games=80, simulations=40, permutations=200, seed=3)
    >>> a = plan.answer("D_1")
    >>> a.found, a.low < a.high, a.attempts_high == 10 * a.high
    (True, True, True)
    """
    spec, settings, workers, executor, progress = _common_iv(
        model, persistence, rate, attempts_per_game, simulations, permutations, alpha, alternative,
        max_k, method, batch, seed, workers, executor, progress)
    effect = _effect_iv(spec["model"], effect, spec["rate"])
    target_power = _target_iv(target_power)
    min_games = _check_integer("min_games", min_games, minimum=1)
    max_games = _check_integer("max_games", max_games, minimum=min_games + 1)
    tolerance = _real("tolerance", tolerance)
    if not 0.0 <= tolerance < 1.0:
        raise ValueError(f"`tolerance` must be in [0, 1) (got {tolerance!r})")
    tests = _tests_iv(tests, spec["max_k"])
    names = _test_names(spec["max_k"])
    indices = [names.index(t) for t in tests]
    with _Runner(settings, workers, executor, progress) as runner:
        evaluator = _Evaluator(spec, runner)

        def power_of(g):
            return evaluator.power((effect, g))

        def evaluate(points):
            evaluator.evaluate([(effect, g) for g in points])

        # doubling: find an upper end for every test (or reach max_games)
        ladder = []
        g = min_games
        while g < max_games:
            ladder.append(g)
            g *= 2
        ladder.append(max_games)
        reached = [ladder[0]]
        evaluate(reached)
        for g in ladder[1:]:
            if all(power_of(reached[-1])[t] >= target_power for t in indices):
                break
            evaluate([g])
            reached.append(g)
        brackets = {}
        for t in indices:
            above = [g for g in reached if power_of(g)[t] >= target_power]
            if not above:
                brackets[t] = (reached[-1], None)
            elif above[0] == reached[0]:
                brackets[t] = (None, reached[0])
            else:
                brackets[t] = (max(g for g in reached if g < above[0]), above[0])
        # bisection on games, all tests' midpoints in one batch
        while True:
            middles = {t: (lo + hi) // 2 for t, (lo, hi) in brackets.items()
                       if lo is not None and hi is not None
                       and hi - lo > max(1, math.floor(tolerance * hi))}
            if not middles:
                break
            evaluate(middles.values())
            for t, mid in middles.items():
                lo, hi = brackets[t]
                brackets[t] = (lo, mid) if power_of(mid)[t] >= target_power else (mid, hi)
    evaluated = sorted(g for e, g in evaluator.cache if e == _key(effect))
    points = evaluated
    position = {g: i for i, g in enumerate(points)}
    answers = tuple(
        _answer(names[t], t, points, power_of, lambda g: evaluator.attempts[g], target_power,
                spec["simulations"], *(None if v is None else position[v] for v in brackets[t]))
        for t in indices)
    return PlanResult(find="games", target_power=target_power, effect=effect, games=None,
                      bounds=(min_games, max_games), resolution=tolerance, answers=answers,
                      evaluations=evaluator.result([effect], evaluated))


# ---------------------------------------------------------------------------
# Figures
# ---------------------------------------------------------------------------


def _colour(test):
    if test == "runs":
        return _RUNS_COLOUR
    if test == "longest_run":
        return _LONGEST_COLOUR
    k = int(test[2:])
    return _TEST_COLOURS[(k - 1) % len(_TEST_COLOURS)]


def _power_curve_figure_iv(result, against, tests):
    target = None
    if isinstance(result, PlanResult):
        target = result.target_power
        result = result.evaluations
    if not isinstance(result, PowerResult):
        raise ValueError(f"`result` must be a PowerResult or PlanResult (got {_show(result)})")
    against = _check_choice("against", against, ("effect", "attempts"))
    if tests is None:
        tests = result.tests
    else:
        tests = _list_iv("tests", tests, lambda t: _check_choice("tests", t, result.tests))
    return result, against, tests, target


def power_curve_figure(result, *, against="effect", tests=None, target_power=None):
    """Power curves with Monte Carlo error bars: power against effect size or attempts.

    Parameters
    ----------
    result : PowerResult or PlanResult
        A plan's evaluated points are drawn with its target power.
    against : {'effect', 'attempts'}, optional
        x axis: the effect size (one line per test and number of games), or
        the mean attempts per season (one line per test and effect).
    tests : sequence of str, optional
        Tests to draw (default all).
    target_power : float, optional
        Draw a dashed line at this power (a plan's own target by default).

    Returns
    -------
    plotly.graph_objects.Figure
        Okabe-Ito colours per test (colour-blind safe), dash styles per
        group; error bars are +/- 1.96 Monte Carlo SE; a dotted line at alpha.

    Examples
    --------
    >>> from streakwise.analysis.power import estimate_power, power_curve_figure
    >>> res = estimate_power("markov", [0.0, 0.2], attempts_per_game=10, games=[10, 20],
    ...                      simulations=20, permutations=100, seed=1)
    >>> fig = power_curve_figure(res, tests=["D_1", "runs"])
    >>> len(fig.data)  # two tests x two season lengths
    4
    >>> len(power_curve_figure(res, against="attempts").data)  # five tests x two effects
    10
    """
    result, against, tests, target = _power_curve_figure_iv(result, against, tests)
    if target_power is not None:
        target = _target_iv(target_power)
    import plotly.graph_objects as go

    power, se = result.power, result.power_se
    fig = go.Figure()
    for test in tests:
        t = result.tests.index(test)
        if against == "effect":
            groups = [(f"{g} games", power[:, j, t], se[:, j, t], np.asarray(result.effects))
                      for j, g in enumerate(result.games)]
        else:
            groups = [(f"effect {e:g}", power[i, :, t], se[i, :, t], result.attempts)
                      for i, e in enumerate(result.effects)]
        for g, (name, y, error, x) in enumerate(groups):
            label = test if len(groups) == 1 else f"{test}, {name}"
            fig.add_trace(go.Scatter(
                x=x, y=y, mode="lines+markers", name=label,
                line=dict(color=_colour(test), dash=_DASHES[g % len(_DASHES)], width=2),
                marker=dict(color=_colour(test), size=7),
                error_y=dict(type="data", array=1.96 * error, thickness=1.2, width=3,
                             color=_colour(test)),
                hovertemplate="%{x:.3g}: power %{y:.3f}<extra>" + label + "</extra>"))
    fig.add_hline(y=result.alpha, line=dict(color="#7F7F7F", dash="dot", width=1),
                  annotation_text=f"alpha {result.alpha:g}", annotation_position="bottom right")
    if target is not None:
        fig.add_hline(y=target, line=dict(color=OKABE_ITO["black"], dash="dash", width=1),
                      annotation_text=f"target power {target:g}", annotation_position="top left")
    if result.model == "hidden":
        x_title = "boost: hot minus cold make probability"
        model = f"hidden hot state (stay {result.persistence:g})"
    else:
        x_title = "P(make | make) - P(make | miss)"
        model = "Markov dependence"
    if against == "attempts":
        x_title = "attempts per season (mean)"
    fig.update_layout(
        title=f"Power of the streak tests: {model}, rate {result.rate:g}, "
              f"{result.simulations} seasons per point (bars: 95% Monte Carlo)",
        xaxis_title=x_title, yaxis=dict(title="power", range=[0, 1.02]),
        template="plotly_white", legend=dict(orientation="h", y=-0.2))
    return fig
