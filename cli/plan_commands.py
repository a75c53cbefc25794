"""``plan``: how much data a streak test needs (power, minimum detectable effect, games needed).

Thin: parse and check the options, call :mod:`streakwise.analysis.power`,
print JSON or the result's summary. Long runs show a progress bar on stderr
(only when stderr is a terminal).
"""

from __future__ import annotations

import argparse
import sys

from streakwise.analysis.power import (
    DEFAULT_MAX_EFFECT,
    DEFAULT_PERSISTENCE,
    MODELS,
    estimate_power,
    games_needed,
    minimum_detectable_effect,
    power_curve_figure,
)
from streakwise.ingest.errors import InputError

from .formatting import to_json
from .odds_commands import parse_rate
from .options import add_json_option

__all__ = ["parse_effects", "parse_games", "parse_tests", "register"]

FIGURE_SUFFIXES = (".html", ".json")


def register(commands: argparse._SubParsersAction) -> None:
    plan = commands.add_parser(
        "plan",
        help="plan a study: power of the streak tests, smallest detectable effect, games needed",
        description="Simulate seasons of a shooter with a known hot hand and count how often each test "
        "(D_k within-game permutation test, runs test, longest run) finds it: power for given effects and "
        "season lengths, the minimum detectable effect (--find mde) or the games needed (--find games). "
        "Rates and effects may be given as 0.1 or 10%.",
    )
    model = plan.add_argument_group("the simulated shooter")
    model.add_argument("--model", choices=MODELS, default="hidden",
                       help="hidden: a hidden hot/cold state; markov: dependence on the previous outcome (default hidden)")
    model.add_argument("--effect", action="append", metavar="E",
                       help="hidden: boost, hot minus cold make probability; markov: P(make|make) - P(make|miss). "
                       "Repeat or give a comma list for a curve; 0 gives the tests' size")
    model.add_argument("--persistence", metavar="P",
                       help=f"hidden: probability a state carries over to the next attempt (default {DEFAULT_PERSISTENCE})")
    model.add_argument("--rate", default="0.45", metavar="P", help="long-run make rate (default 0.45)")
    model.add_argument("--attempts-per-game", default="15", metavar="N[,N...]",
                       help="attempts in every game, or game lengths to draw from (e.g. 12,15,18) (default 15)")
    model.add_argument("--games", metavar="G[,G...]",
                       help="games per season; a comma list for power against attempts (default 80)")
    search = plan.add_argument_group("what to find")
    search.add_argument("--find", choices=("mde", "games"),
                        help="mde: the smallest effect found with --target-power; games: the games needed for --effect")
    search.add_argument("--target-power", type=float, default=0.8, metavar="B", help="target power (default 0.8)")
    search.add_argument("--max-effect", metavar="E", help="--find mde: upper bound of the effect (default: the model's limit)")
    search.add_argument("--resolution", type=float, default=0.01, metavar="S", help="--find mde: effect grid step (default 0.01)")
    search.add_argument("--max-games", type=int, default=640, metavar="G", help="--find games: upper bound (default 640)")
    search.add_argument("--tests", metavar="T[,T...]",
                        help="searched tests: D_1..D_K, runs, longest_run (default all)")
    sim = plan.add_argument_group("simulation and tests")
    sim.add_argument("--simulations", type=int, default=500, metavar="N", help="simulated seasons per point (default 500)")
    sim.add_argument("--permutations", type=int, default=1000, metavar="N", help="within-game permutations per season (default 1,000)")
    sim.add_argument("--alpha", type=float, default=0.05, metavar="A", help="significance level (default 0.05)")
    sim.add_argument("--max-k", type=int, default=3, metavar="K", help="D_k for k = 1..K (1-8, default 3)")
    sim.add_argument("--seed", type=int, metavar="N", help="seed of every random stream (default: a fresh one, printed)")
    sim.add_argument("--workers", type=int, default=1, metavar="N", help="worker processes (default 1; results do not depend on it)")
    plan.add_argument("--figure", metavar="FILE", help="also write the power curves to FILE (.html or .json)")
    add_json_option(plan)
    plan.set_defaults(run=run_plan)


# ---------------------------------------------------------------------------
# Parsing helpers (pure)
# ---------------------------------------------------------------------------


def _parts(values):
    out = []
    for value in values:
        out.extend(p.strip() for p in str(value).split(",") if p.strip())
    return out


def parse_effects(values, option: str = "--effect") -> list[float]:
    """``["0.1,0.2", "30%"]`` -> ``[0.1, 0.2, 0.3]``; each in [0, 1)."""
    parts = _parts(values)
    if not parts:
        raise InputError("needs at least one effect, e.g. 0.1 or 0.05,0.1,0.2", path=option)
    out = []
    for part in parts:
        try:
            value = float(parse_rate(part, option))
        except InputError:
            raise InputError(f"must be an effect in [0, 1) such as 0.1 or 10% (got {part!r})", path=option) from None
        if value >= 1:
            raise InputError(f"must be in [0, 1) (got {part})", path=option)
        out.append(value)
    return out


def parse_games(text: str, option: str = "--games") -> list[int]:
    """``"80"`` -> ``[80]``; ``"20,40,80"`` -> ``[20, 40, 80]``; each at least 1."""
    parts = _parts([text])
    try:
        values = [int(p) for p in parts]
    except ValueError:
        raise InputError(f"must be whole numbers, e.g. 80 or 20,40,80 (got {text!r})", path=option) from None
    if not values:
        raise InputError("needs at least one number", path=option)
    bad = [v for v in values if v < 1]
    if bad:
        raise InputError(f"must be at least 1 (got {bad[0]})", path=option)
    return values


def parse_tests(text: str, max_k: int, option: str = "--tests") -> list[str]:
    """``"d1,runs"`` -> ``["D_1", "runs"]`` (case and the underscore are optional)."""
    names = {f"D_{k}": f"D_{k}" for k in range(1, max_k + 1)}
    names.update({"runs": "runs", "longest_run": "longest_run"})
    lookup = {key.lower().replace("_", ""): value for key, value in names.items()}
    lookup["longest"] = "longest_run"
    out = []
    for part in _parts([text]):
        key = part.lower().replace("_", "").replace("-", "")
        if key not in lookup:
            raise InputError(f"unknown test {part!r}: choose from {', '.join(names)}", path=option)
        out.append(lookup[key])
    if not out:
        raise InputError("needs at least one test", path=option)
    return out


# ---------------------------------------------------------------------------
# plan
# ---------------------------------------------------------------------------


def _at_least(value, minimum, option):
    if value < minimum:
        raise InputError(f"must be at least {minimum} (got {value})", path=option)


def _open_unit(value, option):
    if not 0 < value < 1:
        raise InputError(f"must be strictly between 0 and 1 (got {value})", path=option)


def _plan_iv(args):
    """Checked settings as a dict; InputError (exit 2) for anything the library would refuse."""
    rate = float(parse_rate(args.rate))
    if not 0 < rate < 1:
        raise InputError(f"must be strictly between 0 and 1 (got {args.rate})", path="--rate")
    if args.model == "hidden":
        persistence = DEFAULT_PERSISTENCE if args.persistence is None else float(parse_rate(args.persistence, "--persistence"))
    else:
        if args.persistence is not None:
            raise InputError("goes with --model hidden (the hidden state's stay probability)", path="--persistence")
        persistence = None
    lengths = parse_games(args.attempts_per_game, "--attempts-per-game")
    attempts_per_game = lengths[0] if len(set(lengths)) == 1 else tuple(lengths)
    _at_least(args.simulations, 1, "--simulations")
    _at_least(args.permutations, 1, "--permutations")
    _open_unit(args.alpha, "--alpha")
    _open_unit(args.target_power, "--target-power")
    if not 1 <= args.max_k <= 8:
        raise InputError(f"must be between 1 and 8 (got {args.max_k})", path="--max-k")
    _at_least(args.workers, 1, "--workers")
    if args.seed is not None and args.seed < 0:
        raise InputError(f"must be a non-negative whole number (got {args.seed})", path="--seed")
    if args.figure is not None and not args.figure.lower().endswith(FIGURE_SUFFIXES):
        raise InputError(f"must end in {' or '.join(FIGURE_SUFFIXES)} (got {args.figure!r})", path="--figure")
    largest = 2 * min(rate, 1 - rate) if args.model == "hidden" else None

    def check_effect(value, option):
        if largest is not None and value > largest + 1e-12:
            raise InputError(
                f"{value:g} puts the hot and cold rates (rate +/- effect/2) outside [0, 1]: with --rate {rate:g} "
                f"the largest boost is {largest:g}", path=option)
        return value

    effects = [check_effect(e, "--effect") for e in parse_effects(args.effect)] if args.effect else None
    games = parse_games(args.games) if args.games is not None else None
    tests = parse_tests(args.tests, args.max_k) if args.tests is not None else None
    common = dict(
        model=args.model, persistence=persistence, rate=rate, attempts_per_game=attempts_per_game,
        simulations=args.simulations, permutations=args.permutations, alpha=args.alpha, max_k=args.max_k,
        seed=args.seed, workers=args.workers,
    )
    if args.find is None:
        if effects is None:
            raise InputError("give --effect E (a comma list for a curve), or --find mde", path="--effect")
        if tests is not None:
            raise InputError("chooses the tests of a search: use it with --find", path="--tests")
        return "power", dict(common, effects=effects, games=games or [80])
    if args.find == "mde":
        if effects is not None:
            raise InputError("--find mde searches the effect: drop --effect", path="--effect")
        if games is not None and len(games) > 1:
            raise InputError("--find mde takes one number of games", path="--games")
        high = None
        if args.max_effect is not None:
            high = check_effect(parse_effects([args.max_effect], "--max-effect")[0], "--max-effect")
            if high <= 0:
                raise InputError("must be above 0", path="--max-effect")
        else:
            high = DEFAULT_MAX_EFFECT[args.model] if largest is None else min(DEFAULT_MAX_EFFECT[args.model], largest)
        if not 0 < args.resolution <= high:
            raise InputError(f"must be above 0 and at most --max-effect ({high:g}) (got {args.resolution})", path="--resolution")
        return "mde", dict(common, games=(games or [80])[0], target_power=args.target_power, high=high,
                           resolution=args.resolution, tests=tests)
    if effects is None or len(effects) != 1:
        raise InputError("--find games needs one --effect E", path="--effect")
    if games is not None:
        raise InputError("--find games searches the number of games: drop --games (use --max-games for the bound)", path="--games")
    _at_least(args.max_games, 2, "--max-games")
    return "games", dict(common, effect=effects[0], target_power=args.target_power, max_games=args.max_games, tests=tests)


class _ProgressBar:
    """A tqdm bar on stderr when it is a terminal; the total grows as a search plans more seasons."""

    def __init__(self) -> None:
        self.bar = None
        if sys.stderr.isatty():
            from tqdm import tqdm

            self.bar = tqdm(total=0, unit="season", file=sys.stderr, leave=False, desc="simulating")

    def __call__(self, done: int, planned: int) -> None:
        if self.bar is None:
            return
        if planned != self.bar.total:
            self.bar.total = planned
            self.bar.refresh()
        self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def _write_figure(result, kind, path):
    if kind == "power":
        against = "attempts" if len(result.effects) == 1 and len(result.games) > 1 else "effect"
    else:
        against = "effect" if kind == "mde" else "attempts"
    figure = power_curve_figure(result, against=against)
    if path.lower().endswith(".json"):
        figure.write_json(path)
    else:
        figure.write_html(path)
    print(f"power curves written to {path}", file=sys.stderr)


def run_plan(args: argparse.Namespace) -> int:
    kind, settings = _plan_iv(args)
    bar = _ProgressBar()
    try:
        if kind == "power":
            result = estimate_power(progress=bar, **settings)
        elif kind == "mde":
            result = minimum_detectable_effect(progress=bar, **settings)
        else:
            result = games_needed(progress=bar, **settings)
    finally:
        bar.close()
    if args.figure is not None:
        _write_figure(result, kind, args.figure)
    if args.json:
        print(to_json(result.to_dict()))
    else:
        print(result.summary())
    return 0
