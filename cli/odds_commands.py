"""``odds`` and ``claim``: streak odds under chance, and claim checking in plain words.

Thin: parse the options, call :mod:`streakwise.analysis.odds` or
:mod:`streakwise.analysis.claims`, print JSON or the result's summary. A
player's rate and per-game attempts come from the store with ``--player``.
"""

from __future__ import annotations

import argparse
from fractions import Fraction

import pandas as pd

from streakwise.analysis.claims import check_game_streak_claim, check_run_claim, check_window_claim
from streakwise.analysis.odds import (
    WINDOW_METHODS,
    expected_attempts_until_run,
    expected_run_count,
    expected_window_count,
    longest_run_odds,
    run_probability,
    run_probability_given_makes,
    window_probability,
)
from streakwise.ingest.errors import InputError
from streakwise.ingest.store import Store, resolve_store_path

from .formatting import to_json
from .options import add_json_option, add_store_option

__all__ = ["game_attempts_from_store", "parse_attempt_list", "parse_rate", "register"]

#: Largest number of attempts for ``odds --distribution``: with a rate, given
#: makes (runs of one kind), given makes (runs of either kind).
DISTRIBUTION_MAX_ATTEMPTS = {"rate": 20_000, "makes": 2_000, "either_makes": 400}


def register(commands: argparse._SubParsersAction) -> None:
    odds = commands.add_parser(
        "odds",
        help="chance of a run or a hot stretch under chance alone",
        description="How likely chance alone is to produce a run of R (makes, misses or either) or at least X makes "
        "in some Y consecutive attempts, somewhere in N attempts. Rates may be given as 0.47, 47% or 47/100; "
        "a fraction gives an exact answer where the size allows.",
    )
    odds.add_argument("--attempts", "-n", required=True, type=int, metavar="N", help="number of attempts")
    odds.add_argument("--run", "-r", dest="run_length", type=int, metavar="R", help="a run of at least R in a row")
    odds.add_argument("--window", type=int, metavar="Y", help="a stretch of Y consecutive attempts (with --at-least)")
    odds.add_argument("--at-least", type=int, metavar="X", help="at least X makes in the stretch (with --window)")
    odds.add_argument("--rate", "-p", metavar="P", help="make probability of every attempt (0.47, 47%%, 47/100)")
    odds.add_argument("--given-makes", type=int, metavar="M", help="instead of a rate: M makes, every order equally likely (with --run)")
    kind = odds.add_mutually_exclusive_group()
    kind.add_argument("--either", action="store_true", help="runs of makes or of misses (with --run)")
    kind.add_argument("--misses", action="store_true", help="runs of misses (with --run)")
    odds.add_argument("--distribution", action="store_true", help="also show the distribution of the longest run (with --run)")
    odds.add_argument("--method", choices=WINDOW_METHODS, default="auto", help="window method (default: auto)")
    odds.add_argument("--samples", type=int, default=100_000, metavar="K", help="Monte Carlo sequences if a window needs them")
    odds.add_argument("--seed", type=int, default=None, help="seed for Monte Carlo")
    add_json_option(odds)
    odds.set_defaults(run=run_odds)

    claim = commands.add_parser(
        "claim",
        help="check a streak claim: how often chance alone produces it, for a player and a league",
        description="Check a streak claim against chance: a run of R makes (or misses), X makes in some Y "
        "consecutive attempts, or at least X makes in each of G consecutive games. The shooter is a player from "
        "the store (--player) or given (--rate, --attempts, --games). Answers the chance for this player in a "
        "season like this, for anyone in a league of such players, the expected count, and a plain sentence.",
    )
    what = claim.add_argument_group("the claim (choose one)")
    what.add_argument("--run", dest="run_length", type=int, metavar="R", help="R or more in a row")
    what.add_argument("--misses", action="store_true", help="with --run: a run of misses")
    what.add_argument("--window", type=int, metavar="Y", help="at least X makes in some Y consecutive attempts (with --at-least)")
    what.add_argument("--at-least", type=int, metavar="X", help="with --window")
    what.add_argument("--each-game", type=int, metavar="X", help="at least X makes in each of G consecutive games (with --games-in-a-row)")
    what.add_argument("--games-in-a-row", type=int, metavar="G", help="with --each-game")
    who = claim.add_argument_group("the shooter")
    who.add_argument("--player", metavar="ID", help="a player in the store: rate and per-game attempts from the data")
    who.add_argument("--season", metavar="SEASON", help="with --player: only this season")
    who.add_argument("--attempt-type", default="field_goal", metavar="TYPE", help="with --player: attempt type (default field_goal)")
    who.add_argument("--rate", metavar="P", help="make rate (0.47, 47%%, 47/100)")
    who.add_argument("--attempts", metavar="N[,N...]", help="attempts per game: one number for every game, or one per game")
    who.add_argument("--games", type=int, metavar="G", help="games in a season (when --attempts is one number; default 1)")
    claim.add_argument("--league-players", type=int, default=1, metavar="N", help="players like this in the league (default 1)")
    claim.add_argument("--seasons", type=int, default=1, metavar="S", help="seasons considered (default 1)")
    claim.add_argument("--across-games", action="store_true", help="let a run or stretch continue from one game into the next")
    claim.add_argument("--seed", type=int, default=None, help="seed for Monte Carlo (only used for very long windows)")
    add_store_option(claim)
    add_json_option(claim)
    claim.set_defaults(run=run_claim)


# ---------------------------------------------------------------------------
# Parsing helpers (pure)
# ---------------------------------------------------------------------------


def parse_rate(text: str, option: str = "--rate") -> Fraction:
    """``"0.47"``, ``"47%"`` or ``"47/100"`` -> Fraction in [0, 1]; InputError otherwise."""
    raw = str(text).strip()
    try:
        value = Fraction(raw[:-1].strip()) / 100 if raw.endswith("%") else Fraction(raw)
    except (ValueError, ZeroDivisionError):
        raise InputError(f"must be a rate such as 0.47, 47% or 47/100 (got {text!r})", path=option) from None
    if not 0 <= value <= 1:
        raise InputError(f"must be in [0, 1] (got {text})", path=option)
    return value


def parse_attempt_list(text: str, games: int | None, option: str = "--attempts") -> tuple[int, ...]:
    """``"15"`` with ``games`` -> (15,) * games; ``"12,15,9"`` -> (12, 15, 9)."""
    parts = [p.strip() for p in str(text).split(",") if p.strip()]
    try:
        values = [int(p) for p in parts]
    except ValueError:
        raise InputError(f"must be whole numbers of attempts, one or one per game, e.g. 15 or 12,15,9 (got {text!r})", path=option) from None
    if not values:
        raise InputError("needs at least one number of attempts", path=option)
    if any(v < 0 for v in values):
        raise InputError(f"attempts cannot be negative (got {text!r})", path=option)
    if games is not None and games < 1:
        raise InputError(f"must be at least 1 (got {games})", path="--games")
    if len(values) == 1:
        return tuple(values * (games or 1))
    if games is not None and games != len(values):
        raise InputError(f"lists {len(values)} games but --games says {games}", path=option)
    return tuple(values)


def game_attempts_from_store(attempts: pd.DataFrame) -> tuple[int, int, tuple[int, ...]]:
    """(makes, attempts, per-game attempt counts in game order) from canonical attempts.

    A game is the ``game`` id (the ``session`` where no game is given); games
    are ordered by season, date, game order and id.
    """
    frame = attempts.copy()
    frame["_game"] = frame["game"].fillna(frame["session"]).astype(str)
    order_columns = [c for c in ("season", "game_date", "game_order") if c in frame.columns]
    keys = frame.groupby("_game", sort=False).agg(
        n=("made", "size"), **{c: (c, "min") for c in order_columns}
    ).reset_index()
    keys = keys.sort_values([*order_columns, "_game"], na_position="last", kind="stable")
    return int(frame["made"].sum()), len(frame), tuple(int(n) for n in keys["n"])


# ---------------------------------------------------------------------------
# odds
# ---------------------------------------------------------------------------


def _positive(value, option, minimum=1):
    if value is not None and value < minimum:
        raise InputError(f"must be at least {minimum} (got {value})", path=option)


def _odds_iv(args):
    _positive(args.attempts, "--attempts")
    if (args.run_length is None) == (args.window is None):
        raise InputError("give either --run R or --window Y --at-least X", path="odds")
    if args.samples < 1:
        raise InputError(f"must be at least 1 (got {args.samples})", path="--samples")
    if args.run_length is not None:
        _positive(args.run_length, "--run")
        if args.run_length > args.attempts:
            raise InputError(f"a run of {args.run_length} cannot fit in {args.attempts} attempts (--run must be at most --attempts)", path="--run")
        if args.at_least is not None:
            raise InputError("--at-least goes with --window, not --run", path="--at-least")
        if (args.rate is None) == (args.given_makes is None):
            raise InputError("give exactly one of --rate P or --given-makes M", path="odds")
        if args.given_makes is not None and not 0 <= args.given_makes <= args.attempts:
            raise InputError(f"must be between 0 and --attempts ({args.attempts}) (got {args.given_makes})", path="--given-makes")
        return
    _positive(args.window, "--window")
    if args.at_least is None:
        raise InputError("--window needs --at-least X", path="--window")
    _positive(args.at_least, "--at-least")
    if args.at_least > args.window:
        raise InputError(f"cannot exceed --window ({args.window}) (got {args.at_least})", path="--at-least")
    if args.window > args.attempts:
        raise InputError(f"a stretch of {args.window} cannot fit in {args.attempts} attempts (--window must be at most --attempts)", path="--window")
    if args.rate is None:
        raise InputError("--window needs --rate P", path="--rate")
    for flag, name in ((args.given_makes is not None, "--given-makes"), (args.either, "--either"), (args.misses, "--misses"), (args.distribution, "--distribution")):
        if flag:
            raise InputError("goes with --run, not --window", path=name)


def run_odds(args: argparse.Namespace) -> int:
    _odds_iv(args)
    rate = parse_rate(args.rate) if args.rate is not None else None
    if args.run_length is not None:
        kind = "either" if args.either else "misses" if args.misses else "makes"
        if rate is not None:
            result = run_probability(args.attempts, args.run_length, rate, kind=kind)
            payload = result.to_dict()
            payload["expected_runs"] = float(expected_run_count(args.attempts, args.run_length, rate, kind=kind))
            if kind != "either":
                p = rate if kind == "makes" else 1 - rate
                payload["expected_attempts_until_first_run"] = float(expected_attempts_until_run(args.run_length, p)) if p > 0 else None
        else:
            result = run_probability_given_makes(args.attempts, args.run_length, args.given_makes, kind=kind)
            payload = result.to_dict()
        distribution = None
        if args.distribution:
            limit = DISTRIBUTION_MAX_ATTEMPTS[
                "rate" if rate is not None else "either_makes" if kind == "either" else "makes"
            ]
            if args.attempts > limit:
                raise InputError(f"handles up to {limit:,} attempts here (got {args.attempts:,})", path="--distribution")
            distribution = (
                longest_run_odds(args.attempts, rate, kind=kind)
                if rate is not None
                else longest_run_odds(args.attempts, makes=args.given_makes, kind=kind)
            )
            payload["longest_run"] = distribution.to_dict()
        if args.json:
            print(to_json(payload))
        else:
            text = result.summary()
            if "expected_runs" in payload:
                text += f"\nExpected number of separate runs this long: {payload['expected_runs']:.4g}"
            if payload.get("expected_attempts_until_first_run") is not None:
                text += f"\nExpected attempts until the first such run: {payload['expected_attempts_until_first_run']:.4g}"
            if distribution is not None:
                text += "\n\n" + distribution.summary()
            print(text)
        return 0
    result = window_probability(args.attempts, args.window, args.at_least, rate, method=args.method, samples=args.samples, rng=args.seed)
    payload = result.to_dict()
    payload["expected_stretches"] = float(expected_window_count(args.attempts, args.window, args.at_least, rate))
    if args.json:
        print(to_json(payload))
    else:
        print(result.summary() + f"\nExpected number of separate stretches like this: {payload['expected_stretches']:.4g}")
    return 0


# ---------------------------------------------------------------------------
# claim
# ---------------------------------------------------------------------------


def _claim_kind(args):
    chosen = [name for name, given in (("run", args.run_length is not None), ("window", args.window is not None), ("each_game", args.each_game is not None)) if given]
    if len(chosen) != 1:
        raise InputError("give one claim: --run R, --window Y --at-least X, or --each-game X --games-in-a-row G", path="claim")
    kind = chosen[0]
    if kind == "run":
        _positive(args.run_length, "--run")
    if kind == "window":
        _positive(args.window, "--window")
        if args.at_least is None:
            raise InputError("--window needs --at-least X", path="--window")
        _positive(args.at_least, "--at-least")
        if args.at_least > args.window:
            raise InputError(f"cannot exceed --window ({args.window}) (got {args.at_least})", path="--at-least")
    elif args.at_least is not None:
        raise InputError("goes with --window", path="--at-least")
    if kind == "each_game":
        _positive(args.each_game, "--each-game")
        if args.games_in_a_row is None:
            raise InputError("--each-game needs --games-in-a-row G", path="--each-game")
        _positive(args.games_in_a_row, "--games-in-a-row")
        if args.across_games:
            raise InputError("a streak of games already spans games; drop --across-games", path="--across-games")
    elif args.games_in_a_row is not None:
        raise InputError("goes with --each-game", path="--games-in-a-row")
    if args.misses and kind != "run":
        raise InputError("goes with --run", path="--misses")
    _positive(args.league_players, "--league-players")
    _positive(args.seasons, "--seasons")
    return kind


def _shooter(args):
    """(rate, game attempts, description) from the store or the options."""
    if args.player is not None:
        for flag, name in ((args.rate, "--rate"), (args.attempts, "--attempts"), (args.games, "--games")):
            if flag is not None:
                raise InputError("give --player or the shooter's numbers, not both", path=name)
        path = resolve_store_path(args.store)
        with Store(path, read_only=True) as store:
            frame = store.attempts(
                players=[args.player], seasons=[args.season] if args.season else None, attempt_types=[args.attempt_type]
            )
        if frame.empty:
            where = f" in season {args.season}" if args.season else ""
            raise InputError(
                f"no {args.attempt_type} attempts for player {args.player!r}{where} (`streakwise players` lists the players)",
                path="--player",
            )
        makes, total, games = game_attempts_from_store(frame)
        if makes == 0:
            raise InputError(f"player {args.player!r} has no makes in the store: a 0% rate gives no runs of makes", path="--player")
        seasons_seen = frame["season"].dropna().nunique() if "season" in frame.columns else 0
        name = frame["player_name"].dropna()
        source = {
            "player": args.player,
            "player_name": str(name.iloc[0]) if len(name) else None,
            "store": str(path),
            "season": args.season,
            "attempt_type": args.attempt_type,
            "makes": makes,
            "attempts": total,
            "seasons_in_data": int(seasons_seen),
        }
        return Fraction(makes, total), games, source
    if args.rate is None or args.attempts is None:
        raise InputError("give --player ID, or --rate P with --attempts N (and --games G)", path="claim")
    if args.season is not None:
        raise InputError("goes with --player", path="--season")
    rate = parse_rate(args.rate)
    games = parse_attempt_list(args.attempts, args.games)
    if sum(games) == 0:
        raise InputError("the games hold no attempts", path="--attempts")
    return rate, games, {"player": None}


def _fits(kind, args, games):
    longest = sum(games) if args.across_games else max(games)
    need = {"run": args.run_length, "window": args.window}.get(kind)
    if need is not None and need > longest:
        where = "the season's attempts" if args.across_games else "the longest game's attempts"
        hint = "" if args.across_games else "; add --across-games to count across games"
        raise InputError(f"{need} is more than {where} ({longest}){hint}", path=f"--{kind}")
    if kind == "each_game":
        if args.games_in_a_row > len(games):
            raise InputError(f"{args.games_in_a_row} games in a row, but the season has {len(games)} games", path="--games-in-a-row")
        if args.each_game > max(games):
            raise InputError(f"{args.each_game} makes is more than any game's attempts ({max(games)})", path="--each-game")


def run_claim(args: argparse.Namespace) -> int:
    kind = _claim_kind(args)
    rate, games, source = _shooter(args)
    _fits(kind, args, games)
    common = dict(league_players=args.league_players, seasons=args.seasons)
    if kind == "run":
        result = check_run_claim(args.run_length, rate, games, misses=args.misses, across_games=args.across_games, **common)
    elif kind == "window":
        result = check_window_claim(args.window, args.at_least, rate, games, across_games=args.across_games, rng=args.seed, **common)
    else:
        result = check_game_streak_claim(args.each_game, args.games_in_a_row, rate, games, **common)
    notes = []
    if source["player"] is not None:
        notes.append(
            f"The rate ({source['makes']}/{source['attempts']}) and the games come from the stored data, "
            "which include the streak being checked."
        )
        if source["season"] is None and source["seasons_in_data"] > 1:
            notes.append(
                f"The stored games span {source['seasons_in_data']} seasons and are treated as one; "
                "use --season to check one season."
            )
    payload = result.to_dict()
    payload["shooter"] = source
    payload["notes"] = [*payload["notes"], *notes]
    if args.json:
        print(to_json(payload))
    else:
        header = ""
        if source["player"] is not None:
            label = source["player_name"] or source["player"]
            header = f"Player {label} ({source['player']}), {source['attempt_type']}\n"
        text = header + result.summary()
        for note in notes:
            text += f"\n  * {note}"
        print(text)
    return 0
