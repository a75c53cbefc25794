"""Check a streak claim against chance: odds for one player, for a league, in plain words.

Three kinds of claim, each for a steady shooter of a given make rate and the
player's per-game attempt counts:

- :func:`check_run_claim`: a run of R makes (or misses) in a row;
- :func:`check_window_claim`: at least X makes in some Y consecutive attempts;
- :func:`check_game_streak_claim`: at least X makes in each of G consecutive
  games.

Each returns a :class:`ClaimResult`: the chance for this player in a season
like this one, the chance that anyone in a league of such players does it,
the expected number of occurrences, a sentence a broadcaster could read on
air, and the caution that chance explains many streaks.

By default runs and windows stay inside games (every game is a fresh start,
and games are independent); ``across_games=True`` lets them continue from one
game to the next (the season is one sequence of all its attempts).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import pandas as pd
from scipy import stats

from .odds import (
    OpportunityResult,
    _check_integer,
    _check_rate,
    _show,
    combine_sessions,
    expected_run_count,
    expected_window_count,
    run_probability,
    run_probability_per_attempt,
    window_probability,
)

__all__ = [
    "CAUTION",
    "CLAIM_KINDS",
    "ClaimResult",
    "check_game_streak_claim",
    "check_run_claim",
    "check_window_claim",
]

#: The kinds of claim.
CLAIM_KINDS = ("run", "window", "each_game")

#: Said with every answer.
CAUTION = (
    "Chance alone produces streaks like this far more often than intuition suggests, so a "
    "streak by itself is no proof of a hot hand. These odds are for a steady shooter whose "
    "attempts are independent; they are not betting advice."
)


@dataclass(frozen=True)
class ClaimResult:
    """The odds of a streak claim under chance alone.

    Attributes
    ----------
    claim_kind : str
        ``"run"``, ``"window"`` or ``"each_game"``.
    claim : str
        The claim in words, e.g. ``"9 or more makes in a row"``.
    rate : float
        The make rate assumed.
    game_attempts : tuple of int
        Attempts in each game of one season.
    across_games : bool
    players, seasons : int
        League size (players alike) and seasons considered.
    probability_player : float
        Chance that this player does it at least once in one season like this.
    probability_player_span : float
        The same over ``seasons`` seasons.
    probability_league : float
        Chance that anyone in the league does it in one season.
    probability_league_span : float
        The same over ``seasons`` seasons.
    expected_player : float
        Expected occurrences for this player in one season; an occurrence is a
        game with the streak (a season with it when the streak spans games).
    expected_league : float
        Expected occurrences in the league in one season.
    expected_league_span : float
    expected_streaks_player : float
        Expected number of separate streaks in one season (several can fall
        in one game).
    seasons_per_occurrence, league_seasons_per_occurrence : float
        "About once every N seasons": 1 / expected occurrences per season.
    occurrence : str
        What an occurrence is (``"game"`` or ``"season"``).
    method : str
        How the per-session chances were computed.
    exact : bool
        True when every chance was computed exactly (rational rate).
    sentence : str
        A plain sentence for broadcast.
    caution : str
    notes : tuple of str
    opportunity : OpportunityResult
    """

    claim_kind: str
    claim: str
    rate: float
    game_attempts: tuple
    across_games: bool
    players: int
    seasons: int
    probability_player: float
    probability_player_span: float
    probability_league: float
    probability_league_span: float
    expected_player: float
    expected_league: float
    expected_league_span: float
    expected_streaks_player: float
    seasons_per_occurrence: float
    league_seasons_per_occurrence: float
    occurrence: str
    method: str
    exact: bool
    sentence: str
    caution: str = CAUTION
    notes: tuple = ()
    opportunity: OpportunityResult | None = field(default=None, repr=False)

    def to_dict(self):
        """Stable JSON-ready keys."""
        games = self.game_attempts
        return {
            "claim": self.claim,
            "claim_kind": self.claim_kind,
            "rate": self.rate,
            "games": len(games),
            "attempts": int(sum(games)),
            "across_games": self.across_games,
            "players": self.players,
            "seasons": self.seasons,
            "probability": self.probability_player,
            "probability_player": self.probability_player,
            "probability_player_span": self.probability_player_span,
            "probability_league": self.probability_league,
            "probability_league_span": self.probability_league_span,
            "expected_player": self.expected_player,
            "expected_league": self.expected_league,
            "expected_league_span": self.expected_league_span,
            "expected_streaks_player": self.expected_streaks_player,
            "seasons_per_occurrence": _finite(self.seasons_per_occurrence),
            "league_seasons_per_occurrence": _finite(self.league_seasons_per_occurrence),
            "occurrence": self.occurrence,
            "method": self.method,
            "exact": self.exact,
            "sentence": self.sentence,
            "caution": self.caution,
            "notes": list(self.notes),
        }

    def to_frame(self):
        """One row with the scalar columns of :meth:`to_dict`."""
        row = {k: v for k, v in self.to_dict().items() if not isinstance(v, list)}
        return pd.DataFrame([row])

    def summary(self):
        """Text with numbered caveats."""
        games = self.game_attempts
        span = f"{self.seasons} seasons" if self.seasons != 1 else "one season"
        lines = [
            f"Claim: {self.claim}",
            f"Shooter: {_rate_text(self.rate)} make rate, {len(games)} games, {int(sum(games))} attempts a season"
            + (" (streaks may continue across games)" if self.across_games else " (streaks stay inside games)"),
            f"  this player, one season:        {_percent_text(self.probability_player)}"
            f"  (expected {self.occurrence}s with it: {_count_text(self.expected_player)})",
            f"  anyone of {self.players} players, one season: {_percent_text(self.probability_league)}"
            f"  (expected: {_count_text(self.expected_league)})",
        ]
        if self.seasons != 1:
            lines.append(
                f"  over {span}: this player {_percent_text(self.probability_player_span)}, "
                f"anyone {_percent_text(self.probability_league_span)}, expected {_count_text(self.expected_league_span)}"
            )
        lines += [f"  method: {self.method}", "", self.sentence, "", "Caveats:"]
        for i, text in enumerate((*self.notes, self.caution), start=1):
            lines.append(f"  {i}. {text}")
        return "\n".join(lines)


def _finite(value):
    return value if math.isfinite(value) else None


# ---------------------------------------------------------------------------
# Words
# ---------------------------------------------------------------------------


def _rate_text(rate):
    percent = 100 * float(rate)
    return f"{percent:.0f}%" if abs(percent - round(percent)) < 0.05 else f"{percent:.1f}%"


def _percent_text(probability):
    if probability <= 0:
        return "0%"
    if probability < 0.001:
        return "less than 0.1%"
    if probability >= 0.999:
        return "at least 99.9%"
    if probability < 0.01 or probability > 0.99:
        return f"{100 * probability:.1f}%"
    return f"{100 * probability:.0f}%"


def _count_text(value):
    if value == 0:
        return "0"
    if value >= 10:
        return f"{value:,.0f}"
    if value >= 1:
        return f"{value:.1f}"
    return f"{value:.2g}"


def _round_nicely(value):
    """2 significant figures, as a readable integer where large."""
    if value >= 100:
        digits = 10 ** (int(math.log10(value)) - 1)
        return f"{int(round(value / digits) * digits):,}"
    if value >= 10:
        return f"{value:.0f}"
    return f"{value:.2g}"


def _how_often(expected, occurrence, deed, deed_in_a_game):
    """The player's part: 'would, by chance alone, <deed> in about 3 games a season' and the like."""
    if occurrence == "game" and expected >= 1.5:
        return f"would, by chance alone, {deed} in about {_round_nicely(expected)} games a season"
    phrase = deed_in_a_game if occurrence == "game" else deed
    if occurrence == "game" and expected >= 0.9:
        return f"would, by chance alone, {phrase} about once a season"
    if occurrence == "season" and expected >= 0.75:
        return f"would, by chance alone, {phrase} in most seasons ({_percent_text(expected)} in any one season)"
    every = 1.0 / expected
    if every > 10_000:
        return f"would, by chance alone, {phrase} less than once in ten thousand seasons"
    return f"would, by chance alone, {phrase} about once every {_round_nicely(every)} seasons"


def _sentence(*, rate, game_attempts, deed, deed_in_a_game, occurrence, expected_player, players, expected_league, probability_league):
    games = len(game_attempts)
    average = sum(game_attempts) / games
    shots = f"{game_attempts[0]} shots a game" if len(set(game_attempts)) == 1 else f"about {average:.0f} shots a game"
    shooter = f"A {_rate_text(rate)} shooter taking {shots} over {games} game{'s' if games != 1 else ''}"
    if expected_player <= 0:
        return f"{shooter} could not {deed} at all: the games are too short for it."
    first = f"{shooter} {_how_often(expected_player, occurrence, deed, deed_in_a_game)}"
    if players <= 1:
        return first + "."
    league = f"across a league of {players:,} such players"
    if occurrence == "game" and expected_league >= 1.5:
        league += f", expect about {_round_nicely(expected_league)} such games every season"
    elif occurrence == "season" and expected_league >= 1.5:
        league += f", expect about {_round_nicely(expected_league)} of them to do it every season"
    elif expected_league >= 0.75:
        league += ", expect it about once a season"
    else:
        league += (
            f", someone would do it about once every {_round_nicely(1 / expected_league)} seasons "
            f"({_percent_text(probability_league)} in any one season)"
        )
    return f"{first}; {league}."


# ---------------------------------------------------------------------------
# Validation
# ---------------------------------------------------------------------------


def _check_games(game_attempts):
    if isinstance(game_attempts, (str, bytes)) or np.ndim(game_attempts) != 1:
        raise ValueError(f"`game_attempts` must be a sequence of attempts per game (got {_show(game_attempts)})")
    games = tuple(_check_integer("game_attempts", value, 0) for value in game_attempts)
    if not games:
        raise ValueError("`game_attempts` must list at least one game (got none)")
    return games


def _check_common(rate, game_attempts, league_players, seasons, across_games):
    rate, rational = _check_rate(rate)
    games = _check_games(game_attempts)
    league_players = _check_integer("league_players", league_players, 1)
    seasons = _check_integer("seasons", seasons, 1)
    if across_games not in (True, False):
        raise ValueError(f"`across_games` must be True or False (got {_show(across_games)})")
    return rate, rational, games, league_players, seasons, bool(across_games)


def _sessions(games, across_games):
    return (sum(games),) if across_games else games


def _per_session(sessions, compute):
    """Compute each distinct session length once; return per-session values and the set of methods."""
    cache = {}
    for length in sorted(set(sessions)):
        cache[length] = compute(length)
    return [cache[length] for length in sessions], cache


def _result(*, kind, claim, deed, deed_in_a_game=None, rate, games, across_games, players, seasons, session_values, methods, exact, occurrence, expected_streaks, notes=()):
    opportunity = combine_sessions(session_values, players=players, seasons=seasons)
    sentence = _sentence(
        rate=rate,
        game_attempts=games,
        deed=deed,
        deed_in_a_game=deed_in_a_game or deed,
        occurrence=occurrence,
        expected_player=opportunity.expected_season,
        players=players,
        expected_league=opportunity.expected_league_season,
        probability_league=opportunity.probability_league_season,
    )
    return ClaimResult(
        claim_kind=kind,
        claim=claim,
        rate=float(rate),
        game_attempts=games,
        across_games=across_games,
        players=players,
        seasons=seasons,
        probability_player=opportunity.probability_season,
        probability_player_span=opportunity.probability_player_span,
        probability_league=opportunity.probability_league_season,
        probability_league_span=opportunity.probability_league_span,
        expected_player=opportunity.expected_season,
        expected_league=opportunity.expected_league_season,
        expected_league_span=opportunity.expected_league_span,
        expected_streaks_player=float(expected_streaks),
        seasons_per_occurrence=opportunity.seasons_per_occurrence,
        league_seasons_per_occurrence=opportunity.league_seasons_per_occurrence,
        occurrence=occurrence,
        method=methods,
        exact=exact,
        sentence=sentence,
        notes=tuple(notes),
        opportunity=opportunity,
    )


def _method_text(methods, across_games, unit="game"):
    names = ", ".join(sorted(set(methods)))
    if across_games:
        return f"{names} over the season as one sequence"
    return f"{names} per {unit}; independent {unit}s combined exactly"


# ---------------------------------------------------------------------------
# Claims
# ---------------------------------------------------------------------------


def check_run_claim(run, rate, game_attempts, *, misses=False, league_players=1, seasons=1, across_games=False):
    """Odds of a run of ``run`` makes (or misses) in a row, for one player and a league.

    Parameters
    ----------
    run : int
        R >= 1: the claim is "R or more in a row".
    rate : float or fractions.Fraction
        The player's make rate (a Fraction gives exact per-game chances).
    game_attempts : sequence of int
        Attempts in each game of one season.
    misses : bool
        A run of misses instead of makes.
    league_players : int
        Players like this one in the league.
    seasons : int
        Seasons considered (for the chances "over the span").
    across_games : bool
        Let a run continue from one game into the next.

    Returns
    -------
    ClaimResult

    Notes
    -----
    Per game, :func:`~streakwise.analysis.odds.run_probability`; games
    combine by :func:`~streakwise.analysis.odds.combine_sessions`. The
    expected number of separate runs uses
    :func:`~streakwise.analysis.odds.expected_run_count`.

    Examples
    --------
    >>> from streakwise.analysis.claims import check_run_claim
    >>> result = check_run_claim(10, 0.47, [14] * 70, league_players=20)
    >>> round(result.probability_player, 3), round(result.probability_league, 3)
    (0.109, 0.9)
    """
    run = _check_integer("run", run, 1)
    if misses not in (True, False):
        raise ValueError(f"`misses` must be True or False (got {_show(misses)})")
    rate, rational, games, players, seasons, across_games = _check_common(rate, game_attempts, league_players, seasons, across_games)
    kind = "misses" if misses else "makes"
    sessions = _sessions(games, across_games)
    values, cache = _per_session(sessions, lambda n: run_probability(n, run, rate, kind=kind))
    exact = all(r.exact for r in cache.values())
    session_values = [r.fraction if r.exact else r.probability for r in values]
    streaks = sum(expected_run_count(n, run, rate, kind=kind) for n in sessions)
    noun = "misses" if misses else "makes"
    claim = f"{run} or more {noun} in a row" + (" (counting across games)" if across_games else "")
    streak = f"{run} or more makes in a row" if not misses else f"{run} or more misses in a row"
    if across_games:
        deed = f"string together {streak}, counting across games,"
        in_a_game = deed
    else:
        deed = f"have {streak}"
        in_a_game = f"have a game with {streak}"
    occurrence = "season" if across_games else "game"
    return _result(
        kind="run",
        claim=claim,
        deed=deed,
        deed_in_a_game=in_a_game,
        rate=rate,
        games=games,
        across_games=across_games,
        players=players,
        seasons=seasons,
        session_values=session_values,
        methods=_method_text([r.method for r in cache.values()], across_games),
        exact=exact,
        occurrence=occurrence,
        expected_streaks=streaks,
    )


def check_window_claim(window, at_least, rate, game_attempts, *, league_players=1, seasons=1, across_games=False, rng=None):
    """Odds of at least ``at_least`` makes in some ``window`` consecutive attempts.

    Parameters
    ----------
    window : int
        Y >= 1 consecutive attempts.
    at_least : int
        X, 1 <= X <= Y.
    rate, game_attempts, league_players, seasons, across_games
        As in :func:`check_run_claim`.
    rng : None, int or numpy.random.Generator
        Used only if a window is too long for the exact chain and too short
        for the Naus approximation (Monte Carlo).

    Returns
    -------
    ClaimResult

    Examples
    --------
    >>> from streakwise.analysis.claims import check_window_claim
    >>> result = check_window_claim(10, 8, 0.5, [16] * 60, league_players=100)
    >>> result.claim
    'at least 8 makes in some 10 consecutive attempts'
    """
    window = _check_integer("window", window, 1)
    at_least = _check_integer("at_least", at_least, 1)
    if at_least > window:
        raise ValueError(f"`at_least` must be at most `window` ({window}) (got {at_least})")
    rate, rational, games, players, seasons, across_games = _check_common(rate, game_attempts, league_players, seasons, across_games)
    sessions = _sessions(games, across_games)
    values, cache = _per_session(sessions, lambda n: window_probability(n, window, at_least, rate, rng=rng))
    exact = all(r.exact for r in cache.values())
    session_values = [r.fraction if r.exact else r.probability for r in values]
    streaks = sum(expected_window_count(n, window, at_least, rate) for n in sessions)
    notes = []
    approximate = sorted({r.method for r in cache.values() if r.method in ("naus_approximation", "monte_carlo")})
    if approximate:
        notes.append(f"Some chances are approximate ({', '.join(approximate)}); see the method.")
    claim = f"at least {at_least} makes in some {window} consecutive attempts" + (" (counting across games)" if across_games else "")
    streak = f"at least {at_least} makes in {window} straight attempts"
    if across_games:
        deed = f"make at least {at_least} of {window} straight attempts, counting across games,"
        in_a_game = deed
    else:
        deed = f"have {streak}"
        in_a_game = f"have a game with {streak}"
    return _result(
        kind="window",
        claim=claim,
        deed=deed,
        deed_in_a_game=in_a_game,
        rate=rate,
        games=games,
        across_games=across_games,
        players=players,
        seasons=seasons,
        session_values=session_values,
        methods=_method_text([r.method for r in cache.values()], across_games),
        exact=exact,
        occurrence="season" if across_games else "game",
        expected_streaks=streaks,
        notes=notes,
    )


def _game_success(attempts, makes, rate, rational):
    """P(at least ``makes`` makes in a game of ``attempts``)."""
    if makes > attempts:
        return Fraction(0) if rational else 0.0
    if rational:
        q = 1 - rate
        return sum((math.comb(attempts, k) * rate**k * q ** (attempts - k) for k in range(makes, attempts + 1)), Fraction(0))
    return float(stats.binom.sf(makes - 1, attempts, rate))


def check_game_streak_claim(makes_per_game, games_in_a_row, rate, game_attempts, *, league_players=1, seasons=1):
    """Odds of at least ``makes_per_game`` makes in each of ``games_in_a_row`` consecutive games.

    Parameters
    ----------
    makes_per_game : int
        X >= 1 makes needed in every game of the streak.
    games_in_a_row : int
        G >= 1 consecutive games.
    rate, game_attempts, league_players, seasons
        As in :func:`check_run_claim`; the games are taken in order.

    Returns
    -------
    ClaimResult
        An occurrence is a season with such a streak.

    Notes
    -----
    Game g qualifies with probability :math:`s_g = P(\\mathrm{Bin}(n_g, p) \\ge X)`,
    independently; the season has G qualifying games in a row with the
    probability of a run of G among per-game chances :math:`s_g`
    (:func:`~streakwise.analysis.odds.run_probability_per_attempt`).

    Examples
    --------
    >>> from streakwise.analysis.claims import check_game_streak_claim
    >>> result = check_game_streak_claim(10, 5, 0.48, [18] * 82, league_players=60)
    >>> result.occurrence
    'season'
    """
    makes_per_game = _check_integer("makes_per_game", makes_per_game, 1)
    games_in_a_row = _check_integer("games_in_a_row", games_in_a_row, 1)
    rate, rational, games, players, seasons, _ = _check_common(rate, game_attempts, league_players, seasons, False)
    success = [_game_success(n, makes_per_game, rate, rational) for n in games]
    season = run_probability_per_attempt(success, games_in_a_row)
    value = season.fraction if season.exact else season.probability
    # expected separate streaks: a streak starts at game i when games i..i+G-1
    # qualify and game i-1 (if any) does not
    s = np.array([float(v) for v in success])
    streaks = 0.0
    for start in range(len(s) - games_in_a_row + 1):
        product = float(np.prod(s[start : start + games_in_a_row]))
        streaks += product * (1.0 if start == 0 else 1.0 - s[start - 1])
    claim = f"at least {makes_per_game} makes in each of {games_in_a_row} consecutive games"
    deed = f"make at least {makes_per_game} shots in each of {games_in_a_row} straight games"
    return _result(
        kind="each_game",
        claim=claim,
        deed=deed,
        rate=rate,
        games=games,
        across_games=False,
        players=players,
        seasons=seasons,
        session_values=[value],
        methods=f"binomial chance per game, then {season.method} over the season's games",
        exact=season.exact,
        occurrence="season",
        expected_streaks=streaks,
    )
