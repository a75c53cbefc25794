"""Build the demo league: draw it, write its files, ingest them into a fresh store."""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path

from streakwise.ingest.errors import InputError
from streakwise.ingest.pipeline import ingest_paths
from streakwise.ingest.profiles import load_profile
from streakwise.ingest.store import DEFAULT_STORE_NAME, Store

from .games import play_practice, play_season
from .scenario import Scenario, build_scenario
from .write import write_attempt_table, write_drill_sheets, write_event_log, write_truth

__all__ = ["DEFAULT_SEED", "DemoSource", "DemoSummary", "PROFILES", "build_demo", "demo_files", "write_demo_files"]

#: Seed of ``streakwise demo`` when none is given.
DEFAULT_SEED = 2031

#: Shipped profile of each layout the demo writes.
PROFILES = {"events": "demo-events", "attempts": "demo-attempts", "drills": "demo-drills"}


@dataclass(frozen=True)
class DemoSource:
    """One written file and what the store did with it (read back from the store)."""

    path: Path
    layout: str
    profile: str
    rows_read: int
    rows_stored: int
    attempts: int
    skipped: int
    rejected: int


@dataclass(frozen=True)
class DemoSummary:
    """What :func:`build_demo` wrote and stored.

    Attributes
    ----------
    league, seed : the league's name and the seed it was drawn from.
    out_dir, store_path, truth_path : where things are.
    teams, players : counts.
    games : games per season (season name -> count).
    practice_players, practice_rounds : size of the practice study.
    sources : one :class:`DemoSource` per data file, in writing order.
    kind_counts : players per type (the truth's mix).
    seconds : wall time of the build.
    """

    league: str
    seed: int
    out_dir: Path
    store_path: Path
    truth_path: Path
    teams: int
    players: int
    games: dict[str, int]
    practice_players: int
    practice_rounds: int
    sources: tuple[DemoSource, ...]
    kind_counts: dict[str, int]
    seconds: float

    @property
    def attempts_by_layout(self) -> dict[str, int]:
        return {source.layout: source.attempts for source in self.sources}


def demo_files(out_dir: str | Path, scenario: Scenario | None = None) -> dict[str, Path]:
    """Where the demo's files go inside ``out_dir`` (by layout, plus ``truth`` and ``store``)."""
    out_dir = Path(out_dir)
    first, second = scenario.seasons if scenario is not None else ("2031-32", "2032-33")
    practice_year = scenario.practice.dates[0].year if scenario is not None else 2032
    return {
        "events": out_dir / "logs" / f"season-{first}-events.csv",
        "attempts": out_dir / "logs" / f"season-{second}-attempts.parquet",
        "drills": out_dir / "logs" / f"practice-{practice_year}-drills.xlsx",
        "truth": out_dir / "truth" / "truth.json",
        "store": out_dir / DEFAULT_STORE_NAME,
    }


def write_demo_files(scenario: Scenario, out_dir: str | Path) -> dict[str, Path]:
    """Draw the league and write its data files and truth (no store)."""
    paths = demo_files(out_dir, scenario)
    first = play_season(scenario, 0, with_events=True)
    write_event_log(scenario, first.events, paths["events"])
    second = play_season(scenario, 1, with_events=False)
    write_attempt_table(scenario, second.attempts, second.season, paths["attempts"])
    write_drill_sheets(scenario, play_practice(scenario), paths["drills"])
    write_truth(scenario, paths["truth"])
    return paths


def _fresh_store(path: Path, names: set[str]) -> None:
    """Remove an earlier demo store; refuse a store holding anything else.

    The store is opened first: that fails (and nothing is removed) when
    another process holds it or the file is not a streakwise store.
    """
    if path.exists():
        with Store(path) as store:
            held = set(store.sources()["name"].astype(str))
        other = sorted(held - names)
        if other:
            raise InputError(
                f"holds data that is not the demo's ({', '.join(other[:3])}{', ...' if len(other) > 3 else ''}); "
                "choose another --out folder, or move that store away",
                path=str(path),
            )
        path.unlink()
    wal = path.with_name(path.name + ".wal")
    if wal.exists():
        wal.unlink()


def _build_demo_iv(out_dir, seed):
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputError(f"the seed must be a whole number >= 0 (got {seed!r})", path="--seed")
    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError("exists and is not a folder", path=str(out_dir))
    return out_dir, seed


def build_demo(out_dir: str | Path = "demo", seed: int = DEFAULT_SEED) -> DemoSummary:
    """Write the invented demo league into ``out_dir`` and ingest it into a fresh store.

    Parameters
    ----------
    out_dir : str or Path
        Folder for the files (created if missing): ``logs/`` (the three data
        files), ``truth/truth.json`` and ``streakwise.duckdb``. An earlier
        demo store there is replaced; a store holding other data is refused.
    seed : int
        The same seed gives byte-identical data files and truth.

    Returns
    -------
    DemoSummary

    Raises
    ------
    InputError
        A bad seed or folder; ``out_dir/streakwise.duckdb`` is not a store or
        holds other data; or a file was refused by the ingest (a bug in the
        demo: its files must ingest cleanly).
    StoreInUseError
        Another process holds the store.
    """
    started = time.perf_counter()
    out_dir, seed = _build_demo_iv(out_dir, seed)
    scenario = build_scenario(seed)
    paths = demo_files(out_dir, scenario)
    _fresh_store(paths["store"], {paths[layout].name for layout in PROFILES})
    write_demo_files(scenario, out_dir)
    with Store(paths["store"]) as store:
        for layout, profile in PROFILES.items():
            ingest_paths(store, [paths[layout]], load_profile(profile))
        sources = store.sources()
    by_name = {row.name: row for row in sources.itertuples(index=False)}
    stored = []
    for layout, profile in PROFILES.items():
        row = by_name[paths[layout].name]
        stored.append(
            DemoSource(
                path=paths[layout],
                layout=layout,
                profile=profile,
                rows_read=int(row.rows_read),
                rows_stored=int(row.rows_stored),
                attempts=int(row.attempts),
                skipped=int(row.skipped),
                rejected=int(row.rejected),
            )
        )
    return DemoSummary(
        league=scenario.name,
        seed=seed,
        out_dir=out_dir,
        store_path=paths["store"],
        truth_path=paths["truth"],
        teams=len(scenario.teams),
        players=len(scenario.players),
        games={season: len(scenario.season_games(season)) for season in scenario.seasons},
        practice_players=len(scenario.practice.players),
        practice_rounds=len(scenario.practice.players)
        * len(scenario.practice.dates)
        * len(scenario.practice.spots)
        * scenario.practice.rounds_per_spot,
        sources=tuple(stored),
        kind_counts=scenario.kind_counts(),
        seconds=time.perf_counter() - started,
    )
