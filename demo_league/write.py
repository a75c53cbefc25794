"""Write the demo league in the layouts real users bring, plus the truth file.

- season one as an **event log** (CSV): every event of every game, all kinds
  and all players interleaved, game clock counting down as ``M:SS``;
- season two as a tidy **attempt table** (Parquet) with other column names
  and other outcome words;
- the practice study as **drill sheets** (Excel): one row per round from a
  fixed spot, the round's attempts as a string of make/miss symbols;
- ``truth.json``: every player's type and true parameters, in a folder of its
  own, never read by any analysis.

Column names and event words are our own. The shipped profiles
``demo-events``, ``demo-attempts`` and ``demo-drills`` map them.

Every writer is deterministic: the same tables give byte-identical files
(fixed Excel workbook times and zip entry times; Parquet without pandas
metadata; JSON and CSV with fixed formatting).
"""

from __future__ import annotations

import datetime as dt
import io
import json
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from .scenario import Scenario

__all__ = [
    "DRILL_MADE",
    "DRILL_MISSED",
    "write_attempt_table",
    "write_drill_sheets",
    "write_event_log",
    "write_truth",
]

#: Outcome words of the event log and of the attempt table.
EVENT_OUTCOMES = {True: "sank", False: "off"}
TABLE_OUTCOMES = {True: "counted", False: "wasted"}
#: Symbols of the drill sheets.
DRILL_MADE = "Y"
DRILL_MISSED = "N"
_DRILL_GROUP = 5  # symbols per group, groups separated by a space

_FIXED_TIME = dt.datetime(2032, 7, 1, 12, 0, 0)
_ZIP_TIME = (2032, 7, 1, 12, 0, 0)


def _text(values: np.ndarray, fmt: str) -> np.ndarray:
    """Numbers as text with ``fmt``; NaN as an empty cell."""
    values = np.asarray(values, dtype=float)
    out = np.full(values.shape, "", dtype=object)
    present = ~np.isnan(values)
    if present.any():
        out[present] = np.char.mod(fmt, values[present])
    return out


def _clock(seconds: np.ndarray) -> np.ndarray:
    seconds = np.asarray(seconds, dtype=np.int64)
    minutes = np.char.mod("%d", seconds // 60)
    rest = np.char.mod("%02d", seconds % 60)
    return np.char.add(np.char.add(minutes, ":"), rest).astype(object)


def write_event_log(scenario: Scenario, events: pd.DataFrame, path: Path) -> Path:
    """Season one as a CSV event log (one row per event, game order)."""
    team_names = {t.code: t.name for t in scenario.teams}
    player_names = {p.id: p.name for p in scenario.players}
    tick = events.groupby("game", sort=False).cumcount().to_numpy() + 1
    has_team = events["team"].to_numpy() != ""
    home = events["home"].to_numpy(dtype=object, na_value=None)
    frame = pd.DataFrame(
        {
            "match": events["game"].to_numpy(),
            "tick": tick,
            "part": events["period"].to_numpy(),
            "remaining": _clock(events["clock_s"].to_numpy()),
            "club": events["team"].map(team_names).fillna("").to_numpy(),
            "ground": np.where(has_team, np.where(home == True, "host", "guest"), ""),  # noqa: E712
            "who": events["player"].to_numpy(),
            "who_name": events["player"].map(player_names).fillna("").to_numpy(),
            "action": events["kind"].to_numpy(),
            "outcome": events["made"].astype("boolean").map(EVENT_OUTCOMES).fillna("").to_numpy(dtype=object),
            "feet": _text(events["distance"].to_numpy(dtype=float, na_value=np.nan), "%.1f"),
            "cover_ft": _text(events["defender_distance"].to_numpy(dtype=float, na_value=np.nan), "%.1f"),
            "edge": _text(events["score_margin"].to_numpy(dtype=float, na_value=np.nan), "%d"),
            "day": pd.to_datetime(events["date"]).dt.strftime("%Y-%m-%d").to_numpy(),
        }
    )
    path.parent.mkdir(parents=True, exist_ok=True)
    frame.to_csv(path, index=False, lineterminator="\n")
    return path


def write_attempt_table(scenario: Scenario, attempts: pd.DataFrame, season: str, path: Path) -> Path:
    """Season two as a Parquet attempt table (one row per attempt)."""
    team_names = {t.code: t.name for t in scenario.teams}
    player_names = {p.id: p.name for p in scenario.players}
    free_throw = attempts["attempt_type"].to_numpy() == "free_throw"
    defender = attempts["defender_distance"].to_numpy(dtype=float, na_value=np.nan)
    columns = {
        "fixture": pa.array(attempts["game"].to_numpy(dtype=str)),
        "played_on": pa.array(attempts["date"].to_numpy().astype("datetime64[D]"), type=pa.date32()),
        "slot": pa.array(attempts["game_order"].to_numpy(dtype=np.int64)),
        "campaign": pa.array(np.full(len(attempts), season)),
        "side_name": pa.array(attempts["team"].map(team_names).to_numpy(dtype=str)),
        "at_home": pa.array(attempts["home"].to_numpy(dtype=bool)),
        "shooter_ref": pa.array(attempts["player"].to_numpy(dtype=str)),
        "shooter_label": pa.array(attempts["player"].map(player_names).to_numpy(dtype=str)),
        "shot_class": pa.array(np.where(free_throw, "line", "floor")),
        "worth": pa.array(attempts["points"].to_numpy(dtype=np.int64)),
        "verdict": pa.array(np.where(attempts["made"].to_numpy(dtype=bool), TABLE_OUTCOMES[True], TABLE_OUTCOMES[False])),
        "range_ft": pa.array(attempts["distance"].to_numpy(dtype=float)),
        "space_ft": pa.array(defender, mask=np.isnan(defender)),
        "qtr": pa.array(attempts["period"].to_numpy(dtype=np.int64)),
        "secs_left": pa.array(attempts["clock_s"].to_numpy(dtype=float)),
        "lead_before": pa.array(attempts["score_margin"].to_numpy(dtype=float).astype(np.int64)),
        "shot_no": pa.array(attempts.groupby("game", sort=False).cumcount().to_numpy(dtype=np.int64) + 1),
    }
    table = pa.table(columns)
    path.parent.mkdir(parents=True, exist_ok=True)
    pq.write_table(table, path, compression="zstd", write_statistics=True)
    return path


def write_drill_sheets(scenario: Scenario, rounds: pd.DataFrame, path: Path) -> Path:
    """The practice study as an Excel workbook: a notes sheet, then one row per round."""
    from openpyxl import Workbook
    from openpyxl.writer.excel import ExcelWriter

    player_names = {p.id: p.name for p in scenario.players}
    book = Workbook(write_only=True)
    notes = book.create_sheet("notes")
    study = scenario.practice
    for line in (
        [f"{scenario.name}: {study.name} (invented data)"],
        [f"Each row is one round of {study.attempts_per_round} attempts from one spot."],
        [f"marks: {DRILL_MADE} = make, {DRILL_MISSED} = miss, in groups of {_DRILL_GROUP}, in the order taken."],
    ):
        notes.append(line)
    sheet = book.create_sheet("rounds")
    sheet.append(["athlete", "athlete_name", "session_date", "station", "station_ft", "set_no", "marks"])
    for row in rounds.itertuples(index=False):  # one loop per round (1,920 rows)
        sheet.append(
            [
                row.player,
                player_names[row.player],
                dt.date.fromisoformat(row.date),
                row.spot,
                float(row.distance),
                int(row.round),
                _marks(row.made),
            ]
        )
    book.properties.creator = "streakwise demo"
    book.properties.lastModifiedBy = "streakwise demo"
    book.properties.created = _FIXED_TIME
    book.properties.modified = _FIXED_TIME
    buffer = io.BytesIO()
    # ExcelWriter directly: openpyxl's save() would stamp the current time.
    ExcelWriter(book, zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED, allowZip64=True)).save()
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(_fixed_zip_times(buffer.getvalue()))
    return path


def _marks(made: np.ndarray) -> str:
    symbols = np.where(np.asarray(made, dtype=bool), DRILL_MADE, DRILL_MISSED)
    text = "".join(symbols.tolist())
    return " ".join(text[i : i + _DRILL_GROUP] for i in range(0, len(text), _DRILL_GROUP))


def _fixed_zip_times(data: bytes) -> bytes:
    """Rewrite a zip archive with the same entries and a fixed time on each."""
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as source, zipfile.ZipFile(out, "w") as target:
        for info in source.infolist():
            entry = zipfile.ZipInfo(info.filename, date_time=_ZIP_TIME)
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.create_system = 3
            entry.external_attr = 0o644 << 16
            target.writestr(entry, source.read(info.filename))
    return out.getvalue()


def write_truth(scenario: Scenario, path: Path) -> Path:
    """``truth.json``: every player's type and true parameters."""
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(scenario.to_truth(), indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
    return path
