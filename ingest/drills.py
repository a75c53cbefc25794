"""Drill sheets: one row per practice round, the round's attempts as symbols.

A row names the player, the day, optionally the spot and the round, and a
string such as ``XXO-XOOX`` (symbols and separators set by the profile; letters
compare without case).  Each symbol becomes one attempt; the day is the game
and each (day, spot, round) of a player one session.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .fields import RowProblems, parse_date, parse_number, parse_text
from .profiles import Profile

__all__ = ["expand_drills"]


def expand_drills(raw_frame: pd.DataFrame, profile: Profile, problems: RowProblems) -> pd.DataFrame:
    """One row per attempt from a drill sheet (rows with problems give none)."""
    cols = profile.columns
    player = parse_text(raw_frame[cols["player"]])
    problems.add(player.isna().to_numpy(), cols["player"], "player is missing")
    texts = {}
    for field in ("player_name", "team", "season", "competition", "spot", "round"):
        if field in profile.fixed:
            texts[field] = pd.Series(profile.fixed[field], index=raw_frame.index, dtype="string")
        elif field in cols:
            texts[field] = parse_text(raw_frame[cols[field]])
    if "date" in cols:
        date = parse_date(raw_frame[cols["date"]], cols["date"], problems)
        problems.add(date.isna().to_numpy() & parse_text(raw_frame[cols["date"]]).isna().to_numpy(), cols["date"], "date is missing")
        day = date.dt.strftime("%Y-%m-%d").astype("string")
    else:
        date = None
        day = pd.Series("practice", index=raw_frame.index, dtype="string")
    distance = parse_number(raw_frame[cols["distance"]], cols["distance"], problems, minimum=0) if "distance" in cols else None

    shots = parse_text(raw_frame[cols["shots"]])
    made_set = set(profile.made_symbols.upper()) | set(profile.made_symbols.lower())
    missed_set = set(profile.missed_symbols.upper()) | set(profile.missed_symbols.lower())
    separators = set(profile.separators)
    outcomes: list[np.ndarray] = []
    messages = np.empty(len(raw_frame), dtype=object)
    bad = np.zeros(len(raw_frame), dtype=bool)
    for i, text in enumerate(shots.tolist()):  # one loop per round (rows), not per attempt
        if text is None or text is pd.NA:
            bad[i], messages[i] = True, "no attempts: the shots cell is empty"
            outcomes.append(np.array([], dtype=bool))
            continue
        symbols = [c for c in text if c not in separators]
        unknown = next(((pos, c) for pos, c in enumerate(symbols, start=1) if c not in made_set and c not in missed_set), None)
        if unknown:
            bad[i] = True
            messages[i] = (
                f"unknown symbol {unknown[1]!r} (attempt {unknown[0]}); expected {profile.made_symbols} for a make, "
                f"{profile.missed_symbols} for a miss, separators {profile.separators!r}"
            )
            outcomes.append(np.array([], dtype=bool))
            continue
        outcomes.append(np.fromiter((c in made_set for c in symbols), dtype=bool, count=len(symbols)))
    problems.add(bad, cols["shots"], messages)

    spot = texts.get("spot", pd.Series(pd.NA, index=raw_frame.index, dtype="string"))
    if "round" in texts:
        round_id = texts["round"].fillna("1")
    else:
        keyframe = pd.DataFrame({"player": player, "day": day, "spot": spot.fillna("")})
        round_id = (keyframe.groupby(["player", "day", "spot"], sort=False, dropna=False).cumcount() + 1).astype("string")
    session = (day + "/" + spot.fillna("-") + "/r" + round_id).astype("string")

    counts = np.fromiter((len(o) for o in outcomes), dtype=np.int64, count=len(outcomes))
    take = np.repeat(np.arange(len(raw_frame)), counts)
    out = pd.DataFrame(
        {
            "_position": take,
            "player": player.to_numpy()[take],
            "game": day.to_numpy()[take],
            "session": session.to_numpy()[take],
            "made": np.concatenate(outcomes) if outcomes else np.array([], dtype=bool),
            "seq": np.concatenate([np.arange(c) for c in counts]) if len(counts) else np.array([], dtype=np.int64),
            "attempt_type": profile.fixed.get("attempt_type", profile.default_attempt_type),
        }
    )
    for field in ("player_name", "team", "season", "competition"):
        if field in texts:
            out[field] = texts[field].to_numpy()[take]
    if date is not None:
        out["game_date"] = date.to_numpy()[take]
    if distance is not None:
        out["distance"] = distance.to_numpy()[take]
    for name in ("player", "game", "session", "attempt_type", "player_name", "team", "season", "competition"):
        if name in out:
            out[name] = out[name].astype("string")
    return out
