"""The demo league's scenario: teams, schedule, players and the truth about them.

Everything is invented (see :mod:`.names`). :func:`build_scenario` turns a seed
into a :class:`Scenario`: 12 teams of 12 players, two seasons of 77 games per
team (every pair of teams meets 7 times), and every player's type and true
parameters. The same seed gives the same scenario.

The make model
--------------
Every field-goal attempt of player *i* in game *g* is a make with probability

    p = expit( player term + u[i, g] + sum_k beta_k (x_k - r_k) )

- ``sum_k beta_k (x_k - r_k)`` is the difficulty model
  (:data:`DIFFICULTY`): distance, distance to the nearest defender and
  home/away change the odds; period, game clock and score margin are recorded
  on every attempt but have coefficient 0. It is 0 on a reference attempt (15
  feet, nearest defender 4 feet, away).
- ``u[i, g] ~ Normal(0, form_sd[i])`` is the player's form in that game: it
  varies from game to game for every player, so attempts are exchangeable
  only within a game, and the permutation null must shuffle within games.
- the player term is ``skill`` (log-odds of a make on a reference attempt),
  except for players with a hidden state, whose term is ``logit(hot_rate)``
  in the hot state and ``logit(cold_rate)`` in the cold state. The state is a
  two-state Markov chain that stays hot with probability ``stay_hot`` and cold
  with ``stay_cold`` from one attempt to the next and starts every game from
  its stationary distribution.

Player types (``kind``)
-----------------------
``steady``
    No dependence between attempts: only difficulty and game form.
``streaky``
    A hidden hot/cold state with a large effect (hot 35-40 points above cold
    on a reference attempt, both states staying 0.90-0.93): a real hot hand.
    In simulation a within-game permutation test of one season's lag-1
    difference finds it about 70% of the time at 35 points and 90% at 40;
    two seasons almost always. (Gaps of 15-25 points hide in game-length
    sequences: found only 20-35% of the time.)
``small_effect``
    A make raises the log-odds of the next attempt in the game by
    ``after_make_shift``, worth 1-3 points on a reference attempt: real, and
    the size published studies find, but too small for one season to show.
``shot_selection``
    After a make the player takes harder attempts: the after-make attempt is
    ``distance_shift`` feet longer with the defender ``defender_shift`` feet
    closer. One of them also has a large real hot state whose effect the
    harder attempts cancel in raw rates; the others have no hot hand and look
    cold in raw rates.
``cold_spells``
    A persistent cold state: the usual state (``hot_rate``) is left rarely
    (stays 0.95-0.96), and the cold state is 30-35 points worse and lasts
    (stays 0.91-0.93).
``free_throw_specialist``
    Steady from the field; 0.90-0.94 at the line and fouled more often.

Free throws are independent attempts with probability
``expit(ft_logit + v[i, g])``, ``v ~ Normal(0, ft_form_sd)``, for every type.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import asdict, dataclass, field

import numpy as np
from scipy import special

from streakwise.analysis.difficulty_sim import SHOT_ZONES, DifficultyModel
from streakwise.analysis.simulate import hidden_state_moments, markov_moments

from .names import LEAGUE_NAME, TEAM_NAMES, player_names, team_code

__all__ = [
    "DIFFICULTY",
    "FREE_THROW_DISTANCE",
    "Game",
    "KINDS",
    "PERIODS",
    "PERIOD_SECONDS",
    "Player",
    "PracticeStudy",
    "SEASONS",
    "Scenario",
    "THREE_POINT_DISTANCE",
    "Team",
    "build_scenario",
    "stream",
]

#: Season names, in order.
SEASONS: tuple[str, ...] = ("2031-32", "2032-33")
_SEASON_STARTS = (dt.date(2031, 10, 21), dt.date(2032, 10, 19))
_MEETINGS = 7  # every pair of teams meets this often in a season

PERIODS = 4
PERIOD_SECONDS = 720
THREE_POINT_DISTANCE = 23.0
FREE_THROW_DISTANCE = 15.0

#: The true difficulty model of field-goal attempts (log-odds per unit).
DIFFICULTY = DifficultyModel(
    coefficients={
        "distance": -0.045,
        "defender_distance": 0.07,
        "home": 0.06,
        "period": 0.0,
        "clock_s": 0.0,
        "score_margin": 0.0,
    },
    reference={
        "distance": 15.0,
        "defender_distance": 4.0,
        "home": 0.0,
        "period": 1.0,
        "clock_s": 0.0,
        "score_margin": 0.0,
    },
)

#: Player types, see the module docstring.
KINDS: tuple[str, ...] = (
    "steady",
    "streaky",
    "small_effect",
    "shot_selection",
    "cold_spells",
    "free_throw_specialist",
)
#: Gap between the hot and cold rates of the streaky players (reference attempt).
#: Chosen by power: a within-game permutation test of one season (77 games of
#: about 16 attempts) finds gaps of 0.15-0.25 only 20-35% of the time, 0.35
#: about 70% and 0.40 about 90% (D_1, D_2 and the runs count alike).
_STREAKY_GAP = (0.35, 0.40)
_COLD_DROP = (0.30, 0.35)  # cold-spell players: how much worse the cold state is
_KIND_COUNTS = {"streaky": 4, "shot_selection": 3, "cold_spells": 2, "small_effect": 6, "free_throw_specialist": 3}

_POSITIONS = ("guard", "guard", "wing", "wing", "big", "guard", "wing", "big", "big", "guard", "wing", "big")
_ROLES = ("starter",) * 5 + ("bench",) * 4 + ("reserve",) * 3
_ZONE_SHARES = {  # rim, short, middle, beyond the arc
    "guard": (0.18, 0.14, 0.23, 0.45),
    "wing": (0.25, 0.17, 0.23, 0.35),
    "big": (0.48, 0.28, 0.16, 0.08),
}
_SKILL_MEAN = {"guard": -0.20, "wing": -0.17, "big": -0.30}  # log-odds on a reference attempt
_SKILL_SD = 0.15
_FT_RANGE = {"guard": (0.76, 0.88), "wing": (0.72, 0.84), "big": (0.58, 0.76)}
_FOUL_RATE = {"guard": 0.07, "wing": 0.08, "big": 0.11}  # shooting fouls drawn per field-goal attempt


@dataclass(frozen=True)
class Team:
    """An invented team."""

    code: str
    name: str


@dataclass(frozen=True)
class Game:
    """One scheduled game."""

    id: str
    season: str
    order: int  # 1-based order of the game in its season
    date: dt.date
    home: str  # team code
    away: str  # team code


@dataclass(frozen=True)
class Player:
    """An invented player and the true parameters the demo draws them from.

    Attributes
    ----------
    id, name, team, position, role
        ``role``: ``starter``, ``bench`` or ``reserve`` (rotation players are
        starters and bench players).
    kind
        One of :data:`KINDS`.
    dependence
        ``none``, ``hidden_state`` or ``previous_outcome``: how, if at all,
        an attempt depends on the earlier ones of the game.
    skill
        Log-odds of a make on a reference attempt (``None`` for players with a
        hidden state, whose term is ``logit(hot_rate)`` or ``logit(cold_rate)``).
    form_sd
        Standard deviation of the game-to-game form (log-odds).
    hot_rate, cold_rate, stay_hot, stay_cold
        The hidden state (``None`` without one), rates on a reference attempt.
    after_make_shift
        Log-odds added to an attempt that follows a make (``small_effect``).
    distance_shift, defender_shift
        How much harder an attempt after a make is (``shot_selection``).
    zone_shares
        Share of attempts from each of the zones in
        :data:`~streakwise.analysis.difficulty_sim.SHOT_ZONES`.
    attempts_mean, attempts_low, attempts_high, play_rate
        Field-goal attempts in a game played: a Poisson truncated to
        [low, high] with this mean; ``play_rate`` is the chance of playing.
    ft_logit, ft_form_sd, foul_rate
        Free throws: log-odds of a make, game-to-game form, and shooting
        fouls drawn per field-goal attempt.
    in_practice_study
        Whether the player takes part in the practice shooting study.
    """

    id: str
    name: str
    team: str
    position: str
    role: str
    kind: str
    dependence: str
    skill: float | None
    form_sd: float
    hot_rate: float | None
    cold_rate: float | None
    stay_hot: float | None
    stay_cold: float | None
    after_make_shift: float
    distance_shift: float
    defender_shift: float
    zone_shares: tuple[float, float, float, float]
    attempts_mean: float
    attempts_low: int
    attempts_high: int
    play_rate: float
    ft_logit: float
    ft_form_sd: float
    foul_rate: float
    in_practice_study: bool

    @property
    def rotation(self) -> bool:
        """Starters and bench players (not the reserves)."""
        return self.role in ("starter", "bench")

    def reference_moments(self) -> dict:
        """Long-run make rate and lag-1 difference on reference attempts, no form.

        ``rate_difference`` is P(make | make) - P(make | miss) of the
        player's dependence model alone (0 for ``none``); it leaves out game
        form and shot selection.
        """
        if self.dependence == "hidden_state":
            m = hidden_state_moments(self.hot_rate, self.cold_rate, self.stay_hot, self.stay_cold)
            return {"make_rate": m.make_rate, "rate_difference": m.rate_difference, "lag1_autocorrelation": m.lag1_autocorrelation}
        if self.dependence == "previous_outcome":
            p0 = float(special.expit(self.skill))
            p1 = float(special.expit(self.skill + self.after_make_shift))
            m = markov_moments(p1, p0)
            return {"make_rate": m.make_rate, "rate_difference": m.rate_difference, "lag1_autocorrelation": m.lag1_autocorrelation}
        return {"make_rate": float(special.expit(self.skill)), "rate_difference": 0.0, "lag1_autocorrelation": 0.0}


@dataclass(frozen=True)
class PracticeStudy:
    """The practice shooting study: rounds of attempts from fixed spots.

    A round's attempts are a make with probability
    ``expit(player term + practice_offset + beta_distance (distance - 15) + w[i, day])``,
    ``w ~ Normal(0, day_form_sd)``: no defender, no shot selection (the spot
    is fixed); a hidden state starts every round from its stationary
    distribution, and a previous-outcome effect acts within the round.
    """

    name: str
    season: str
    dates: tuple[dt.date, ...]
    spots: tuple[tuple[str, float], ...]  # (spot name, distance in feet)
    rounds_per_spot: int
    attempts_per_round: int
    practice_offset: float
    day_form_sd: float
    players: tuple[str, ...]


@dataclass(frozen=True)
class Scenario:
    """The whole invented league with its truth."""

    name: str
    seed: int
    seasons: tuple[str, ...]
    teams: tuple[Team, ...]
    players: tuple[Player, ...]
    games: tuple[Game, ...]
    practice: PracticeStudy
    difficulty: DifficultyModel = field(default=DIFFICULTY)
    periods: int = PERIODS
    period_seconds: int = PERIOD_SECONDS
    three_point_distance: float = THREE_POINT_DISTANCE
    free_throw_distance: float = FREE_THROW_DISTANCE

    def season_games(self, season: str) -> tuple[Game, ...]:
        return tuple(g for g in self.games if g.season == season)

    def kind_counts(self) -> dict[str, int]:
        counts = {kind: 0 for kind in KINDS}
        for player in self.players:
            counts[player.kind] += 1
        return counts

    def to_truth(self) -> dict:
        """Everything the demo was drawn from, as plain JSON-ready values."""
        return {
            "about": (
                "Truth of the invented demo league: every player's type and true parameters. "
                "Kept apart from the data; no analysis reads it."
            ),
            "league": self.name,
            "seed": self.seed,
            "seasons": list(self.seasons),
            "periods": self.periods,
            "period_seconds": self.period_seconds,
            "three_point_distance": self.three_point_distance,
            "free_throw_distance": self.free_throw_distance,
            "make_model": {
                "field_goal": (
                    "logit P(make) = player term + game form u[i,g] + sum_k beta_k * (x_k - reference_k); "
                    "player term = skill, or logit(hot_rate) / logit(cold_rate) by hidden state; "
                    "u[i,g] ~ Normal(0, form_sd); small_effect adds after_make_shift after a make in the game; "
                    "shot_selection takes attempts distance_shift feet longer and defender_shift feet "
                    "closer after a make; hidden states start each game from the stationary distribution"
                ),
                "free_throw": "logit P(make) = ft_logit + v[i,g], v[i,g] ~ Normal(0, ft_form_sd); independent attempts",
                "difficulty": {
                    "form": "sum_k beta_k * (x_k - reference_k)",
                    "coefficients": dict(self.difficulty.coefficients),
                    "reference": dict(self.difficulty.reference),
                    "home": "1 for the home team, 0 for the away team",
                },
                "shot_zones": [
                    {"name": z.name, "low": z.low, "high": z.high, "defender_mean": z.defender_mean} for z in SHOT_ZONES
                ],
            },
            "kind_counts": self.kind_counts(),
            "teams": [asdict(team) for team in self.teams],
            "players": [_player_truth(p) for p in self.players],
            "practice_study": {
                "name": self.practice.name,
                "season": self.practice.season,
                "dates": [d.isoformat() for d in self.practice.dates],
                "spots": [{"spot": s, "distance": d} for s, d in self.practice.spots],
                "rounds_per_spot": self.practice.rounds_per_spot,
                "attempts_per_round": self.practice.attempts_per_round,
                "model": (
                    "logit P(make) = player term + practice_offset + beta_distance * (distance - 15) + w[i,day], "
                    "w ~ Normal(0, day_form_sd); a hidden state starts each round from its stationary "
                    "distribution; after_make_shift acts within a round; no shot selection"
                ),
                "practice_offset": self.practice.practice_offset,
                "day_form_sd": self.practice.day_form_sd,
                "players": list(self.practice.players),
            },
        }


def _player_truth(player: Player) -> dict:
    out = asdict(player)
    out["zone_shares"] = list(player.zone_shares)
    out["rotation"] = player.rotation
    out["ft_rate"] = float(special.expit(player.ft_logit))
    out["reference"] = player.reference_moments()
    return out


# ---------------------------------------------------------------------------
# Building the scenario
# ---------------------------------------------------------------------------


def stream(seed: int, *keys: int) -> np.random.Generator:
    """An independent random stream for one purpose, from the seed and integer keys."""
    return np.random.default_rng([int(seed), *(int(k) for k in keys)])


_STREAM_PLAYERS = 1
_STREAM_SCHEDULE = 2
_STREAM_PRACTICE = 3


def build_scenario(seed: int) -> Scenario:
    """The league, its schedule and every player's truth for ``seed``.

    Parameters
    ----------
    seed : int
        Non-negative integer; the same seed gives the same scenario.

    Returns
    -------
    Scenario
    """
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise ValueError(f"`seed` must be a non-negative integer (got {seed!r})")
    seed = int(seed)
    teams = tuple(Team(team_code(name), name) for name in TEAM_NAMES)
    players = _build_players(seed, teams)
    games = _build_schedule(seed, teams)
    practice = _build_practice(seed, players)
    players = tuple(
        p if p.id not in practice.players else _replace(p, in_practice_study=True) for p in players
    )
    return Scenario(
        name=LEAGUE_NAME, seed=seed, seasons=SEASONS, teams=teams, players=players, games=games, practice=practice
    )


def _replace(player: Player, **changes) -> Player:
    from dataclasses import replace

    return replace(player, **changes)


def _logit(p: float) -> float:
    return float(special.logit(p))


def _build_players(seed: int, teams: tuple[Team, ...]) -> tuple[Player, ...]:
    rng = stream(seed, _STREAM_PLAYERS)
    n_slots = len(_ROLES)
    names = player_names(len(teams) * n_slots, rng=rng)

    # Which roster slots get which type: distinct players, the large effects on
    # starters of different teams (so that a season shows them).
    kinds = np.full((len(teams), n_slots), "steady", dtype=object)
    starters = [s for s, role in enumerate(_ROLES) if role == "starter"]
    rotation = [s for s, role in enumerate(_ROLES) if role != "reserve"]
    team_order = rng.permutation(len(teams))
    for k, team in enumerate(team_order[: _KIND_COUNTS["streaky"]]):
        kinds[team, starters[rng.integers(len(starters))]] = "streaky"
    for team in team_order[_KIND_COUNTS["streaky"] : _KIND_COUNTS["streaky"] + _KIND_COUNTS["shot_selection"]]:
        kinds[team, starters[rng.integers(len(starters))]] = "shot_selection"

    def place(kind: str, count: int, slots: list[int]) -> None:
        free = [(t, s) for t in range(len(teams)) for s in slots if kinds[t, s] == "steady"]
        for index in rng.choice(len(free), size=count, replace=False):
            kinds[free[index]] = kind

    place("cold_spells", 1, starters)
    place("cold_spells", _KIND_COUNTS["cold_spells"] - 1, [s for s in rotation if _ROLES[s] == "bench"])
    place("small_effect", 3, starters)
    place("small_effect", _KIND_COUNTS["small_effect"] - 3, [s for s in rotation if _ROLES[s] == "bench"])
    ft_slots = [s for s in rotation if _POSITIONS[s] != "big"]
    place("free_throw_specialist", _KIND_COUNTS["free_throw_specialist"], ft_slots)

    selection_with_state = next(
        (t, s) for t in team_order[4:7] for s in range(n_slots) if kinds[t, s] == "shot_selection"
    )

    players = []
    for t, team in enumerate(teams):
        for s in range(n_slots):
            position, role, kind = _POSITIONS[s], _ROLES[s], str(kinds[t, s])
            number = t * n_slots + s + 1
            skill = _SKILL_MEAN[position] + _SKILL_SD * rng.standard_normal()
            form_sd = rng.uniform(0.15, 0.35)
            if role == "starter":
                mean, low, high, play = rng.uniform(11.5, 15.0), 10, 22, 0.96
            elif role == "bench":
                mean, low, high, play = rng.uniform(4.5, 7.0), 2, 12, 0.96
            else:
                mean, low, high, play = rng.uniform(2.0, 3.5), 1, 7, 0.5
            ft_rate = rng.uniform(*_FT_RANGE[position])
            foul_rate = _FOUL_RATE[position] * rng.uniform(0.8, 1.2)
            params = dict(
                dependence="none", skill=float(skill), hot_rate=None, cold_rate=None, stay_hot=None, stay_cold=None,
                after_make_shift=0.0, distance_shift=0.0, defender_shift=0.0,
            )
            state = None
            if kind == "streaky":
                mean = rng.uniform(15.0, 17.0)
                state = (rng.uniform(*_STREAKY_GAP), rng.uniform(0.44, 0.50), rng.uniform(0.90, 0.93), rng.uniform(0.90, 0.93))
            elif kind == "shot_selection":
                if (t, s) == selection_with_state:
                    # harder enough after makes to cancel the hot state in raw rates
                    mean = rng.uniform(15.0, 17.0)
                    state = (rng.uniform(*_STREAKY_GAP), rng.uniform(0.44, 0.50), rng.uniform(0.90, 0.93), rng.uniform(0.90, 0.93))
                    params.update(distance_shift=float(rng.uniform(5.5, 6.5)), defender_shift=-float(rng.uniform(1.3, 1.7)))
                else:
                    params.update(distance_shift=float(rng.uniform(3.0, 4.5)), defender_shift=-float(rng.uniform(0.6, 1.0)))
            elif kind == "cold_spells":
                usual = float(rng.uniform(0.50, 0.54))  # high enough for a cold state 30-35 points lower
                drop = rng.uniform(*_COLD_DROP)
                params.update(
                    dependence="hidden_state", skill=None, hot_rate=usual, cold_rate=usual - drop,
                    stay_hot=float(rng.uniform(0.95, 0.96)), stay_cold=float(rng.uniform(0.91, 0.93)),
                )
            elif kind == "small_effect":
                difference = rng.uniform(0.01, 0.03)
                base = float(special.expit(skill))
                params.update(dependence="previous_outcome", after_make_shift=_logit(base + difference) - float(skill))
            elif kind == "free_throw_specialist":
                ft_rate = rng.uniform(0.90, 0.94)
                foul_rate *= 1.8
            if state is not None:
                gap, middle, stay_hot, stay_cold = (float(v) for v in state)
                params.update(
                    dependence="hidden_state", skill=None, hot_rate=middle + gap / 2, cold_rate=middle - gap / 2,
                    stay_hot=stay_hot, stay_cold=stay_cold,
                )
            players.append(
                Player(
                    id=f"P{number:03d}",
                    name=names[number - 1],
                    team=team.code,
                    position=position,
                    role=role,
                    kind=kind,
                    form_sd=float(form_sd),
                    zone_shares=_ZONE_SHARES[position],
                    attempts_mean=float(mean),
                    attempts_low=low,
                    attempts_high=high,
                    play_rate=play,
                    ft_logit=_logit(float(ft_rate)),
                    ft_form_sd=0.15,
                    foul_rate=float(foul_rate),
                    in_practice_study=False,
                    **params,
                )
            )
    return tuple(players)


def _build_schedule(seed: int, teams: tuple[Team, ...]) -> tuple[Game, ...]:
    """Every pair meets ``_MEETINGS`` times; each team plays once per game day."""
    n = len(teams)
    rounds = []  # circle method: n - 1 rounds of n / 2 pairs
    ring = list(range(1, n))
    for r in range(n - 1):
        order = [0] + ring[r:] + ring[:r]
        rounds.append([(order[i], order[n - 1 - i]) for i in range(n // 2)])
    games = []
    for s, season in enumerate(SEASONS):
        rng = stream(seed, _STREAM_SCHEDULE, s)
        days = []
        for meeting in range(_MEETINGS):
            for r, pairs in enumerate(rounds):
                # alternate home and away between meetings and rounds
                flip = (meeting + r) % 2 == 1
                days.append([(b, a) if flip else (a, b) for a, b in pairs])
        days = [days[i] for i in rng.permutation(len(days))]
        start = _SEASON_STARTS[s]
        order = 0
        for d, pairs in enumerate(days):
            date = start + dt.timedelta(days=int(d * 2.3))
            for home, away in sorted(pairs):
                order += 1
                games.append(
                    Game(
                        id=f"G{season[2:4]}-{order:04d}",
                        season=season,
                        order=order,
                        date=date,
                        home=teams[home].code,
                        away=teams[away].code,
                    )
                )
    return tuple(games)


def _build_practice(seed: int, players: tuple[Player, ...]) -> PracticeStudy:
    rng = stream(seed, _STREAM_PRACTICE)
    chosen = [p.id for p in players if p.kind in ("streaky", "shot_selection", "cold_spells")]
    small = [p.id for p in players if p.kind == "small_effect"]
    steady = [p.id for p in players if p.kind == "steady" and p.rotation]
    chosen += [small[i] for i in sorted(rng.choice(len(small), size=3, replace=False))]
    chosen += [steady[i] for i in sorted(rng.choice(len(steady), size=24 - len(chosen), replace=False))]
    start = dt.date(2032, 6, 7)
    dates = tuple(start + dt.timedelta(days=int(d)) for d in (0, 2, 4, 7, 9, 11, 14, 16))
    return PracticeStudy(
        name="off-season shooting study",
        season="2032-practice",
        dates=dates,
        spots=(("low block", 6.0), ("free-throw line", 15.0), ("baseline", 18.0), ("wing", 24.0), ("top of the arc", 25.0)),
        rounds_per_spot=2,
        attempts_per_round=20,
        practice_offset=0.35,
        day_form_sd=0.15,
        players=tuple(sorted(chosen)),
    )
