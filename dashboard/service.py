"""What the dashboard's server process knows: its store, caches and background jobs.

The server process owns the store (DESIGN.md, "The store"): one
:class:`DashboardService` opens it when the app is built and every callback
goes through it. Background work (league scans) gets the players' make/miss
arrays passed in and never opens the store; the finished scan is saved by
the server, keyed exactly as ``streakwise analyse --save`` keys it, so the
dashboard and the command line share saved scans.

Caching: every result is cached by what decides it (player, filters,
settings) and by the store's data version, so returning to a player is
instant and an ingest makes old results unreachable.
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import tempfile
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from streakwise.analysis import PlayerSequences, StreakTestResult, league_scan, permutation_test, player_sequences
from streakwise.analysis.shrinkage import shrink_scan_effects
from streakwise.cli.analyse_commands import DIFFICULTY_KIND, RESULT_KIND, scan_settings
from streakwise.ingest import FIELD_GOAL, InputError, Profile, Store, check_files, parse_profile, store_files
from streakwise.ingest.pipeline import FileOutcome

from .jobs import Job, Jobs

__all__ = [
    "DEFAULT_SEED",
    "DashboardService",
    "DashboardSettings",
    "IngestReport",
    "ScanView",
    "UPLOAD_LIMIT_BYTES",
]

#: Seed of the dashboard's tests and scans unless ``streakwise serve --seed`` says otherwise.
DEFAULT_SEED = 2031

#: Largest file the data view accepts.
UPLOAD_LIMIT_BYTES = 50 * 1024 * 1024


@dataclass(frozen=True)
class DashboardSettings:
    """Settings that decide the dashboard's results (part of every cache key).

    Attributes
    ----------
    permutations : int
        Within-game permutations per player (default 2,000: a league scan of
        the demo league then takes seconds; the command line's default is
        10,000).
    seed : int
        Seed of every test (each player's stream is derived from it and the
        player id, so a player's numbers do not depend on who else is shown).
    max_k : int
        Streak lengths k = 1..max_k.
    min_attempts : int
        Players with fewer attempts are left out of league scans.
    alternative : {'hot', 'cold', 'two-sided'}
    workers : int
        Processes for league scans (1: a thread of the server).
    upload_limit_bytes : int
        Largest file the data view accepts.
    """

    permutations: int = 2_000
    seed: int = DEFAULT_SEED
    max_k: int = 3
    min_attempts: int = 100
    alternative: str = "hot"
    workers: int = 1
    upload_limit_bytes: int = UPLOAD_LIMIT_BYTES

    def __post_init__(self) -> None:
        for name, low in (("permutations", 1), ("seed", 0), ("min_attempts", 1), ("workers", 1), ("upload_limit_bytes", 1)):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < low:
                raise ValueError(f"`{name}` must be a whole number of at least {low} (got {value!r})")
        if not 1 <= self.max_k <= 8:
            raise ValueError(f"`max_k` must be between 1 and 8 (got {self.max_k!r})")
        if self.alternative not in ("hot", "cold", "two-sided"):
            raise ValueError(f"`alternative` must be one of 'hot', 'cold', 'two-sided' (got {self.alternative!r})")


@dataclass(frozen=True)
class ScanView:
    """A league scan as a view needs it: saved, running, or neither.

    Attributes
    ----------
    key : str
        The result key (as ``Store.result_key`` makes it).
    settings : dict
        The scan's settings (the same dict ``streakwise analyse --save`` keys).
    payload : dict or None
        The saved scan (``LeagueScanResult.to_dict()`` plus ``attempt_type``).
    job : Job or None
        The background job computing it, if any was started.
    """

    key: str
    settings: dict
    payload: dict | None
    job: Job | None


@dataclass(frozen=True)
class IngestReport:
    """What the data view did with an uploaded file.

    Attributes
    ----------
    ok : bool
        The file was read (and, when asked, stored).
    stored : bool
    lines : tuple of str
        The report: counts, then every problem as ``file:row:column: message``.
    problems : tuple of str
        Only the problem lines.
    """

    ok: bool
    stored: bool
    lines: tuple[str, ...]
    problems: tuple[str, ...] = ()


class _Cache:
    """A small thread-safe LRU mapping."""

    def __init__(self, size: int) -> None:
        self._size = size
        self._items: OrderedDict[Hashable, Any] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: Hashable) -> Any:
        with self._lock:
            if key not in self._items:
                return None
            self._items.move_to_end(key)
            return self._items[key]

    def put(self, key: Hashable, value: Any) -> Any:
        with self._lock:
            self._items[key] = value
            self._items.move_to_end(key)
            while len(self._items) > self._size:
                self._items.popitem(last=False)
        return value

    def get_or_make(self, key: Hashable, make: Callable[[], Any]) -> Any:
        value = self.get(key)
        return value if value is not None else self.put(key, make())

    def clear(self) -> None:
        with self._lock:
            self._items.clear()


def _as_list(value: str | None) -> list[str] | None:
    return [value] if value else None


class DashboardService:
    """The store of one dashboard server, with its caches and background jobs.

    Parameters
    ----------
    store_path : str or path-like
        An existing store; it is opened for writing (the data view ingests,
        league scans are saved) and held until :meth:`close`.
    settings : DashboardSettings, optional

    Raises
    ------
    InputError
        The store does not exist or is not a streakwise store.
    StoreInUseError
        Another process holds it.
    """

    def __init__(self, store_path: str | os.PathLike, settings: DashboardSettings | None = None) -> None:
        path = Path(store_path)
        if not path.exists():
            raise InputError(
                "store not found (build the demo league with `streakwise demo --out DIR`, or ingest "
                "files with `streakwise ingest`)",
                path=str(path),
            )
        self.settings = settings or DashboardSettings()
        self.store = Store(path)
        self.jobs = Jobs(self.settings.workers)
        self._version_lock = threading.Lock()
        self._data_version = self.store.data_version()
        self._overview = _Cache(4)
        self._players = _Cache(64)
        self._sequences = _Cache(8)
        self._player_sequences = _Cache(1024)
        self._tests = _Cache(1024)
        self._scans = _Cache(32)
        self._views = _Cache(256)

    # -- lifetime ----------------------------------------------------------------

    @property
    def store_path(self) -> Path:
        return self.store.path

    def close(self) -> None:
        """Stop background work and release the store."""
        self.jobs.shutdown()
        self.store.close()

    # -- what is in the store ------------------------------------------------------

    def data_version(self) -> str:
        """The store's data version (only this process can change it)."""
        with self._version_lock:
            return self._data_version

    def _refresh_version(self) -> None:
        with self._version_lock:
            self._data_version = self.store.data_version()

    def overview(self) -> dict:
        """Seasons, teams and attempt types in the store, with attempt counts."""

        def make() -> dict:
            frame = self.store.attempts()
            def values(column: str) -> list[str]:
                return sorted(str(v) for v in frame[column].dropna().unique()) if column in frame else []
            types = frame["attempt_type"].dropna().astype(str).value_counts()
            return {
                "attempts": len(frame),
                "players": int(frame["player"].nunique()),
                "seasons": values("season"),
                "teams": values("team"),
                "attempt_types": sorted(types.index, key=lambda t: (t != FIELD_GOAL, -int(types[t]), t)),
            }

        return self._overview.get_or_make(self.data_version(), make)

    def default_attempt_type(self) -> str | None:
        """``field_goal`` where present, else the most common type."""
        types = self.overview()["attempt_types"]
        return types[0] if types else None

    def latest_season(self, attempt_type: str | None) -> str | None:
        """The last season (in name order) with attempts of this type, or None."""
        for season in reversed(self.overview()["seasons"]):
            if len(self.players(season, attempt_type)):
                return season
        return None

    def players(self, season: str | None = None, attempt_type: str | None = None) -> pd.DataFrame:
        """``Store.players`` for these filters (cached)."""
        key = (season, attempt_type, self.data_version())
        return self._players.get_or_make(
            key, lambda: self.store.players(season=_as_list(season), attempt_type=_as_list(attempt_type))
        )

    def player_label(self, player: str, season: str | None = None, attempt_type: str | None = None) -> str:
        """``"Name (P001)"``, or the id when the name is unknown."""
        frame = self.players(season, attempt_type)
        rows = frame[frame["player"] == player]
        if len(rows) and pd.notna(rows["player_name"].iloc[0]):
            return f"{rows['player_name'].iloc[0]} ({player})"
        return str(player)

    def attempts(self, player: str, season: str | None = None, attempt_type: str | None = None) -> pd.DataFrame:
        """One player's canonical attempts under the filters."""
        return self.store.attempts(players=[player], seasons=_as_list(season), attempt_types=_as_list(attempt_type))

    def league_sequences(self, season: str | None, attempt_type: str | None) -> dict[str, PlayerSequences]:
        """Every player's sessions under the filters (cached)."""
        key = (season, attempt_type, self.data_version())

        def make() -> dict[str, PlayerSequences]:
            frame = self.store.attempts(seasons=_as_list(season), attempt_types=_as_list(attempt_type))
            return player_sequences(frame)

        return self._sequences.get_or_make(key, make)

    def sequences(self, player: str, season: str | None, attempt_type: str | None) -> PlayerSequences | None:
        """One player's sessions under the filters (None when they have no attempts there)."""
        version = self.data_version()
        league = self._sequences.get((season, attempt_type, version))
        if league is not None:
            return league.get(player)
        key = (player, season, attempt_type, version)
        found = self._player_sequences.get(key)
        if found is None:
            found = player_sequences(self.attempts(player, season, attempt_type)).get(player, False)
            self._player_sequences.put(key, found)
        return found or None

    def remember(self, key: tuple, make: Callable[[], Any]) -> Any:
        """A view's built output for ``key`` (with the data version and settings added), made once.

        Figures are the slow part of a view (Plotly validates every
        property); keeping them makes returning to a player instant.
        """
        return self._views.get_or_make((*key, self.data_version(), self.settings), make)

    # -- tests -----------------------------------------------------------------------

    def player_test(self, player: str, season: str | None, attempt_type: str | None) -> StreakTestResult | None:
        """The within-game permutation test of one player (cached).

        Run as a league scan runs it (random permutations from the player's
        own stream of the dashboard's seed), so its numbers match the saved
        scan's entry for the player.
        """
        s = self.settings
        key = (player, season, attempt_type, s.permutations, s.seed, s.max_k, s.alternative, self.data_version())
        cached = self._tests.get(key)
        if cached is not None:
            return cached
        sequences = self.sequences(player, season, attempt_type)
        if sequences is None:
            return None
        result = permutation_test(
            sequences, max_k=s.max_k, permutations=s.permutations, alternative=s.alternative,
            method="random", rng=s.seed,
        )
        return self._tests.put(key, result)

    def hot_state(self, player: str, season: str | None, attempt_type: str | None):
        """The two-state hot/cold model of one player (cached), or None without attempts.

        Fitted without its test against one state (the refits take minutes),
        so the result has no p-value; the view says so.
        """
        from streakwise.analysis.hotstate import fit_hot_state

        key = ("hot_state", player, season, attempt_type, self.settings.seed, self.data_version())
        cached = self._tests.get(key)
        if cached is not None:
            return cached
        sequences = self.sequences(player, season, attempt_type)
        if sequences is None:
            return None
        result = fit_hot_state(sequences.made, sequences.offsets, sessions=sequences.sessions, player=player,
                               permutations=0, rng=self.settings.seed)
        return self._tests.put(key, result)

    # -- league scans ----------------------------------------------------------------

    def scan_settings(self, season: str | None, attempt_type: str | None) -> dict:
        """The settings of the league scan for these filters, as the command line keys them."""
        s = self.settings
        args = argparse.Namespace(
            player=None, season=_as_list(season), team=None, max_k=s.max_k, permutations=s.permutations,
            min_attempts=s.min_attempts, alternative=s.alternative,
        )
        return scan_settings(args, attempt_type, s.seed)

    def scan(self, season: str | None, attempt_type: str | None) -> ScanView:
        """The league scan for these filters: the saved one, or the job computing it."""
        settings = self.scan_settings(season, attempt_type)
        key = self.store.result_key(RESULT_KIND, settings)
        payload = self._scans.get(key)
        if payload is None:
            payload = self.store.load_result(RESULT_KIND, settings)
            if payload is not None:
                self._scans.put(key, payload)
        return ScanView(key=key, settings=settings, payload=payload, job=self.jobs.get(key))

    def difficulty_scan(self, season: str | None, attempt_type: str | None) -> dict | None:
        """The newest saved difficulty scan for these filters and the dashboard's settings, or None.

        ``streakwise analyse --difficulty --save`` keys it by the league
        scan's settings plus ``draws``, which the dashboard cannot know, so it
        is looked up by the rest (``Store.latest_result``; only scans saved on
        the current data count). Found scans are cached: the dashboard's own
        process holds the store, so nothing else can save a newer one meanwhile.
        """
        settings = self.scan_settings(season, attempt_type)
        key = ("difficulty", self.store.result_key(DIFFICULTY_KIND, settings))
        payload = self._scans.get(key)
        if payload is None:
            payload = self.store.latest_result(DIFFICULTY_KIND, settings)
            if payload is not None:
                self._scans.put(key, payload)
        return payload

    def shrunk_effects(self, season: str | None, attempt_type: str | None, k: int) -> dict[str, tuple[float, float, float]]:
        """Each scanned player's corrected D_k shrunk towards the league (empty until the scan is saved).

        :func:`streakwise.analysis.shrinkage.shrink_scan_effects` (empirical
        Bayes, REML; standard errors read off the 95% intervals, an
        approximation said so on the page). Returns ``{player: (shrunk, low, high)}``.
        """
        view = self.scan(season, attempt_type)
        if view.payload is None:
            return {}

        def make() -> dict:
            result = shrink_scan_effects(view.payload, k)
            if result is None:
                return {}
            return {p: (float(m), float(lo), float(hi)) for p, m, lo, hi in
                    zip(result.players, result.shrunk, result.interval_low, result.interval_high, strict=True)}

        return self._views.get_or_make(("shrunk", view.key, k), make)

    def start_scan(self, season: str | None, attempt_type: str | None) -> ScanView:
        """Start computing the league scan in the background (joins a running one)."""
        view = self.scan(season, attempt_type)
        if view.payload is not None or (view.job is not None and view.job.running):
            return view
        sequences = self.league_sequences(season, attempt_type)
        players = [sequences[name] for name in sorted(sequences)]
        version = self.data_version()
        s = self.settings

        def work(report, executor):
            return run_league_scan(players, attempt_type, s, progress=report, executor=executor)

        def save(payload: dict) -> None:
            self._scans.put(view.key, payload)
            if self.data_version() == version and not self.store.closed:
                self.store.save_result(RESULT_KIND, view.settings, payload)

        job = self.jobs.start(view.key, f"league scan of {len(players)} players", len(players), work, save)
        return dataclasses.replace(view, job=job)

    def cancel_scan(self, season: str | None, attempt_type: str | None) -> ScanView:
        view = self.scan(season, attempt_type)
        self.jobs.cancel(view.key)
        return view

    # -- ingest ----------------------------------------------------------------------

    def ingest_bytes(
        self,
        name: str,
        content: bytes,
        profile: Profile | None,
        *,
        keep_going: bool = False,
        store: bool = False,
    ) -> IngestReport:
        """Read an uploaded file (and store it when ``store``); report row by row.

        The file is written to a private temporary folder under its own name
        (without any folder part) so that every message names it as the user
        knows it.
        """
        name = Path(str(name).replace("\\", "/")).name
        if name in ("", ".", ".."):
            name = "upload"
        with tempfile.TemporaryDirectory(prefix="streakwise-upload-") as folder:
            path = Path(folder) / name
            path.write_bytes(content)
            try:
                loaded = check_files([path], profile, keep_going=keep_going)
            except InputError as exc:
                problems = tuple(_named(str(p), str(path), name) for p in exc.problems)
                header = f"{name}: refused, nothing was stored ({len(problems)} problem{'s' if len(problems) != 1 else ''})"
                return IngestReport(ok=False, stored=False, lines=(header, *problems), problems=problems)
            loaded = [dataclasses.replace(item, path=name) for item in loaded]
            item = loaded[0]
            reject_lines = tuple(
                f"{name}:{'' if pd.isna(r.row) else int(r.row)}:{'' if pd.isna(r.column) else r.column}: {r.message}"
                for r in item.rejects.itertuples(index=False)
            )
            lines = [
                f"{name}: {item.rows_read:,} rows read with layout {item.layout!r}"
                f"{' and profile ' + repr(item.profile.name) if item.profile.name else ''}: "
                f"{len(item.attempts):,} attempts, {item.rows_skipped:,} rows skipped (not attempts), "
                f"{item.rows_rejected:,} rows rejected",
                *item.notes,
            ]
            if not store:
                lines.append("Checked only: nothing was stored.")
                return IngestReport(ok=True, stored=False, lines=(*lines, *reject_lines), problems=reject_lines)
            try:
                outcomes: list[FileOutcome] = store_files(self.store, loaded)
            except InputError as exc:
                problems = tuple(_named(str(p), str(path), name) for p in exc.problems)
                return IngestReport(ok=False, stored=False, lines=(*lines, "Not stored:", *problems), problems=problems)
            finally:
                self._refresh_version()
            summary = outcomes[0].stored
            if summary is not None and summary.status == "already_stored":
                lines.append("The same file is already in the store: nothing new was stored.")
            else:
                lines.append(f"Stored as source {summary.source_id if summary else '?'}; the data version is now {self.data_version()}.")
            return IngestReport(ok=True, stored=True, lines=(*lines, *reject_lines), problems=reject_lines)

    @staticmethod
    def parse_uploaded_profile(name: str, content: bytes) -> Profile:
        """A profile from an uploaded TOML file (InputError names the file and key)."""
        try:
            text = content.decode("utf-8-sig")
        except UnicodeDecodeError:
            raise InputError("profile is not valid UTF-8", path=name) from None
        return parse_profile(text, source=Path(name).name)


def _named(text: str, path: str, name: str) -> str:
    """Show a problem with the uploaded file's own name instead of the temporary path."""
    return text.replace(path, name)


def run_league_scan(
    players: list[PlayerSequences],
    attempt_type: str | None,
    settings: DashboardSettings,
    *,
    progress: Callable[[int], None] | None = None,
    executor=None,
) -> dict:
    """Scan ``players`` as ``streakwise analyse`` does and return the saved layout.

    Pure: the players' arrays come in, a dict goes out (the store is not touched).
    """
    result = league_scan(
        players, min_attempts=settings.min_attempts, max_k=settings.max_k, permutations=settings.permutations,
        alternative=settings.alternative, rng=settings.seed, executor=executor, progress=progress,
    )
    payload = result.to_dict()
    payload["attempt_type"] = attempt_type
    return payload
