"""Play the demo league's games: every attempt, and (for an event log) every other event.

This module composes the simulators of :mod:`streakwise.analysis.simulate` and
:mod:`streakwise.analysis.difficulty_sim` with the scenario's truth; it draws
nothing of its own beyond the game flow (when things happen, who rebounds).
The loops run over players (one vectorised draw of a player's whole season)
and over attempt positions, never over single attempts.

A game has 4 periods of 12 minutes. A player's field-goal attempts get times
spread over the game (sorted, so their order is the order they were drawn in);
free throws come in trips after fouls: 2 (or 3 after a foul on a
three-point try) for a shooting foul, 2 in the bonus, 1 after a make that was
fouled. The score margin before every event follows from the makes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import special

from streakwise.analysis.difficulty_sim import sample_shot_covariates, simulate_outcome_dependent
from streakwise.analysis.simulate import simulate_bernoulli, simulate_hidden_state, simulate_session_lengths

from .scenario import Player, Scenario, stream

__all__ = ["SeasonPlay", "play_practice", "play_season"]

_STREAM_SEASON = 10  # + season index
_STREAM_FLOW = 20  # + season index
_STREAM_PRACTICE_ROUNDS = 30

_AND_ONE = {2: 0.06, 3: 0.01}  # chance a make was fouled, by points
_THREE_SHOT_TRIP = 0.06  # share of shooting-foul trips that are three free throws
_BONUS_TRIPS = 1.5  # two-shot bonus trips per team and game
_OFFENSIVE_REBOUND = 0.27
_BLOCKED = 0.08  # share of missed two-point tries that were blocked
_ASSISTED = 0.58
_OTHER_FOULS = 7.0  # per team and game, no free throws
_GIVEAWAYS = 13.0  # per team and game
_PICKOFF = 0.5  # share of giveaways that were a steal
_SWAPS = 9.0  # substitutions per team and game
_PAUSES = 4.0  # time-outs per team and game

# Who does what (by position): weights for choosing a player on the floor.
_POSITION_WEIGHTS = {
    "rebound": {"guard": 1.0, "wing": 1.5, "big": 3.0},
    "block": {"guard": 0.4, "wing": 1.0, "big": 3.0},
    "feed": {"guard": 3.0, "wing": 1.5, "big": 0.7},
    "foul": {"guard": 1.0, "wing": 1.2, "big": 1.6},
    "giveaway": {"guard": 2.0, "wing": 1.3, "big": 1.0},
    "any": {"guard": 1.0, "wing": 1.0, "big": 1.0},
}


@dataclass(frozen=True)
class SeasonPlay:
    """One season as played.

    Attributes
    ----------
    season : str
    attempts : DataFrame
        One row per attempt (field goals and free throws), in game order:
        ``game``, ``game_order``, ``date``, ``team``, ``opponent``, ``home``,
        ``player``, ``attempt_type``, ``points``, ``made``, ``distance``,
        ``defender_distance``, ``period``, ``clock_s``, ``score_margin``,
        ``time`` (seconds since the tip), ``step`` (order among events at the
        same time), ``hot`` (the hidden state, NA without one),
        ``after_make`` and ``probability`` (the truth each was drawn with).
    events : DataFrame or None
        Every event of every game (attempts included) in game order, for the
        event log: ``game``, ``time``, ``step``, ``period``, ``clock_s``,
        ``kind``, ``team``, ``home``, ``player``, ``made``, ``points``,
        ``distance``, ``defender_distance``, ``score_margin``, ``date``.
    """

    season: str
    attempts: pd.DataFrame
    events: pd.DataFrame | None


# ---------------------------------------------------------------------------
# Field goals: one vectorised draw per player and season
# ---------------------------------------------------------------------------


def _field_goals(scenario: Scenario, player: Player, home: np.ndarray, lengths: np.ndarray, rng) -> dict:
    """Every field-goal attempt of one player's season (games with >= 1 attempt).

    ``home`` and ``lengths`` have one entry per game played; returns flat
    arrays in (game, seq) order plus ``game_position`` (index into the games).
    """
    n_games = len(lengths)
    width = int(lengths.max()) if n_games else 0
    shape = (n_games, width)
    difficulty = scenario.difficulty

    def offset(shots):
        # Period, game clock and margin have coefficient 0: their reference values stand in.
        return difficulty.linear_predictor(
            {
                "distance": shots.distance,
                "defender_distance": shots.defender_distance,
                "home": home[:, None].astype(float),
                "period": difficulty.reference["period"],
                "clock_s": difficulty.reference["clock_s"],
                "score_margin": difficulty.reference["score_margin"],
            }
        )

    shots = sample_shot_covariates(shape, player.zone_shares, three_point_distance=scenario.three_point_distance, rng=rng)
    form = rng.normal(0.0, player.form_sd, size=(n_games, 1))
    usual = offset(shots) + form
    hot = np.zeros(shape, dtype=bool)
    after_make = np.zeros(shape, dtype=bool)
    distance, points, defender = shots.distance, shots.points, shots.defender_distance

    if player.kind == "shot_selection":
        harder = sample_shot_covariates(
            shape,
            player.zone_shares,
            distance_shift=player.distance_shift,
            defender_shift=player.defender_shift,
            three_point_distance=scenario.three_point_distance,
            rng=rng,
        )
        after = offset(harder) + form
        if player.dependence == "hidden_state":
            # the state path alone: with rates 1 and 0 the draw's `hot` is the chain
            hot = simulate_hidden_state(
                width, hot_rate=1.0, cold_rate=0.0, stay_hot=player.stay_hot, stay_cold=player.stay_cold,
                n_sequences=n_games, rng=rng,
            ).hot
            term = np.where(hot, special.logit(player.hot_rate), special.logit(player.cold_rate))
        else:
            term = player.skill
        draw = simulate_outcome_dependent(term + usual, term + after, rng=rng)
        made, probability, after_make = draw.made, draw.probability, draw.after_make
        distance = np.where(after_make, harder.distance, shots.distance)
        points = np.where(after_make, harder.points, shots.points)
        defender = np.where(after_make, harder.defender_distance, shots.defender_distance)
    elif player.dependence == "hidden_state":
        draw = simulate_hidden_state(
            width, hot_rate=player.hot_rate, cold_rate=player.cold_rate, stay_hot=player.stay_hot,
            stay_cold=player.stay_cold, n_sequences=n_games, rng=rng, logit_offset=usual,
        )
        made, probability, hot = draw.made, draw.probability, draw.hot
    elif player.dependence == "previous_outcome":
        draw = simulate_outcome_dependent(player.skill + usual, player.skill + player.after_make_shift + usual, rng=rng)
        made, probability, after_make = draw.made, draw.probability, draw.after_make
    else:
        probability = special.expit(player.skill + usual)
        made = simulate_bernoulli(probability, rng=rng)

    keep = np.arange(width)[None, :] < lengths[:, None]
    has_state = player.dependence == "hidden_state"
    return {
        "game_position": np.broadcast_to(np.arange(n_games)[:, None], shape)[keep],
        "made": made[keep],
        "points": points[keep],
        "distance": distance[keep],
        "defender_distance": defender[keep],
        "probability": probability[keep],
        "after_make": after_make[keep],
        "hot": hot[keep] if has_state else np.zeros(int(keep.sum()), dtype=bool),
        "has_state": np.full(int(keep.sum()), has_state),
    }


# ---------------------------------------------------------------------------
# Helpers for the game flow
# ---------------------------------------------------------------------------


def _choose(weights: np.ndarray, rng, exclude: np.ndarray | None = None) -> np.ndarray:
    """One column per row of ``weights`` (rows need a positive weight), vectorised."""
    weights = weights.astype(float, copy=True)
    if exclude is not None:
        weights[np.arange(len(weights)), exclude] = 0.0
    cumulative = np.cumsum(weights, axis=1)
    u = rng.random(len(weights)) * cumulative[:, -1]
    return np.minimum((cumulative <= u[:, None]).sum(axis=1), weights.shape[1] - 1)


def _running_margin(game: np.ndarray, home: np.ndarray, scored: np.ndarray, has_team: np.ndarray) -> np.ndarray:
    """Score margin before each row (rows in game order), from the acting team's side."""
    home_points = np.where(home & has_team, scored, 0)
    away_points = np.where(~home & has_team, scored, 0)
    frame = pd.DataFrame({"game": game, "home": home_points, "away": away_points})
    before_home = frame.groupby("game", sort=False)["home"].cumsum().to_numpy() - home_points
    before_away = frame.groupby("game", sort=False)["away"].cumsum().to_numpy() - away_points
    margin = np.where(home, before_home - before_away, before_away - before_home).astype(float)
    return np.where(has_team, margin, np.nan)


def _free_throw_trips(scenario, fg, fg_time, played, fga, tg_team, per_team, game_length, rng) -> dict:
    """Free-throw trips: shooting fouls (2 or 3), bonus pairs, and fouled makes (1).

    Shooting fouls on misses are not field-goal attempts, so their trips come
    at their own times; a fouled make's single free throw shares its time.
    Players are numbered team by team in roster order (``team * per_team + slot``).
    """
    players = scenario.players
    foul_rate = np.array([p.foul_rate for p in players])
    pg_tg, pg_slot = np.nonzero(played)
    pg_player = tg_team[pg_tg] * per_team + pg_slot
    shooting = rng.poisson(foul_rate[pg_player] * fga[pg_tg, pg_slot])
    n_shooting = int(shooting.sum())
    n_tg = len(tg_team)
    bonus = rng.poisson(_BONUS_TRIPS, n_tg)
    bonus_tg = np.repeat(np.arange(n_tg), bonus)
    bonus_slot = _choose(fga[bonus_tg] + played[bonus_tg], rng)
    and_one_chance = np.where(fg["points"] == 3, _AND_ONE[3], _AND_ONE[2])
    and_one = fg["made"] & (rng.random(len(fg["made"])) < and_one_chance)
    n_and_one = int(and_one.sum())
    shooting_size = np.where(rng.random(n_shooting) < _THREE_SHOT_TRIP, 3, 2)
    shooting_time = rng.uniform(0.0, game_length, n_shooting)
    bonus_time = rng.uniform(0.0, game_length, len(bonus_tg))
    return {
        "tg": np.r_[np.repeat(pg_tg, shooting), bonus_tg, fg["tg"][and_one]],
        "player": np.r_[np.repeat(pg_player, shooting), tg_team[bonus_tg] * per_team + bonus_slot, fg["player"][and_one]],
        "size": np.r_[shooting_size, np.full(len(bonus_tg), 2), np.ones(n_and_one, dtype=np.int64)],
        "time": np.r_[shooting_time, bonus_time, fg_time[and_one]],
        "after_make": np.r_[np.zeros(n_shooting + len(bonus_tg), dtype=bool), np.ones(n_and_one, dtype=bool)],
    }


# ---------------------------------------------------------------------------
# A season
# ---------------------------------------------------------------------------


def play_season(scenario: Scenario, season_index: int, *, with_events: bool) -> SeasonPlay:
    """Draw one season: all attempts, and the other events when ``with_events``."""
    season = scenario.seasons[season_index]
    games = scenario.season_games(season)
    game_length = scenario.periods * scenario.period_seconds
    team_index = {team.code: t for t, team in enumerate(scenario.teams)}
    players = scenario.players
    per_team = len(players) // len(scenario.teams)
    player_team = np.array([team_index[p.team] for p in players])
    positions = np.array([p.position for p in players])

    # Team-games: 2 per game, home first.
    n_games = len(games)
    tg_home = np.tile(np.array([True, False]), n_games)
    tg_team = np.array([team_index[code] for g in games for code in (g.home, g.away)])
    tg_opponent_tg = np.arange(2 * n_games) ^ 1  # the other row of the same game
    team_tgs = [np.flatnonzero(tg_team == t) for t in range(len(scenario.teams))]

    # Field goals, player by player.
    fga = np.zeros((2 * n_games, per_team), dtype=np.int64)  # attempts per team-game and roster slot
    played = np.zeros((2 * n_games, per_team), dtype=bool)
    pieces = []
    for index, player in enumerate(players):
        rng = stream(scenario.seed, _STREAM_SEASON + season_index, index)
        tgs = team_tgs[player_team[index]]
        slot = index % per_team
        plays = rng.random(len(tgs)) < player.play_rate
        lengths = simulate_session_lengths(
            int(plays.sum()), mean=player.attempts_mean, low=player.attempts_low, high=player.attempts_high, rng=rng
        )
        tgs = tgs[plays]
        played[tgs, slot] = True
        fga[tgs, slot] = lengths
        drawn = _field_goals(scenario, player, tg_home[tgs], lengths, rng)
        drawn["tg"] = tgs[drawn.pop("game_position")]
        drawn["player"] = np.full(len(drawn["tg"]), index)
        pieces.append(drawn)
    fg = {key: np.concatenate([p[key] for p in pieces]) for key in pieces[0]}
    n_fg = len(fg["made"])

    flow = stream(scenario.seed, _STREAM_FLOW + season_index)
    # Times: sorted within each player's game, so the drawn order is the game order.
    group = np.concatenate([[0], np.cumsum((np.diff(fg["tg"]) != 0) | (np.diff(fg["player"]) != 0))])
    raw_time = flow.uniform(0.0, game_length, n_fg)
    fg_time = raw_time[np.lexsort((raw_time, group))]

    trips = _free_throw_trips(scenario, fg, fg_time, played, fga, tg_team, per_team, game_length, flow)
    trip_tg, trip_player, trip_size, trip_time, trip_after_make = (
        trips[k] for k in ("tg", "player", "size", "time", "after_make")
    )
    n_trips = len(trip_tg)

    # Free throws: independent, with game form per player and game.
    ft_form = flow.standard_normal((2 * n_games, per_team))
    ft_trip = np.repeat(np.arange(n_trips), trip_size)
    ft_step = np.concatenate([np.arange(1, s + 1) for s in trip_size]) if n_trips else np.zeros(0, dtype=np.int64)
    ft_player = trip_player[ft_trip]
    ft_tg = trip_tg[ft_trip]
    ft_logit = np.array([p.ft_logit for p in players])[ft_player]
    ft_sd = np.array([p.ft_form_sd for p in players])[ft_player]
    ft_probability = special.expit(ft_logit + ft_sd * ft_form[ft_tg, ft_player % per_team])
    ft_made = simulate_bernoulli(ft_probability, rng=flow)
    ft_time = trip_time[ft_trip]
    # a fouled make: the shot (step 0), the feed (1), the whistle (2), the free throw (3)
    ft_step = ft_step + np.where(trip_after_make[ft_trip], 2, 0)

    # One table of attempts.
    attempt_type = np.r_[np.full(n_fg, "field_goal"), np.full(len(ft_trip), "free_throw")]
    attempts = pd.DataFrame(
        {
            "tg": np.r_[fg["tg"], ft_tg],
            "player_index": np.r_[fg["player"], ft_player],
            "attempt_type": attempt_type,
            "points": np.r_[fg["points"], np.ones(len(ft_trip), dtype=np.int64)],
            "made": np.r_[fg["made"], ft_made],
            "distance": np.r_[fg["distance"], np.full(len(ft_trip), scenario.free_throw_distance)],
            "defender_distance": np.r_[fg["defender_distance"], np.full(len(ft_trip), np.nan)],
            "time": np.r_[fg_time, ft_time],
            "step": np.r_[np.zeros(n_fg, dtype=np.int64), ft_step],
            "hot": pd.array(np.r_[fg["hot"], np.zeros(len(ft_trip), dtype=bool)], dtype="boolean"),
            "after_make": np.r_[fg["after_make"], np.zeros(len(ft_trip), dtype=bool)],
            "probability": np.r_[fg["probability"], ft_probability],
            "trip": np.r_[np.full(n_fg, -1), ft_trip],
        }
    )
    attempts["game_index"] = attempts["tg"].to_numpy() // 2
    attempts.loc[~np.r_[fg["has_state"], np.zeros(len(ft_trip), dtype=bool)], "hot"] = pd.NA

    events = None
    if with_events:
        events = _other_events(
            scenario, attempts, trip_tg, trip_player, trip_time, trip_size, trip_after_make,
            tg_team, tg_opponent_tg, played, fga, positions, per_team, game_length, flow,
        )
        frame = pd.concat([attempts.assign(kind=""), events], ignore_index=True)
    else:
        frame = attempts.assign(kind="")
    frame = frame.sort_values(["game_index", "time", "step"], kind="stable").reset_index(drop=True)

    has_team = frame["tg"].to_numpy() >= 0
    tg = np.where(has_team, frame["tg"].to_numpy(), 0)
    home = tg_home[tg] & has_team
    scored = np.where((frame["kind"] == "").to_numpy() & frame["made"].fillna(False).to_numpy(dtype=bool),
                      frame["points"].fillna(0).to_numpy(dtype=np.int64), 0)
    frame["score_margin"] = _running_margin(frame["game_index"].to_numpy(), home, scored, has_team)
    time = frame["time"].to_numpy()
    frame["period"] = np.minimum(time // scenario.period_seconds, scenario.periods - 1).astype(np.int64) + 1
    frame["clock_s"] = (scenario.period_seconds - np.floor(time - (frame["period"] - 1) * scenario.period_seconds)).astype(float)
    closing = (frame["kind"] == "period-close").to_numpy()
    frame.loc[closing, "clock_s"] = 0.0

    game_ids = np.array([g.id for g in games])
    game_orders = np.array([g.order for g in games])
    dates = np.array([np.datetime64(g.date.isoformat()) for g in games])
    team_codes = np.array([t.code for t in scenario.teams] + [""])
    player_ids = np.array([p.id for p in players] + [""])
    gi = frame["game_index"].to_numpy()
    frame["game"] = game_ids[gi]
    frame["game_order"] = game_orders[gi]
    frame["date"] = dates[gi]
    frame["team"] = team_codes[np.where(has_team, tg_team[tg], -1)]
    frame["opponent"] = team_codes[np.where(has_team, tg_team[tg_opponent_tg[tg]], -1)]
    frame["home"] = pd.array(np.where(has_team, tg_home[tg], False), dtype="boolean")
    frame.loc[~has_team, "home"] = pd.NA
    pi = frame["player_index"].to_numpy()
    frame["player"] = player_ids[np.where(pi >= 0, pi, -1)]

    is_attempt = (frame["kind"] == "").to_numpy()
    attempt_columns = [
        "game", "game_order", "date", "team", "opponent", "home", "player", "attempt_type", "points", "made",
        "distance", "defender_distance", "period", "clock_s", "score_margin", "time", "step", "hot",
        "after_make", "probability",
    ]
    attempts_out = frame.loc[is_attempt, attempt_columns].reset_index(drop=True)
    attempts_out["points"] = attempts_out["points"].astype(np.int64)
    attempts_out["made"] = attempts_out["made"].astype(bool)
    attempts_out["after_make"] = attempts_out["after_make"].astype(bool)
    events_out = None
    if with_events:
        kinds = frame["kind"].to_numpy(dtype=object).copy()
        kinds[is_attempt] = np.where(
            frame.loc[is_attempt, "attempt_type"].to_numpy() == "free_throw",
            "line-try",
            np.where(frame.loc[is_attempt, "points"].to_numpy() == 3, "try-3", "try-2"),
        )
        frame["kind"] = kinds
        events_out = frame[
            ["game", "time", "step", "period", "clock_s", "kind", "team", "home", "player", "made", "points",
             "distance", "defender_distance", "score_margin", "date"]
        ].copy()
        events_out.loc[~is_attempt, ["made", "points", "distance", "defender_distance"]] = pd.NA
    return SeasonPlay(season=season, attempts=attempts_out, events=events_out)


def _other_events(
    scenario, attempts, trip_tg, trip_player, trip_time, trip_size, trip_after_make,
    tg_team, tg_opponent_tg, played, fga, positions, per_team, game_length, rng,
) -> pd.DataFrame:
    """Rebounds, blocks, feeds, fouls, giveaways, steals, substitutions, time-outs, periods."""
    slot_position = positions[:per_team]
    weights = {name: np.array([w[p] for p in slot_position]) for name, w in _POSITION_WEIGHTS.items()}
    on_floor = played.astype(float)
    parts = []

    def add(kind, tg, slot, time, step):
        tg = np.asarray(tg, dtype=np.int64)
        player = np.where(np.asarray(slot) >= 0, tg_team[tg] * per_team + slot, -1)
        parts.append(
            pd.DataFrame({"kind": kind, "tg": tg, "game_index": tg // 2, "player_index": player, "time": time, "step": step})
        )

    def pick(tg, role, exclude=None):
        return _choose(on_floor[tg] * weights[role][None, :], rng, exclude)

    fg = attempts[attempts["attempt_type"] == "field_goal"]
    fg_tg = fg["tg"].to_numpy()
    fg_time = fg["time"].to_numpy()
    fg_made = fg["made"].to_numpy(dtype=bool)
    fg_slot = fg["player_index"].to_numpy() % per_team
    missed = ~fg_made
    # a made try: feed (step 1); a missed one: block (1), rebound (2)
    assisted = fg_made & (rng.random(len(fg)) < _ASSISTED)
    add("feed", fg_tg[assisted], pick(fg_tg[assisted], "feed", fg_slot[assisted]), fg_time[assisted], 1)
    blocked = missed & (fg["points"].to_numpy() == 2) & (rng.random(len(fg)) < _BLOCKED)
    opp = tg_opponent_tg[fg_tg[blocked]]
    add("stuff", opp, pick(opp, "block"), fg_time[blocked], 1)
    offensive = rng.random(len(fg)) < _OFFENSIVE_REBOUND
    board_tg = np.where(offensive, fg_tg, tg_opponent_tg[fg_tg])[missed]
    add("board", board_tg, pick(board_tg, "rebound"), fg_time[missed], 2)

    # Free-throw trips: the whistle before them (step 0; 2 after a fouled make),
    # and a rebound after a missed last free throw.
    foul_tg = tg_opponent_tg[trip_tg]
    add("whistle", foul_tg, pick(foul_tg, "foul"), trip_time, np.where(trip_after_make, 2, 0))
    ft = attempts[attempts["attempt_type"] == "free_throw"]
    trip_last_step = np.where(trip_after_make, 3, trip_size)
    last = ft["step"].to_numpy() == trip_last_step[ft["trip"].to_numpy()]
    missed_last = last & ~ft["made"].to_numpy(dtype=bool)
    shooter_tg = ft["tg"].to_numpy()[missed_last]
    offensive = rng.random(int(missed_last.sum())) < 0.15
    board_tg = np.where(offensive, shooter_tg, tg_opponent_tg[shooter_tg])
    add("board", board_tg, pick(board_tg, "rebound"), ft["time"].to_numpy()[missed_last], ft["step"].to_numpy()[missed_last] + 1)

    n_tg = len(tg_team)
    for kind, rate, role in (("whistle", _OTHER_FOULS, "foul"), ("giveaway", _GIVEAWAYS, "giveaway")):
        count = rng.poisson(rate, n_tg)
        tg = np.repeat(np.arange(n_tg), count)
        time = rng.uniform(0.0, game_length, len(tg))
        add(kind, tg, pick(tg, role), time, 0)
        if kind == "giveaway":
            stolen = rng.random(len(tg)) < _PICKOFF
            opp = tg_opponent_tg[tg[stolen]]
            add("pickoff", opp, pick(opp, "any"), time[stolen], 1)
    count = rng.poisson(_SWAPS, n_tg)
    tg = np.repeat(np.arange(n_tg), count)
    time = rng.uniform(0.0, game_length, len(tg))
    leaving = pick(tg, "any")
    add("swap-out", tg, leaving, time, 0)
    add("swap-in", tg, pick(tg, "any", leaving), time, 1)
    count = rng.poisson(_PAUSES, n_tg)
    tg = np.repeat(np.arange(n_tg), count)
    add("pause", tg, np.full(len(tg), -1), rng.uniform(0.0, game_length, len(tg)), 0)

    events = pd.concat(parts, ignore_index=True)
    # Period openings and closings belong to no team (tg -1).
    n_games = n_tg // 2
    period = np.tile(np.arange(scenario.periods), n_games)
    game = np.repeat(np.arange(n_games), scenario.periods)
    opening = pd.DataFrame(
        {"kind": "period-open", "tg": -1, "game_index": game, "player_index": -1,
         "time": period * float(scenario.period_seconds), "step": -1}
    )
    closing = pd.DataFrame(
        {"kind": "period-close", "tg": -1, "game_index": game, "player_index": -1,
         "time": (period + 1) * float(scenario.period_seconds) - 1e-6, "step": 99}
    )
    return pd.concat([events, opening, closing], ignore_index=True)


# ---------------------------------------------------------------------------
# The practice shooting study
# ---------------------------------------------------------------------------


def play_practice(scenario: Scenario) -> pd.DataFrame:
    """Every round of the practice study, one row per round.

    Returns
    -------
    DataFrame
        ``date``, ``player``, ``spot``, ``distance``, ``round`` (1-based per
        player, day and spot) and ``made`` (a bool array per round), sorted by
        date, player, spot and round.
    """
    study = scenario.practice
    by_id = {p.id: (i, p) for i, p in enumerate(scenario.players)}
    n_days, n_spots = len(study.dates), len(study.spots)
    n_rounds = n_days * n_spots * study.rounds_per_spot
    width = study.attempts_per_round
    day = np.repeat(np.arange(n_days), n_spots * study.rounds_per_spot)
    spot = np.tile(np.repeat(np.arange(n_spots), study.rounds_per_spot), n_days)
    round_number = np.tile(np.arange(1, study.rounds_per_spot + 1), n_days * n_spots)
    spot_distance = np.array([d for _, d in study.spots])[spot]
    beta = scenario.difficulty.coefficients["distance"]
    reference = scenario.difficulty.reference["distance"]
    frames = []
    for player_id in study.players:
        index, player = by_id[player_id]
        rng = stream(scenario.seed, _STREAM_PRACTICE_ROUNDS, index)
        day_form = rng.normal(0.0, study.day_form_sd, n_days)
        offset = (study.practice_offset + beta * (spot_distance - reference) + day_form[day])[:, None]
        offset = np.broadcast_to(offset, (n_rounds, width))
        if player.dependence == "hidden_state":
            made = simulate_hidden_state(
                width, hot_rate=player.hot_rate, cold_rate=player.cold_rate, stay_hot=player.stay_hot,
                stay_cold=player.stay_cold, n_sequences=n_rounds, rng=rng, logit_offset=offset,
            ).made
        elif player.dependence == "previous_outcome":
            made = simulate_outcome_dependent(
                player.skill + offset, player.skill + player.after_make_shift + offset, rng=rng
            ).made
        else:
            made = simulate_bernoulli(special.expit(player.skill + offset), rng=rng)
        frames.append(
            pd.DataFrame(
                {
                    "day": day,
                    "date": np.array([d.isoformat() for d in study.dates])[day],
                    "player": player_id,
                    "spot_index": spot,
                    "spot": np.array([s for s, _ in study.spots])[spot],
                    "distance": spot_distance,
                    "round": round_number,
                    "made": list(made),
                }
            )
        )
    rounds = pd.concat(frames, ignore_index=True)
    rounds = rounds.sort_values(["day", "player", "spot_index", "round"], kind="stable").reset_index(drop=True)
    return rounds.drop(columns=["day", "spot_index"])
