"""``states``: when was a player hot? The two-state hot/cold model for one player."""

from __future__ import annotations

import argparse
import sys
import warnings

import numpy as np

from streakwise.ingest.errors import InputError
from streakwise.ingest.load import load_file
from streakwise.ingest.store import Store, resolve_store_path

from .formatting import plural, to_json
from .options import add_json_option, add_store_option

__all__ = ["format_states", "hot_strip", "register", "states_record"]

FIELD_GOAL = "field_goal"

CAUTIONS = (
    "Chance explains many streaks: a shooter with no hot hand also has stretches the model calls hot. "
    "Read the hot probabilities together with the p-value.",
    "Streakiness is not a cause: a hot state describes a pattern of makes and misses, not why it happened "
    "(shot selection, defence, opponents and game situation all leave patterns).",
    "Decisions about an athlete's wellbeing belong to licensed practitioners, not to this model.",
)


def register(commands: argparse._SubParsersAction) -> None:
    states = commands.add_parser(
        "states",
        help="when was a player hot? a two-state hot/cold model with a within-game test",
        description="Fit a two-state (hot/cold) hidden Markov model to one player's attempts, every game starting "
        "from the long-run mix of states, and test it against a single state by refitting it on within-game "
        "shuffles of the outcomes (game-to-game form alone looks like hot and cold states). Prints the hot and "
        "cold rates, how long each state lasts, the p-value and every attempt's probability of the hot state.",
    )
    states.add_argument("--player", required=True, metavar="ID", help="the player")
    states.add_argument("--input", metavar="FILE", help="read this file (canonical layout) instead of the store")
    states.add_argument("--attempt-type", metavar="TYPE", help="attempt type (default field_goal where present, else all)")
    states.add_argument("--seed", type=int, default=None, metavar="N", help="seed of the permutations (default: a fresh one, printed)")
    states.add_argument("--permutations", type=int, default=99, metavar="N", help="refits on shuffled games for the p-value (default 99; 999 for a p-value to report; 0 skips the test)")
    states.add_argument("--difficulty", action="store_true", help="fit the states on top of the league's shot-difficulty model (fitted on every player of the attempt type)")
    add_store_option(states)
    add_json_option(states)
    states.set_defaults(run=run_states)


# ---------------------------------------------------------------------------
# Reading the attempts
# ---------------------------------------------------------------------------


def _choose_type(frame, attempt_type: str | None, source: str):
    if "attempt_type" not in frame.columns or frame["attempt_type"].isna().all():
        if attempt_type is not None:
            raise InputError(f"the data has no attempt_type column to select {attempt_type!r} from", path="--attempt-type")
        return frame, None
    if attempt_type is None:
        present = set(frame["attempt_type"].dropna().unique())
        attempt_type = FIELD_GOAL if FIELD_GOAL in present else None
    if attempt_type is not None:
        frame = frame[frame["attempt_type"] == attempt_type]
        if frame.empty:
            raise InputError(f"no attempts of type {attempt_type!r}", path=source)
    return frame, attempt_type


def _attempts(args: argparse.Namespace):
    """(all attempts of the chosen type, the attempt type)."""
    if args.input:
        frame = load_file(args.input).attempts
        source = args.input
    else:
        source = str(resolve_store_path(args.store))
        with Store(resolve_store_path(args.store), read_only=True) as store:
            wanted = [args.attempt_type] if args.attempt_type else None
            players = None if args.difficulty else [args.player]
            frame = store.attempts(players=players, attempt_types=wanted)
            if frame.empty and not args.difficulty:
                # say whether the player exists at all
                frame = store.attempts(players=[args.player])
    frame, attempt_type = _choose_type(frame, args.attempt_type, source)
    if not (frame["player"].astype(str) == args.player).any():
        what = f" of type {attempt_type}" if attempt_type else ""
        raise InputError(f"no attempts{what} for player {args.player!r}", path="--player")
    return frame, attempt_type


def _check_args(args: argparse.Namespace) -> None:
    if args.permutations < 0:
        raise InputError(f"must be 0 or more (got {args.permutations})", path="--permutations")
    if args.seed is not None and args.seed < 0:
        raise InputError(f"must be a whole number >= 0 (got {args.seed})", path="--seed")


def _difficulty_offsets(frame, player_rows, notes: list[str]):
    """Logit of the fitted probabilities of the player's attempts, or None (with the reason in ``notes``)."""
    from scipy import special

    from streakwise.analysis.difficulty import DifficultyModelWarning, fit_difficulty_model

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", DifficultyModelWarning)
        model = fit_difficulty_model(frame)
    notes.extend(f"difficulty model: {w.message}" for w in caught if issubclass(w.category, DifficultyModelWarning))
    if not model.covariates:
        notes.append("the data hold no shot covariates, so the states are fitted without a difficulty model")
        return None, model
    fitted = model.fitted().reindex(player_rows).to_numpy(dtype=float)
    return special.logit(np.clip(fitted, 1e-6, 1 - 1e-6)), model


# ---------------------------------------------------------------------------
# Formatting (pure)
# ---------------------------------------------------------------------------


def hot_strip(made, hot_probability) -> tuple[str, str]:
    """Two aligned strings for one game: outcomes (``X`` make, ``.`` miss) and tenths of P(hot) (``0``-``9``)."""
    outcomes = "".join("X" if m else "." for m in made)
    tenths = "".join(str(min(9, int(np.floor(10 * h)))) for h in hot_probability)
    return outcomes, tenths


def states_record(result, *, attempt_type: str | None, notes: list[str], model=None) -> dict:
    """The JSON layout: the result's keys plus ``attempt_type``, ``notes`` and ``cautions``."""
    record = result.to_dict()
    record["attempt_type"] = attempt_type
    record["notes"] = list(notes)
    if model is not None:
        record["difficulty_covariates"] = list(model.covariates)
        record["difficulty_missing_covariates"] = list(model.missing_covariates)
    record["cautions"] = list(CAUTIONS)
    return record


def format_states(result, *, attempt_type: str | None, notes: list[str]) -> str:
    """Readable text: rates, stays, p-value, a strip per game, notes and cautions."""

    def with_interval(name: str, value: float) -> str:
        interval = result.intervals.get(name)
        text = f"{value:.3f}"
        return text + (f"  ({interval[0]:.3f} to {interval[1]:.3f})" if interval else "")

    longest = int(np.max(np.unique(np.asarray(result.session).astype(str), return_counts=True)[1])) if result.attempts else 1

    def lasts(stay: float) -> str:
        expected = 1 / max(1e-12, 1 - stay)
        return f"about {expected:.1f} attempts" if expected <= longest else "longer than any game"

    level = f"{100 * result.confidence_level:g}%"
    lines = [
        f"Hot and cold states of {result.player}"
        + (f" ({attempt_type})" if attempt_type else "")
        + f": {plural(result.attempts, 'attempt')} in {plural(result.sessions, 'game')}"
        + (", on top of the difficulty model" if result.with_difficulty else ""),
        "",
        f"  hot rate    {with_interval('hot_rate', result.hot_rate)}",
        f"  cold rate   {with_interval('cold_rate', result.cold_rate)}",
        f"  stay hot    {with_interval('stay_hot', result.stay_hot)}   (a hot stretch lasts {lasts(result.stay_hot)})",
        f"  stay cold   {with_interval('stay_cold', result.stay_cold)}   (a cold stretch lasts {lasts(result.stay_cold)})",
        f"  ({level} intervals from the {'observed information' if result.interval_method == 'information' else 'parametric bootstrap'})",
    ]
    if result.p_value is None:
        lines.append("  test against one state: skipped (--permutations 0)")
    else:
        lines.append(
            f"  test against one state: likelihood ratio {result.lr_statistic:.2f}, p = {result.p_value:.4f} "
            f"({result.permutations} refits on {result.null_method}; seed {result.seed})"
        )
    lines += ["", "Per game: X make, . miss; below, P(hot) in tenths (9 = 0.9 or more)"]
    session = np.asarray(result.session).astype(str)
    starts = np.flatnonzero(np.r_[True, session[1:] != session[:-1]]) if len(session) else np.zeros(0, int)
    ends = np.append(starts[1:], len(session))
    width = max((len(s) for s in session[starts]), default=4)
    for start, end in zip(starts, ends, strict=True):
        outcomes, tenths = hot_strip(result.made[start:end], result.hot_probability[start:end])
        lines.append(f"  {session[start]:<{width}}  {outcomes}")
        lines.append(f"  {'':<{width}}  {tenths}")
    if notes or result.warnings:
        lines += ["", "Notes:"] + [f"  - {n}" for n in (*notes, *result.warnings)]
    lines += ["", "Cautions:"] + [f"  {i}. {text}" for i, text in enumerate(CAUTIONS, start=1)]
    return "\n".join(lines)


# ---------------------------------------------------------------------------
# The command
# ---------------------------------------------------------------------------


def run_states(args: argparse.Namespace) -> int:
    from streakwise.analysis.adjusted import player_attempts
    from streakwise.analysis.hotstate import fit_hot_state

    _check_args(args)
    frame, attempt_type = _attempts(args)
    notes: list[str] = []
    attempts = player_attempts(frame, args.player)
    offset, model = None, None
    if args.difficulty:
        offset, model = _difficulty_offsets(frame, attempts.index, notes)
    if attempts.attempts < 2:
        raise InputError(f"player {args.player!r} has only {attempts.attempts} attempt(s); the model needs more", path="--player")
    seed = args.seed
    if seed is None:
        seed = int(np.random.SeedSequence().generate_state(1)[0])
        if not args.json:
            print(f"seed {seed} (pass --seed {seed} to repeat this result)", file=sys.stderr)
    result = fit_hot_state(
        attempts.made,
        attempts.offsets,
        logit_offset=offset,
        sessions=attempts.sessions,
        seq=attempts.seq,
        player=args.player,
        permutations=args.permutations,
        rng=seed,
    )
    if args.json:
        print(to_json(states_record(result, attempt_type=attempt_type, notes=notes, model=model)))
    else:
        print(format_states(result, attempt_type=attempt_type, notes=notes))
    return 0
