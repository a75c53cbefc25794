"""``analyse``: is each player streakier than chance? (within-game permutation tests).

Players run in this process, on local worker processes (``--workers``, default
the number of cores) or on a Dask cluster (``--cluster tcp://HOST:PORT``),
with identical results. With ``--save`` each player's finished test is kept in
the store as it arrives (this process writes the store; workers never open
it), so an interrupted scan continues with ``--resume`` and the same options,
running only the players still missing.
"""

from __future__ import annotations

import argparse
import contextlib
import signal
import sys
import threading

from streakwise.analysis import league_scan, player_sequences
from streakwise.analysis.executors import ExecutorSpec, decode_task_output, encode_task_output, usable_cores
from streakwise.ingest.errors import InputError
from streakwise.ingest.load import load_file
from streakwise.ingest.profiles import load_profile
from streakwise.ingest.record import FIELD_GOAL
from streakwise.ingest.store import Store, resolve_store_path

from .formatting import to_json
from .options import add_json_option, add_store_option

__all__ = ["register", "scan_settings"]

RESULT_KIND = "league_scan"
DIFFICULTY_KIND = "difficulty_scan"
#: One player's finished test within a scan (settings plus ``player``), kept for ``--resume``.
PARTIAL_KIND = "league_scan_partial"
#: The seed of the latest scan with given settings (``seed`` None), so ``--resume`` can find it.
RUN_KIND = "league_scan_run"


def register(commands: argparse._SubParsersAction) -> None:
    parser = commands.add_parser(
        "analyse",
        help="test players for streakiness against within-game shuffles",
        description="Compare each player's hit rates after streaks with what the same makes shuffled inside "
        "each game give (bias-corrected), with runs and longest-run tests, q-values across players "
        "and a pooled league test.",
    )
    parser.add_argument("--input", metavar="FILE", help="analyse this file (canonical layout, or with --profile) instead of the store")
    parser.add_argument("--profile", metavar="FILE", help="mapping profile for --input")
    parser.add_argument("--player", action="append", metavar="ID", help="only this player (repeat for more)")
    parser.add_argument("--season", action="append", metavar="SEASON", help="only this season (repeatable)")
    parser.add_argument("--team", action="append", metavar="TEAM", help="only this team (repeatable)")
    parser.add_argument("--attempt-type", metavar="TYPE", help="attempt type to analyse (default field_goal where present, else all)")
    parser.add_argument("--max-k", type=int, default=3, metavar="K", help="longest streak length k for rates after k makes/misses (1-8, default 3)")
    parser.add_argument("--permutations", type=int, default=10_000, metavar="N", help="within-game permutations per player (default 10,000)")
    parser.add_argument("--seed", type=int, metavar="N", help="seed for every random result (default: a fresh one, printed)")
    parser.add_argument("--min-attempts", type=int, default=100, metavar="N", help="test players with at least N attempts (default 100)")
    parser.add_argument("--alternative", choices=("hot", "cold", "two-sided"), default="hot", help="direction of the test (default hot)")
    parser.add_argument("--difficulty", action="store_true",
                        help="also adjust for shot difficulty: a logistic difficulty model fitted on every player of the "
                        "attempt type, tests on makes minus expected probability with a null that keeps each game's makes, "
                        "a streak coefficient, a shot-selection check and shrunken effects")
    parser.add_argument("--draws", type=int, default=1000, metavar="N",
                        help="with --difficulty: conditional resampling draws per player (default 1,000)")
    parser.add_argument("--workers", type=int, default=None, metavar="N",
                        help=f"local worker processes (default: the number of cores, {usable_cores()} here; "
                        "results do not depend on it)")
    parser.add_argument("--cluster", metavar="tcp://HOST:PORT",
                        help="run the players on this Dask scheduler instead of local processes (same results)")
    parser.add_argument("--save", action="store_true",
                        help="save the scan in the store (keyed by data version, settings and seed); each "
                        "player is kept as it finishes, so an interrupted scan can be resumed")
    parser.add_argument("--resume", action="store_true",
                        help="finish an interrupted --save scan with the same options: only missing players "
                        "run (implies --save; without --seed, the latest such scan's seed)")
    add_store_option(parser)
    add_json_option(parser)
    parser.set_defaults(run=run_analyse)


def scan_settings(args: argparse.Namespace, attempt_type: str | None, seed: int) -> dict:
    """Everything that decides a scan's result (the key of a saved scan)."""
    return {
        "players": sorted(args.player) if args.player else None,
        "seasons": sorted(args.season) if args.season else None,
        "teams": sorted(args.team) if args.team else None,
        "attempt_type": attempt_type,
        "max_k": args.max_k,
        "permutations": args.permutations,
        "seed": seed,
        "min_attempts": args.min_attempts,
        "alternative": args.alternative,
    }


def _check_args(args: argparse.Namespace) -> None:
    if args.difficulty and args.draws < 1:
        raise InputError(f"--draws must be at least 1 (got {args.draws})", path="--draws")
    if not 1 <= args.max_k <= 8:
        raise InputError(f"--max-k must be between 1 and 8 (got {args.max_k})", path="--max-k")
    if args.permutations < 1:
        raise InputError(f"--permutations must be at least 1 (got {args.permutations})", path="--permutations")
    if args.min_attempts < 1:
        raise InputError(f"--min-attempts must be at least 1 (got {args.min_attempts})", path="--min-attempts")
    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers must be at least 1 (got {args.workers})", path="--workers")
    if args.cluster is not None:
        if args.workers is not None:
            raise InputError("--workers sets local processes; with --cluster the cluster's workers run the scan",
                             path="--workers")
        try:
            ExecutorSpec(cluster=args.cluster)
        except ValueError:
            raise InputError(f"--cluster must be a Dask scheduler address like tcp://HOST:PORT (got {args.cluster!r})",
                             path="--cluster") from None
    if args.input and args.resume:
        raise InputError("--resume continues a scan saved in the store; it cannot be used with --input", path="--resume")
    if args.seed is not None and args.seed < 0:
        raise InputError(f"--seed must be a non-negative whole number (got {args.seed})", path="--seed")
    if args.input and args.save:
        raise InputError("--save keeps a scan of the store; it cannot be used with --input", path="--save")
    if args.profile and not args.input:
        raise InputError("--profile goes with --input", path="--profile")


def _filter(frame, column: str, values):
    if not values:
        return frame
    if column not in frame.columns or frame[column].isna().all():
        raise InputError(f"cannot filter by {column}: the data has no {column} values", path=f"--{column}")
    return frame[frame[column].isin(values)]


def _attempts(args: argparse.Namespace, store: Store | None, *, every_player: bool = False):
    """The attempts to analyse (``every_player``: ignore --player, for the difficulty model)."""
    players = None if every_player else args.player
    if store is None:
        loaded = load_file(args.input, load_profile(args.profile) if args.profile else None)
        frame = loaded.attempts
        frame = _filter(frame, "player", players)
        frame = _filter(frame, "season", args.season)
        frame = _filter(frame, "team", args.team)
    else:
        frame = store.attempts(players=players, seasons=args.season, teams=args.team)
    attempt_type = args.attempt_type
    if attempt_type is None:
        present = set(frame["attempt_type"].dropna().unique())
        attempt_type = FIELD_GOAL if FIELD_GOAL in present else None
    if attempt_type is not None:
        frame = frame[frame["attempt_type"] == attempt_type]
    if frame.empty:
        what = f" of type {attempt_type}" if attempt_type else ""
        raise InputError(f"no attempts{what} match the filters", path=args.input or "--store")
    return frame, attempt_type


@contextlib.contextmanager
def _uninterrupted():
    """Hold Ctrl-C until a store write has finished, then raise it.

    The database cancels a query on Ctrl-C with an error of its own; holding
    the signal keeps every write whole and the interruption a plain one.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught = []
    previous = signal.signal(signal.SIGINT, lambda signum, frame: caught.append(signum))
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)
    if caught:
        raise KeyboardInterrupt


class _Checkpoint:
    """Keeps each finished player of a scan in the store, and finds them again."""

    def __init__(self, store: Store, settings: dict) -> None:
        self.store = store
        self.settings = settings
        self.kept: list[str] = []

    def _settings(self, player: str) -> dict:
        return _partial_settings(self.settings, player)

    def start(self) -> None:
        """Record the seed, so that ``--resume`` without ``--seed`` finds this scan."""
        with _uninterrupted():
            self.store.save_result(RUN_KIND, {**self.settings, "seed": None}, {"seed": self.settings["seed"]})

    def load(self, players) -> dict:
        """The finished players of an earlier, interrupted run of this scan (unreadable ones run again)."""
        found = {}
        for sequences in players:
            saved = self.store.load_result(PARTIAL_KIND, self._settings(sequences.player))
            if saved is None or "part" not in saved:
                continue
            try:
                found[sequences.player] = decode_task_output(saved["part"])
            except (ValueError, TypeError, KeyError):
                print(f"the kept test of player {sequences.player!r} cannot be read; it runs again", file=sys.stderr)
        self.kept = list(found)
        return found

    def keep(self, player: str, part) -> None:
        payload = {"player": player, "part": encode_task_output(part)}
        with _uninterrupted():
            self.store.save_result(PARTIAL_KIND, self._settings(player), payload)
            self.kept.append(player)

    def clear(self, key: str) -> None:
        """Replace the kept players by a pointer to the whole scan (frees their null draws)."""
        with _uninterrupted():
            for player in self.kept:
                self.store.save_result(PARTIAL_KIND, self._settings(player), {"player": player, "scan": key})


def _partial_settings(settings: dict, player: str) -> dict:
    """The key of one kept player: the scan's settings, the player, and the code that ran it.

    The versions are part of the key so that a resumed scan never mixes tests
    made by different releases (numpy's random streams may change too).
    """
    from importlib.metadata import PackageNotFoundError, version

    import numpy as np

    try:
        release = version("streakwise")
    except PackageNotFoundError:
        release = "unknown"
    return {**settings, "player": player, "engine": f"streakwise {release}, numpy {np.__version__}"}


def _seed(args: argparse.Namespace, store: Store | None, attempt_type: str | None) -> int:
    import numpy as np

    if args.seed is not None:
        return args.seed
    if args.resume and store is not None:
        run = store.load_result(RUN_KIND, scan_settings(args, attempt_type, None))
        if run is not None:
            print(f"resuming the latest scan with these options (seed {run['seed']})", file=sys.stderr)
            return int(run["seed"])
    return int(np.random.SeedSequence().generate_state(1)[0])


def run_analyse(args: argparse.Namespace) -> int:
    _check_args(args)
    save = args.save or args.resume
    store = None if args.input else Store(resolve_store_path(args.store), read_only=not save)
    try:
        frame, attempt_type = _attempts(args, store)
        sequences = player_sequences(frame)
        missing = sorted(set(args.player or ()) - set(sequences))
        if missing:
            raise InputError(f"no attempts for player {', '.join(map(repr, missing))}", path="--player")
        seed = _seed(args, store, attempt_type)
        settings = scan_settings(args, attempt_type, seed)
        players = [sequences[name] for name in sorted(sequences)]
        checkpoint = _Checkpoint(store, settings) if store is not None and save else None
        completed = {}
        if checkpoint is not None:
            if args.resume:
                completed = checkpoint.load(p for p in players if p.attempts >= args.min_attempts)
                print(f"resuming: {len(completed)} player(s) already tested, "
                      f"{sum(p.attempts >= args.min_attempts for p in players) - len(completed)} to go",
                      file=sys.stderr)
            checkpoint.start()
        if args.cluster:
            print(f"running on the Dask cluster at {args.cluster}", file=sys.stderr)
        bar = _progress_bar(len(sequences))
        try:
            result = league_scan(
                players,
                min_attempts=args.min_attempts,
                max_k=args.max_k,
                permutations=args.permutations,
                alternative=args.alternative,
                rng=seed,
                workers=1 if args.cluster else (args.workers or usable_cores()),
                cluster=args.cluster,
                progress=None if bar is None else (lambda done: bar.update(done - bar.n)),
                completed=completed,
                on_player=None if checkpoint is None else checkpoint.keep,
            )
        except KeyboardInterrupt:
            if checkpoint is not None:
                print(f"{len(checkpoint.kept)} player(s) kept in the store: run the same command with --resume "
                      f"(seed {seed}) to finish the scan", file=sys.stderr)
            elif store is not None:
                print("nothing was kept: with --save each finished player is kept, and --resume continues",
                      file=sys.stderr)
            raise
        except ConnectionError as exc:
            raise InputError(str(exc), path="--cluster") from None
        finally:
            if bar is not None:
                bar.close()
        payload = result.to_dict()
        payload["attempt_type"] = attempt_type
        adjusted = None
        if args.difficulty:
            model_frame = frame if not args.player else _attempts(args, store, every_player=True)[0]
            tested = [p["player"] for p in payload["players"]]
            adjusted = _difficulty(args, model_frame, tested, seed)
        if checkpoint is not None:
            with _uninterrupted():
                key = store.save_result(RESULT_KIND, settings, payload)
            checkpoint.clear(key)
            print(f"saved the scan in {store.path} (key {key[:12]})", file=sys.stderr)
            if adjusted is not None:
                with _uninterrupted():
                    store.save_result(DIFFICULTY_KIND, {**settings, "draws": args.draws}, _difficulty_payload(adjusted))
    finally:
        if store is not None:
            store.close()
    if adjusted is not None:
        payload["difficulty_model"] = adjusted.model_dict()
        for entry in payload["players"]:
            if entry["player"] in adjusted.players:
                entry.update(adjusted.player_dict(entry["player"]))
    if args.json:
        print(to_json(payload))
    else:
        print(f"attempt type: {attempt_type or 'all'}")
        print(result.summary())
        if adjusted is not None:
            print()
            print(_difficulty_text(adjusted))
    return 0


def _difficulty(args: argparse.Namespace, frame, players: list[str], seed: int):
    """Fit the difficulty model on every player and test ``players`` (a progress bar on a terminal)."""
    import warnings

    from streakwise.analysis.adjusted import difficulty_scan
    from streakwise.analysis.difficulty import DifficultyModelWarning

    bar = _progress_bar(len(players))
    if bar is not None:
        bar.set_description_str("adjusting for difficulty")
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", DifficultyModelWarning)
            adjusted = difficulty_scan(
                frame, players=players, min_attempts=args.min_attempts, max_k=args.max_k, draws=args.draws,
                permutations=min(args.permutations, 10_000), rng=seed,
                progress=None if bar is None else (lambda done: bar.update(done - bar.n)),
            )
    finally:
        if bar is not None:
            bar.close()
    for warning in caught:
        if issubclass(warning.category, DifficultyModelWarning):
            print(f"warning: {warning.message}", file=sys.stderr)
    return adjusted


def _difficulty_payload(adjusted) -> dict:
    return {"difficulty_model": adjusted.model_dict(),
            "players": [{"player": p, **adjusted.player_dict(p)} for p in sorted(adjusted.players)]}


def _difficulty_text(adjusted) -> str:
    """The difficulty-adjusted results as a table (pure formatting)."""
    from .formatting import render_table

    model = adjusted.model_dict()
    lines = [
        "Adjusted for shot difficulty (makes minus the model's expected probability; the null resamples each game's "
        "makes from its attempts' fitted probabilities):",
        f"  difficulty model on {', '.join(model['covariates']) or 'no covariates'}; log loss "
        f"{model['log_loss']:.4f} against {model['base_log_loss']:.4f} for the base rate" if model["log_loss"] is not None
        else "  difficulty model fitted",
    ]
    for warning in model["warnings"]:
        lines.append(f"  warning: {warning}")
    rows = []
    for player in sorted(adjusted.players):
        block = adjusted.player_dict(player)
        row = {"player": player}
        for entry in block["difficulty_adjusted"]:
            row[f"adj{entry['k']}"] = entry["corrected"]
            row[f"p{entry['k']}"] = entry["p_value"]
        coefficient = block["streak_coefficient"]
        row["coef"] = coefficient.get("estimate")
        row["coef_p"] = coefficient.get("p_value_resampled")
        selection = block["shot_selection"]
        row["harder"] = selection.get("difference")
        row["harder_p"] = selection.get("p_value")
        shrunk = block["shrunk"][0]
        row["shrunk1"] = shrunk["estimate"]
        rows.append(row)
    k_values = sorted({int(key[3:]) for row in rows for key in row if key.startswith("adj")})
    columns = [("player", "player")]
    for k in k_values:
        columns += [(f"adj{k}", f"adj D_{k}"), (f"p{k}", "p")]
    columns += [("coef", "streak coef"), ("coef_p", "p (resampled)"), ("harder", "exp. p after makes - misses"),
                ("harder_p", "p"), ("shrunk1", "shrunk adj D_1")]
    lines.append(render_table(rows, columns))
    flagged = [p for p in sorted(adjusted.players) if adjusted.players[p].warnings]
    if flagged:
        lines.append("  note: attempts after makes differ in difficulty for " + ", ".join(flagged) + "; the adjusted "
                     "null is then only approximate and leans towards 'hot' (see DEVELOPERS.md).")
    return "\n".join(lines)


def _progress_bar(total: int):
    if total < 2 or not sys.stderr.isatty():
        return None
    from tqdm import tqdm

    return tqdm(total=total, unit="player", file=sys.stderr, leave=False, desc="analysing")
