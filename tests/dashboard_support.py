"""Stores for the dashboard's tests and benchmark: an invented league written through the ingest path.

:func:`synthetic_attempts` draws a league in the canonical layout (most
players independent, every ``streaky_every``-th player's attempts depending
on the previous one); :func:`write_synthetic_store` writes it as a Parquet
file and ingests it into a new store, exactly as ``streakwise ingest`` would.
:func:`template_store` builds one store per size per test session and
:func:`copy_store` gives each test module its own copy (a DuckDB file is held
by one connection at a time).
"""

from __future__ import annotations

import atexit
import shutil
import tempfile
from functools import lru_cache
from pathlib import Path

import numpy as np
import pandas as pd

from streakwise.analysis import simulate_bernoulli, simulate_markov, simulate_session_lengths
from streakwise.ingest import Store, ingest_paths

__all__ = ["BAD_CSV", "copy_store", "synthetic_attempts", "template_store", "write_synthetic_store"]

#: A small attempt file with one bad outcome on row 3 (the header is row 1).
BAD_CSV = "player,game,session,seq,made\nQ1,g1,g1,0,1\nQ1,g1,g1,1,maybe\nQ1,g1,g1,2,0\n"

_TEAMS = ("Amber Gulls", "Birch Voles", "Cedar Larks", "Dune Moles", "Elm Stoats", "Fern Shrikes", "Gravel Teals",
          "Heath Wrens", "Iris Pikas", "Jade Coots")


def synthetic_attempts(players: int = 24, games: int = 40, seasons: tuple[str, ...] = ("2040-41",), *,
                       streaky_every: int = 8, mean_attempts: float = 14.0, seed: int = 11) -> pd.DataFrame:
    """An invented league's field-goal attempts in the canonical layout."""
    rng = np.random.default_rng(seed)
    frames = []
    for p in range(players):
        player = f"S{p + 1:03d}"
        rate = float(rng.uniform(0.38, 0.55))
        streaky = streaky_every > 0 and p % streaky_every == 0
        for season in seasons:
            lengths = np.asarray(simulate_session_lengths(games, mean=mean_attempts, low=4, high=26, rng=rng), dtype=int)
            if streaky:  # each game one Markov sequence, cut to the game's length
                draws = simulate_markov(int(lengths.max()), rate_after_make=min(0.95, rate + 0.15),
                                        rate_after_miss=max(0.05, rate - 0.1), n_sequences=games, rng=rng).made
                made = np.concatenate([draws[g, :n] for g, n in enumerate(lengths)])
            else:
                made = simulate_bernoulli(np.full(int(lengths.sum()), rate), rng=rng)
            game_number = np.repeat(np.arange(1, games + 1), lengths)
            game = np.char.add(f"{season}-G", np.char.add(np.char.zfill(game_number.astype(str), 3), f"-{player}"))
            frames.append(pd.DataFrame({
                "player": player,
                "player_name": f"Player {p + 1}",
                "team": _TEAMS[p % len(_TEAMS)],
                "season": season,
                "game": game,
                "game_order": game_number,
                "session": game,
                "seq": np.concatenate([np.arange(n) for n in lengths]),
                "made": np.asarray(made).astype(int),
                "attempt_type": "field_goal",
            }))
    return pd.concat(frames, ignore_index=True)


def write_synthetic_store(folder: str | Path, **kwargs) -> Path:
    """Write :func:`synthetic_attempts` to ``folder/league.parquet`` and ingest it into ``folder/streakwise.duckdb``."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    data = folder / "league.parquet"
    synthetic_attempts(**kwargs).to_parquet(data, index=False)
    path = folder / "streakwise.duckdb"
    with Store(path) as store:
        ingest_paths(store, [data])
    return path


_ROOT = Path(tempfile.mkdtemp(prefix="streakwise-dashboard-tests-"))
atexit.register(shutil.rmtree, _ROOT, ignore_errors=True)


@lru_cache(maxsize=None)
def template_store(players: int = 24, games: int = 40, seasons: tuple[str, ...] = ("2040-41", "2041-42")) -> Path:
    """A synthetic store built once per process for these sizes (do not open it: copy it)."""
    return write_synthetic_store(_ROOT / f"template-{players}-{games}-{len(seasons)}", players=players, games=games,
                                 seasons=seasons)


def copy_store(destination: str | Path, **kwargs) -> Path:
    """A private copy of :func:`template_store` under ``destination``."""
    destination = Path(destination)
    destination.mkdir(parents=True, exist_ok=True)
    target = destination / "streakwise.duckdb"
    shutil.copyfile(template_store(**kwargs), target)
    return target
