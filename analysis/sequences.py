"""From the tidy attempt record to per-session 0/1 arrays.

The statistics work on each player's sessions as make/miss arrays.  They are
kept flat: one ``int8`` array of outcomes with every session of the player
concatenated, and ``offsets`` marking where each session starts (session
``i`` is ``made[offsets[i]:offsets[i + 1]]``).  Sessions follow the season's
order (``game_date``, then ``game_order``, then the ids), attempts the
``seq`` order.  Attempt types are never mixed unless asked: pass
``attempt_type`` to select one.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["PlayerSequences", "player_sequences", "session_arrays"]

_NEEDED = ("player", "session", "seq", "made")


@dataclass(frozen=True)
class PlayerSequences:
    """One player's sessions as a flat outcome array with offsets.

    Attributes
    ----------
    player : str
    sessions : numpy.ndarray
        Session ids in season order.
    games : numpy.ndarray
        The game of each session.
    made : numpy.ndarray
        ``int8`` outcomes (1 make, 0 miss), sessions concatenated.
    offsets : numpy.ndarray
        ``int64``, length ``len(sessions) + 1``.
    """

    player: str
    sessions: np.ndarray
    games: np.ndarray
    made: np.ndarray
    offsets: np.ndarray

    @property
    def lengths(self) -> np.ndarray:
        """Attempts per session."""
        return np.diff(self.offsets)

    @property
    def makes(self) -> np.ndarray:
        """Makes per session."""
        return np.add.reduceat(self.made.astype(np.int64), self.offsets[:-1]) if len(self.made) else np.zeros(0, np.int64)

    @property
    def attempts(self) -> int:
        return int(len(self.made))

    def session(self, i: int) -> np.ndarray:
        """Outcomes of session ``i``."""
        return self.made[self.offsets[i] : self.offsets[i + 1]]

    def __iter__(self) -> Iterator[np.ndarray]:
        for i in range(len(self.sessions)):
            yield self.session(i)

    def __len__(self) -> int:
        return len(self.sessions)


def _check_frame(frame: pd.DataFrame) -> None:
    missing = [c for c in _NEEDED if c not in frame.columns]
    if missing:
        raise ValueError(f"the attempt frame needs columns {', '.join(_NEEDED)} (missing {', '.join(missing)})")


def _select(frame: pd.DataFrame, attempt_type: str | None, players: Iterable[str] | None) -> pd.DataFrame:
    _check_frame(frame)
    chosen = frame
    if attempt_type is not None:
        if "attempt_type" not in frame.columns:
            raise ValueError("attempt_type was given but the frame has no 'attempt_type' column")
        chosen = chosen[chosen["attempt_type"] == attempt_type]
    if players is not None:
        chosen = chosen[chosen["player"].isin(list(players))]
    if chosen["made"].isna().any():
        raise ValueError("'made' has missing values; every attempt needs an outcome")
    order = ["player"]
    for key in ("game_date", "game_order", "game"):
        if key in chosen.columns:
            order.append(key)
    order += ["session", "seq"]
    return chosen.sort_values(order, kind="stable", na_position="last")


def player_sequences(
    frame: pd.DataFrame, *, attempt_type: str | None = None, players: Iterable[str] | None = None
) -> dict[str, PlayerSequences]:
    """Each player's sessions as :class:`PlayerSequences`, keyed by player id.

    Parameters
    ----------
    frame : DataFrame
        Canonical attempts (at least ``player, session, seq, made``).
    attempt_type : str, optional
        Keep only this attempt type (e.g. ``"field_goal"``).
    players : iterable of str, optional
        Keep only these players.

    Examples
    --------
    >>> import pandas as pd
    >>> f = pd.DataFrame({"player": ["a"] * 4, "session": ["g1", "g1", "g2", "g2"],
    ...                   "seq": [0, 1, 0, 1], "made": [True, False, True, True]})
    >>> s = player_sequences(f)["a"]
    >>> s.made.tolist(), s.offsets.tolist()
    ([1, 0, 1, 1], [0, 2, 4])
    """
    ordered = _select(frame, attempt_type, players)
    result: dict[str, PlayerSequences] = {}
    if ordered.empty:
        return result
    player = ordered["player"].astype(str).to_numpy()
    session = ordered["session"].astype(str).to_numpy()
    game = ordered["game"].astype(str).to_numpy() if "game" in ordered.columns else session
    made = ordered["made"].to_numpy(dtype=bool).astype(np.int8)
    n = len(ordered)
    new_player = np.ones(n, dtype=bool)
    new_player[1:] = player[1:] != player[:-1]
    new_session = new_player.copy()
    new_session[1:] |= session[1:] != session[:-1]
    player_starts = np.flatnonzero(new_player)
    player_ends = np.append(player_starts[1:], n)
    session_starts = np.flatnonzero(new_session)
    for start, end in zip(player_starts, player_ends, strict=True):
        local = session_starts[(session_starts >= start) & (session_starts < end)]
        offsets = np.append(local, end) - start
        result[str(player[start])] = PlayerSequences(
            player=str(player[start]),
            sessions=session[local],
            games=game[local],
            made=made[start:end].copy(),
            offsets=offsets.astype(np.int64),
        )
    return result


def session_arrays(
    frame: pd.DataFrame, *, attempt_type: str | None = None, players: Iterable[str] | None = None
) -> dict[tuple[str, str], np.ndarray]:
    """``{(player, session): 0/1 int8 array ordered by seq}``."""
    out: dict[tuple[str, str], np.ndarray] = {}
    for player, seqs in player_sequences(frame, attempt_type=attempt_type, players=players).items():
        for name, values in zip(seqs.sessions, seqs, strict=True):
            out[(player, str(name))] = values
    return out
