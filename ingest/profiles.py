"""Mapping profiles: which column of a user's file is which canonical field.

A profile is a small TOML file.  Example (an attempt table)::

    name = "club-tracking"
    layout = "attempts"            # attempts | events | drills

    [columns]                      # canonical field = the file's column
    player = "shooter_id"
    game = "match"
    made = "result"
    period = "quarter"
    clock = "time_left"

    [outcomes]
    made = ["in", "good"]
    missed = ["out", "no good"]

    [order]
    by = "clock"                   # index | clock | timestamp | file
    clock = "down"                 # the game clock counts down (or "up")
    period_seconds = 600
    overtime_seconds = 300
    regular_periods = 4

An event log adds an ``[events]`` table naming the column with the kind of
each event and which kinds are attempts; a drill sheet adds ``[drills]``
with the make and miss symbols.  ``docs`` in DEVELOPERS.md lists every key.
The layout ``canonical`` (columns ``player, session, seq, made`` and any other
canonical column by its own name) needs no profile.
"""

from __future__ import annotations

import difflib
import hashlib
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

from .errors import InputError
from .record import FIELD_GOAL, FREE_THROW

__all__ = [
    "CANONICAL_PROFILE",
    "DEFAULT_MADE",
    "DEFAULT_MISSED",
    "EventKind",
    "Profile",
    "load_profile",
    "parse_profile",
    "shipped_profiles",
]

LAYOUTS = ("attempts", "events", "drills", "canonical")

#: Outcome words understood when a profile names none (compared without case).
DEFAULT_MADE = ("made", "make", "1", "true", "h", "hit", "in", "x", "yes", "y", "t", "good", "scored", "1.0")
DEFAULT_MISSED = ("missed", "miss", "0", "false", "m", "out", "o", "no", "n", "f", "no good", "blocked", "0.0")
DEFAULT_HOME = ("home", "h", "1", "true", "yes", "y")
DEFAULT_AWAY = ("away", "a", "road", "0", "false", "no", "n")

#: Canonical fields a profile may map to a column (``clock``, ``index`` and
#: ``timestamp`` are order keys, ``session`` an explicit session column).
MAPPABLE = (
    "player",
    "player_name",
    "team",
    "season",
    "competition",
    "game",
    "game_date",
    "game_order",
    "session",
    "made",
    "attempt_type",
    "points",
    "distance",
    "x",
    "y",
    "defender_distance",
    "period",
    "clock",
    "score_margin",
    "home",
    "index",
    "timestamp",
    "seq",
)
DRILL_MAPPABLE = ("player", "player_name", "team", "season", "competition", "date", "spot", "round", "shots", "distance")

ORDER_BY = ("index", "clock", "timestamp", "file", "seq")
SESSION_SPLITS = ("game", "period", "gap", "season")


@dataclass(frozen=True)
class EventKind:
    """How one kind of event in an event log becomes an attempt."""

    attempt_type: str
    made: bool | None = None  # None: read the outcome column
    points: int | None = None


@dataclass(frozen=True)
class Profile:
    """A parsed mapping profile (see the module docstring for the keys)."""

    name: str
    layout: str
    columns: dict[str, str]
    made_words: tuple[str, ...] = DEFAULT_MADE
    missed_words: tuple[str, ...] = DEFAULT_MISSED
    home_words: tuple[str, ...] = DEFAULT_HOME
    away_words: tuple[str, ...] = DEFAULT_AWAY
    order_by: str | None = None
    clock_direction: str = "down"
    period_seconds: float | None = None
    overtime_seconds: float | None = None
    regular_periods: int = 4
    attempt_types: dict[str, str] = field(default_factory=dict)  # file value (lower) -> canonical type
    default_attempt_type: str = FIELD_GOAL
    event_kind_column: str | None = None
    event_kinds: dict[str, EventKind] = field(default_factory=dict)  # lower-case kind -> EventKind
    made_symbols: str = "X1H"
    missed_symbols: str = "O0M"
    separators: str = " ,;|/-_."
    session_split: str = "game"
    session_gap_seconds: float | None = None
    delimiter: str | None = None
    sheet: str | None = None
    fixed: dict[str, str] = field(default_factory=dict)  # canonical field -> constant value for every row
    source: str = "<built-in>"
    text: str = ""

    @property
    def sha256(self) -> str:
        return hashlib.sha256(self.text.encode("utf-8")).hexdigest() if self.text else ""

    def with_sessions(self, split: str, gap_seconds: float | None = None) -> "Profile":
        """Return a copy that splits sessions as asked."""
        from dataclasses import replace

        return replace(self, session_split=split, session_gap_seconds=gap_seconds)


CANONICAL_PROFILE = Profile(name="canonical", layout="canonical", columns={})


def shipped_profiles() -> dict[str, Path]:
    """Profiles that ship with streakwise, by name (file stem)."""
    folder = resources.files("streakwise.ingest") / "profiles"
    found = {}
    for entry in folder.iterdir():
        if entry.name.endswith(".toml"):
            found[entry.name[: -len(".toml")]] = Path(str(entry))
    return dict(sorted(found.items()))


def load_profile(name_or_path: str | Path) -> Profile:
    """Load a profile from a TOML file, or a shipped profile by name."""
    path = Path(name_or_path)
    if not path.exists():
        shipped = shipped_profiles()
        if str(name_or_path) in shipped:
            path = shipped[str(name_or_path)]
        else:
            names = ", ".join(shipped) or "none"
            raise InputError(f"profile not found (not a file, nor a shipped profile: {names})", path=str(name_or_path))
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise InputError("profile is not valid UTF-8", path=str(name_or_path)) from None
    except OSError as exc:
        raise InputError(f"cannot read profile: {exc.strerror or exc}", path=str(name_or_path)) from None
    return parse_profile(text, source=str(name_or_path))


def parse_profile(text: str, *, source: str = "<profile>") -> Profile:
    """Parse profile TOML ``text``; errors name ``source`` and the key."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", path=source) from None
    reader = _Keys(data, source)
    name = reader.text("name", default=Path(source).stem)
    layout = reader.choice("layout", LAYOUTS, default="attempts")
    mappable = DRILL_MAPPABLE if layout == "drills" else MAPPABLE
    columns = reader.table("columns")
    column_map: dict[str, str] = {}
    for key, value in columns.items():
        if key not in mappable:
            reader.unknown(f"columns.{key}", key, mappable)
        if not isinstance(value, str) or not value.strip():
            raise InputError(f"expected a column name (text), got {value!r}", path=source, column=f"columns.{key}")
        column_map[key] = value.strip()
    fixed_table = reader.table("fixed")
    fixed = {}
    for key, value in fixed_table.items():
        if key not in ("team", "season", "competition", "attempt_type"):
            reader.unknown(f"fixed.{key}", key, ("team", "season", "competition", "attempt_type"))
        if isinstance(value, (list, dict)) or (isinstance(value, float) and value != value):
            raise InputError(f"expected a plain value (text or a number), got {value!r}", path=source, column=f"fixed.{key}")
        fixed[key] = str(value)

    outcomes = reader.table("outcomes")
    made_words = _words(outcomes.get("made"), source, "outcomes.made") or DEFAULT_MADE
    missed_words = _words(outcomes.get("missed"), source, "outcomes.missed") or DEFAULT_MISSED
    _check_keys(outcomes, ("made", "missed"), source, "outcomes")
    overlap = set(made_words) & set(missed_words)
    if overlap:
        raise InputError(f"{sorted(overlap)[0]!r} is listed as both made and missed", path=source, column="outcomes")
    home = reader.table("home")
    _check_keys(home, ("home", "away"), source, "home")
    home_words = _words(home.get("home"), source, "home.home") or DEFAULT_HOME
    away_words = _words(home.get("away"), source, "home.away") or DEFAULT_AWAY

    order = reader.table("order")
    _check_keys(order, ("by", "clock", "period_seconds", "overtime_seconds", "regular_periods"), source, "order")
    order_by = order.get("by")
    if order_by is not None and order_by not in ORDER_BY:
        raise InputError(f"must be one of {', '.join(ORDER_BY)} (got {order_by!r})", path=source, column="order.by")
    clock_direction = order.get("clock", "down")
    if clock_direction not in ("down", "up"):
        raise InputError(f"must be 'down' or 'up' (got {clock_direction!r})", path=source, column="order.clock")
    period_seconds = _positive(order.get("period_seconds"), source, "order.period_seconds")
    overtime_seconds = _positive(order.get("overtime_seconds"), source, "order.overtime_seconds")
    regular_periods = order.get("regular_periods", 4)
    if isinstance(regular_periods, bool) or not isinstance(regular_periods, int) or regular_periods < 1:
        raise InputError(f"expected a whole number >= 1 (got {regular_periods!r})", path=source, column="order.regular_periods")

    types_table = reader.table("attempt_types")
    attempt_types: dict[str, str] = {}
    default_type = FIELD_GOAL
    for canonical, values in types_table.items():
        if canonical == "default":
            default_type = str(values)
            continue
        for word in _words(values, source, f"attempt_types.{canonical}"):
            attempt_types[word] = canonical

    event_kind_column = None
    event_kinds: dict[str, EventKind] = {}
    events = reader.table("events")
    if layout == "events":
        _check_keys(events, ("kind", "attempts"), source, "events")
        event_kind_column = events.get("kind")
        if not isinstance(event_kind_column, str) or not event_kind_column:
            raise InputError("an event log profile must name the column holding each event's kind", path=source, column="events.kind")
        kinds = events.get("attempts")
        if not isinstance(kinds, dict) or not kinds:
            raise InputError("an event log profile must list which event kinds are attempts", path=source, column="events.attempts")
        for kind, spec in kinds.items():
            key = f"events.attempts.{kind}"
            if isinstance(spec, str):
                spec = {"type": spec}
            if not isinstance(spec, dict):
                raise InputError("expected a table like { type = \"field_goal\", made = true }", path=source, column=key)
            _check_keys(spec, ("type", "made", "points"), source, key)
            attempt_type = spec.get("type", FIELD_GOAL)
            made = spec.get("made")
            if made is not None and not isinstance(made, bool):
                raise InputError(f"expected true or false (got {made!r})", path=source, column=f"{key}.made")
            points = spec.get("points")
            if points is not None and (not isinstance(points, int) or points < 0):
                raise InputError(f"expected a whole number of points (got {points!r})", path=source, column=f"{key}.points")
            event_kinds[str(kind).strip().lower()] = EventKind(str(attempt_type), made, points)
        if "made" not in column_map and any(k.made is None for k in event_kinds.values()):
            raise InputError(
                "some attempt kinds take their outcome from a column, but [columns] names no 'made' column",
                path=source,
                column="columns.made",
            )
    elif events:
        raise InputError("[events] is only for layout = \"events\"", path=source, column="events")

    drills = reader.table("drills")
    made_symbols, missed_symbols, separators = "X1H", "O0M", " ,;|/-_."
    if layout == "drills":
        _check_keys(drills, ("made", "missed", "separators", "attempt_type"), source, "drills")
        made_symbols = str(drills.get("made", made_symbols))
        missed_symbols = str(drills.get("missed", missed_symbols))
        separators = str(drills.get("separators", separators))
        if "attempt_type" in drills:
            default_type = str(drills["attempt_type"])
        clash = set(made_symbols.upper()) & set(missed_symbols.upper()) or (set(made_symbols + missed_symbols) & set(separators))
        if clash:
            raise InputError(f"symbol {sorted(clash)[0]!r} has two meanings", path=source, column="drills")
        for needed in ("player", "shots"):
            if needed not in column_map:
                raise InputError(f"a drill profile must name the {needed!r} column", path=source, column=f"columns.{needed}")
    elif drills:
        raise InputError("[drills] is only for layout = \"drills\"", path=source, column="drills")

    sessions = reader.table("sessions")
    _check_keys(sessions, ("split", "gap_seconds"), source, "sessions")
    split = sessions.get("split", "game")
    if split not in SESSION_SPLITS:
        raise InputError(f"must be one of {', '.join(SESSION_SPLITS)} (got {split!r})", path=source, column="sessions.split")
    gap = _positive(sessions.get("gap_seconds"), source, "sessions.gap_seconds")
    if split == "gap" and gap is None:
        raise InputError("split = \"gap\" needs gap_seconds", path=source, column="sessions.gap_seconds")

    file_table = reader.table("file")
    _check_keys(file_table, ("delimiter", "sheet"), source, "file")
    delimiter, sheet = file_table.get("delimiter"), file_table.get("sheet")
    if delimiter is not None and (not isinstance(delimiter, str) or len(delimiter) != 1):
        raise InputError(f"expected one character, like \",\" or \";\" (got {delimiter!r})", path=source, column="file.delimiter")
    if sheet is not None and (not isinstance(sheet, str) or not sheet.strip()):
        raise InputError(f"expected a sheet name (text), got {sheet!r}", path=source, column="file.sheet")
    reader.finish()
    if layout in ("attempts", "events"):
        for needed in ("player", "game"):
            if needed not in column_map:
                raise InputError(f"the profile must name the {needed!r} column", path=source, column=f"columns.{needed}")
        if layout == "attempts" and "made" not in column_map:
            raise InputError("the profile must name the 'made' column", path=source, column="columns.made")
    return Profile(
        name=name,
        layout=layout,
        columns=column_map,
        made_words=made_words,
        missed_words=missed_words,
        home_words=home_words,
        away_words=away_words,
        order_by=order_by,
        clock_direction=clock_direction,
        period_seconds=period_seconds,
        overtime_seconds=overtime_seconds,
        regular_periods=regular_periods,
        attempt_types=attempt_types,
        default_attempt_type=default_type,
        event_kind_column=event_kind_column,
        event_kinds=event_kinds,
        made_symbols=made_symbols,
        missed_symbols=missed_symbols,
        separators=separators,
        session_split=split,
        session_gap_seconds=gap,
        delimiter=delimiter,
        sheet=sheet,
        fixed=fixed,
        source=source,
        text=text,
    )


# ------------------------------------------------------------------ helpers

_TOP_KEYS = ("name", "layout", "columns", "outcomes", "home", "order", "attempt_types", "events", "drills", "sessions", "file", "fixed", "description")


class _Keys:
    def __init__(self, data: dict[str, Any], source: str) -> None:
        self.data = data
        self.source = source
        for key in data:
            if key not in _TOP_KEYS:
                self.unknown(key, key, _TOP_KEYS)

    def text(self, key: str, default: str) -> str:
        value = self.data.get(key, default)
        if not isinstance(value, str):
            raise InputError(f"expected text (got {value!r})", path=self.source, column=key)
        return value

    def choice(self, key: str, options, default: str) -> str:
        value = self.data.get(key, default)
        if value not in options:
            raise InputError(f"must be one of {', '.join(options)} (got {value!r})", path=self.source, column=key)
        return value

    def table(self, key: str) -> dict:
        value = self.data.get(key, {})
        if not isinstance(value, dict):
            raise InputError(f"expected a table [{key}]", path=self.source, column=key)
        return value

    def unknown(self, where: str, key: str, options) -> None:
        close = difflib.get_close_matches(key, options, n=1)
        hint = f"; did you mean {close[0]!r}?" if close else f" (expected one of {', '.join(options)})"
        raise InputError(f"unknown key {key!r}{hint}", path=self.source, column=where)

    def finish(self) -> None:
        return None


def _check_keys(table: dict, allowed, source: str, where: str) -> None:
    for key in table:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), allowed, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f" (expected one of {', '.join(allowed)})"
            raise InputError(f"unknown key {key!r}{hint}", path=source, column=f"{where}.{key}")


def _words(value, source: str, where: str) -> tuple[str, ...]:
    if value is None:
        return ()
    if isinstance(value, (str, int, float, bool)):
        value = [value]
    if not isinstance(value, list):
        raise InputError(f"expected a list of words (got {value!r})", path=source, column=where)
    words = []
    for item in value:
        if isinstance(item, bool):
            words.append("true" if item else "false")
        elif isinstance(item, float) and item.is_integer():
            words.append(str(int(item)))
        else:
            words.append(str(item).strip().lower())
    return tuple(words)


def _positive(value, source: str, where: str) -> float | None:
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not value > 0:
        raise InputError(f"expected a positive number of seconds (got {value!r})", path=source, column=where)
    return float(value)


# Attempt types named by the basketball adapters.
BASKETBALL_TYPES = (FIELD_GOAL, FREE_THROW)
