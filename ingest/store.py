"""The store: one DuckDB file with attempts, sources, rejects and saved results.

Tables
------
``attempts``  the canonical record (:data:`~streakwise.ingest.record.COLUMNS`)
              plus ``source_id``, one row per attempt.
``sources``   one row per ingested file: where it came from, its content
              hash, the layout and profile used, and its row counts.
``rejects``   the rows of a file that could not be used, with the reason.
``meta``      ``key``/``value`` pairs: ``schema_version``, the
              ``data_version`` counter and the next source id.
``results``   saved results (league scans keyed by data version, settings
              and seed) so that readers need not run them again.

DuckDB lets one process hold the file: the process that opens the store owns
it, and every other process, readers too, gets :class:`StoreInUseError`.
Every ingest runs in one transaction, so a file is stored whole or not at all.
"""

from __future__ import annotations

import hashlib
import importlib.metadata
import json
import os
import pathlib
import re
import threading
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

import duckdb
import numpy as np
import pandas as pd
import pyarrow as pa

from .errors import InputError, StoreInUseError
from .record import DTYPES, validate_record

__all__ = [
    "DEFAULT_STORE_NAME",
    "IngestSummary",
    "LAYOUTS",
    "SCHEMA_VERSION",
    "STORE_ENV_VAR",
    "SourceInfo",
    "Store",
    "TEAM_SEPARATOR",
    "resolve_store_path",
]

#: File name of the store when neither ``--store`` nor the environment names one.
DEFAULT_STORE_NAME = "streakwise.duckdb"

#: Environment variable that names the store.
STORE_ENV_VAR = "STREAKWISE_STORE"

#: Version of the table layout written by this module.
SCHEMA_VERSION = 1

#: Source layouts a file can be read with.
LAYOUTS: tuple[str, ...] = ("attempts", "events", "drills", "canonical")

_TABLES: tuple[str, ...] = ("attempts", "sources", "rejects", "results")

_SQL_TYPES: dict[str, str] = {
    "string": "VARCHAR",
    "datetime64[us]": "TIMESTAMP",
    "Int64": "BIGINT",
    "int64": "BIGINT",
    "bool": "BOOLEAN",
    "boolean": "BOOLEAN",
    "float64": "DOUBLE",
}

_SOURCE_DTYPES: dict[str, str] = {
    "source_id": "int64",
    "path": "string",
    "name": "string",
    "content_sha256": "string",
    "layout": "string",
    "profile": "string",
    "profile_sha256": "string",
    "rows_read": "int64",
    "rows_stored": "int64",
    "attempts": "int64",
    "skipped": "int64",
    "rejected": "int64",
    "ingested_at": "datetime64[us]",
    "streakwise_version": "string",
}

_REJECT_DTYPES: dict[str, str] = {
    "source_id": "int64",
    "source": "string",
    "row": "Int64",
    "column": "string",
    "message": "string",
}

_PLAYER_DTYPES: dict[str, str] = {
    "player": "string",
    "player_name": "string",
    "team": "string",
    "attempts": "int64",
    "makes": "int64",
    "sessions": "int64",
    "make_rate": "float64",
}

_EXPORT_ORDER: dict[str, str] = {
    "attempts": '"player", "session", "seq"',
    "sources": '"source_id"',
    "rejects": '"source_id", "row" NULLS FIRST, "column"',
    "results": '"key"',
}

#: Joins the teams of a player who played for several.
TEAM_SEPARATOR = " / "

# A text cell that a spreadsheet would run as a formula, and a plain number
# (which starts with + or - but is safe and must stay readable as a number).
_FORMULA_START = r"^[=+\-@\t\r]"
_PLAIN_NUMBER = r"^[+-]?([0-9]+([.][0-9]*)?|[.][0-9]+)([eE][+-]?[0-9]+)?$"

_LOCK_PATTERN = re.compile(r"could not set lock|conflicting lock", re.IGNORECASE)
_PID_PATTERN = re.compile(r"\(PID (\d+)\)")


def _quote(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def _schema_statements() -> list[str]:
    attempt_columns = ",\n    ".join(f"{_quote(name)} {_SQL_TYPES[dtype]}" for name, dtype in DTYPES.items())
    return [
        "CREATE TABLE IF NOT EXISTS meta (key VARCHAR PRIMARY KEY, value VARCHAR NOT NULL)",
        """CREATE TABLE IF NOT EXISTS sources (
    source_id BIGINT PRIMARY KEY,
    path VARCHAR NOT NULL,
    name VARCHAR NOT NULL,
    content_sha256 VARCHAR NOT NULL,
    layout VARCHAR NOT NULL,
    profile VARCHAR NOT NULL,
    profile_sha256 VARCHAR NOT NULL,
    rows_read BIGINT NOT NULL,
    rows_stored BIGINT NOT NULL,
    attempts BIGINT NOT NULL,
    skipped BIGINT NOT NULL,
    rejected BIGINT NOT NULL,
    ingested_at TIMESTAMP NOT NULL,
    streakwise_version VARCHAR NOT NULL
)""",
        f"CREATE TABLE IF NOT EXISTS attempts (\n    {attempt_columns},\n    source_id BIGINT NOT NULL\n)",
        """CREATE TABLE IF NOT EXISTS rejects (
    source_id BIGINT NOT NULL,
    source VARCHAR NOT NULL,
    "row" BIGINT,
    "column" VARCHAR,
    message VARCHAR NOT NULL
)""",
        """CREATE TABLE IF NOT EXISTS results (
    key VARCHAR PRIMARY KEY,
    kind VARCHAR NOT NULL,
    created_at TIMESTAMP NOT NULL,
    settings VARCHAR NOT NULL,
    payload VARCHAR NOT NULL
)""",
    ]


def _streakwise_version() -> str:
    try:
        return importlib.metadata.version("streakwise")
    except importlib.metadata.PackageNotFoundError:
        return "unknown"


def resolve_store_path(option: str | os.PathLike | None) -> pathlib.Path:
    """Return the path of the store to use.

    Parameters
    ----------
    option : str, path-like or None
        The ``--store`` value given on the command line, if any.

    Returns
    -------
    pathlib.Path
        ``option`` when given; else the environment variable
        ``STREAKWISE_STORE`` when set and not empty; else
        ``./streakwise.duckdb``. A leading ``~`` is expanded.

    Examples
    --------
    >>> resolve_store_path("league.duckdb").name
    'league.duckdb'
    """
    if option is not None and str(option) != "":
        return pathlib.Path(option).expanduser()
    from_env = os.environ.get(STORE_ENV_VAR, "")
    if from_env:
        return pathlib.Path(from_env).expanduser()
    return pathlib.Path(DEFAULT_STORE_NAME)


@dataclass(frozen=True)
class SourceInfo:
    """Describes one ingested file.

    Attributes
    ----------
    path : str
        The path as the user gave it.
    name : str
        The file name (basename); the ``source`` column of its attempts.
    content_sha256 : str
        SHA-256 of the file's bytes; the same content is stored once.
    layout : str
        ``"attempts"``, ``"events"``, ``"drills"`` or ``"canonical"``.
    profile : str
        Name of the mapping profile used (``""`` for none).
    profile_sha256 : str
        SHA-256 of the profile text (``""`` for none).
    rows_read : int
        Record rows read from the file.
    rows_stored : int
        Rows whose attempts are stored (one row is one attempt, except in a
        drill sheet, where a row holds a round of attempts).
    skipped : int
        Rows that are not attempts and were passed over on purpose (a
        rebound in an event log, say).
    """

    path: str
    name: str
    content_sha256: str
    layout: str
    profile: str
    profile_sha256: str
    rows_read: int
    rows_stored: int
    skipped: int


@dataclass(frozen=True)
class IngestSummary:
    """What one call of :meth:`Store.add_source` did.

    Attributes
    ----------
    source_id : int or None
        Id of the new source; ``None`` when nothing was added.
    path : str
        The path of the file as the user gave it.
    rows_read, rows_stored, attempts, skipped, rejected : int
        Counts. When ``status`` is not ``"already_stored"``,
        ``rows_read == rows_stored + skipped + rejected``; when it is, the
        counts are those stored for the earlier copy of the file.
    status : str
        ``"stored"``, ``"already_stored"`` or ``"replaced"``.
    replaced_source_ids : tuple of int
        Ids of the earlier sources removed by ``replace=True``.
    """

    source_id: int | None
    path: str
    rows_read: int
    rows_stored: int
    attempts: int
    skipped: int
    rejected: int
    status: str
    replaced_source_ids: tuple[int, ...]


def _filter_values(name: str, value: Any) -> tuple[str, ...] | None:
    """Turn a filter argument (None, a string or strings) into a tuple."""
    if value is None:
        return None
    if isinstance(value, str):
        return (value,)
    if isinstance(value, Iterable):
        values = tuple(value)
        for item in values:
            if not isinstance(item, str):
                raise TypeError(f"`{name}` must be a string or a sequence of strings (got an item {item!r})")
        return values
    raise TypeError(f"`{name}` must be a string or a sequence of strings (got {value!r})")


def _where(filters: dict[str, tuple[str, ...] | None]) -> tuple[str, list[str]]:
    """Build a WHERE clause (with parameters) from column -> allowed values."""
    clauses: list[str] = []
    params: list[str] = []
    for column, values in filters.items():
        if values is None:
            continue
        if not values:
            clauses.append("FALSE")
            continue
        clauses.append(f"{_quote(column)} IN ({', '.join('?' for _ in values)})")
        params.extend(values)
    return (" WHERE " + " AND ".join(clauses)) if clauses else "", params


def _arrow_to_frame(table: pa.Table, dtypes: dict[str, str]) -> pd.DataFrame:
    """Convert a query result to pandas with exactly ``dtypes``."""
    mapping = {
        pa.string(): pd.StringDtype("pyarrow"),
        pa.large_string(): pd.StringDtype("pyarrow"),
        pa.int64(): pd.Int64Dtype(),
        pa.bool_(): pd.BooleanDtype(),
    }
    frame = table.to_pandas(types_mapper=mapping.get)
    frame = frame.astype({name: dtype for name, dtype in dtypes.items() if name in frame.columns})
    frame.index = pd.RangeIndex(len(frame))
    return frame


def _store_in_use(path: pathlib.Path, exc: Exception) -> StoreInUseError:
    pid = _PID_PATTERN.search(str(exc))
    return StoreInUseError(path, f"held by PID {pid.group(1)}" if pid else "")


class Store:
    """The DuckDB store of attempts, sources, rejects and saved results.

    Opening a store that does not exist creates the file and its tables.
    Use it as a context manager, or call :meth:`close`.

    Parameters
    ----------
    path : str or path-like
        The store file (see :func:`resolve_store_path`).
    read_only : bool, optional
        Open without the right to write; the file must exist.

    Raises
    ------
    StoreInUseError
        Another process holds the file.
    InputError
        The file is missing (read-only), is not a streakwise store, or
        cannot be opened.

    Notes
    -----
    One process at a time can open the file. Within that process the store
    may be shared between threads: every call holds an internal lock.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = tempfile.mkdtemp()
    >>> with Store(pathlib.Path(folder) / "demo.duckdb") as store:
    ...     store.table_names()
    ('attempts', 'sources', 'rejects', 'results')
    """

    def __init__(self, path: str | os.PathLike, *, read_only: bool = False) -> None:
        self.path = pathlib.Path(path)
        self.read_only = bool(read_only)
        self._lock = threading.RLock()
        self._con: duckdb.DuckDBPyConnection | None = None
        self._con = self._open()
        try:
            self._prepare_schema()
        except BaseException:
            self._con.close()
            self._con = None
            raise

    # -- opening ---------------------------------------------------------------

    def _open(self) -> duckdb.DuckDBPyConnection:
        path = self.path
        exists = path.exists()
        if self.read_only and not exists:
            raise InputError(
                "store not found (ingest a file first, or name an existing store with --store "
                f"or {STORE_ENV_VAR})",
                path=str(path),
            )
        if not exists and not path.parent.is_dir():
            raise InputError(f"cannot create the store: folder {str(path.parent)!r} does not exist", path=str(path))
        if exists and path.is_dir():
            raise InputError("is a folder, not a store file", path=str(path))
        try:
            return duckdb.connect(str(path), read_only=self.read_only)
        except duckdb.IOException as exc:
            if _LOCK_PATTERN.search(str(exc)):
                raise _store_in_use(path, exc) from None
            raise InputError(f"cannot open the store: {exc}", path=str(path)) from None
        except duckdb.ConnectionException as exc:
            # The same process already holds the file in the other mode.
            raise StoreInUseError(path, f"already open in this process: {exc}") from None
        except duckdb.Error as exc:
            raise InputError(f"cannot open the store: {exc}", path=str(path)) from None

    def _prepare_schema(self) -> None:
        tables = {row[0] for row in self._all("SELECT table_name FROM duckdb_tables() WHERE schema_name = 'main'")}
        if "meta" in tables:
            row = self._one("SELECT value FROM meta WHERE key = 'schema_version'")
            version = int(row[0]) if row is not None and str(row[0]).isdigit() else None
            if version is None:
                raise InputError("not a streakwise store (its meta table has no schema version)", path=str(self.path))
            if version > SCHEMA_VERSION:
                raise InputError(
                    f"store has schema version {version}, but this streakwise reads up to version "
                    f"{SCHEMA_VERSION}; upgrade streakwise",
                    path=str(self.path),
                )
            if not self.read_only:
                self._create_schema()
            missing = set(_TABLES) - tables
            if self.read_only and missing:
                raise InputError(f"store is missing tables: {', '.join(sorted(missing))}", path=str(self.path))
            return
        if tables:
            raise InputError(
                f"not a streakwise store (it holds other tables: {', '.join(sorted(tables))})", path=str(self.path)
            )
        if self.read_only:
            raise InputError("not a streakwise store (an empty DuckDB file)", path=str(self.path))
        self._create_schema()

    def _create_schema(self) -> None:
        self._all("BEGIN TRANSACTION")
        try:
            for statement in _schema_statements():
                self._all(statement)
            for key, value in (("schema_version", str(SCHEMA_VERSION)), ("data_version", "0"), ("next_source_id", "1")):
                self._all("INSERT INTO meta VALUES (?, ?) ON CONFLICT DO NOTHING", [key, value])
            self._all("COMMIT")
        except BaseException:
            self._rollback()
            raise

    @property
    def _connection(self) -> duckdb.DuckDBPyConnection:
        if self._con is None:
            raise RuntimeError(f"{self.path}: the store is closed")
        return self._con

    def _all(self, sql: str, params: list | None = None) -> list[tuple]:
        """Run one statement to its end and return every row it gave.

        DuckDB refuses new work on a connection while a result is only
        partly read, so every statement is read to its end here.
        """
        return self._connection.execute(sql, params).fetchall()

    def _rollback(self) -> None:
        """Undo the open transaction; the error that caused it is the one to report."""
        try:
            self._all("ROLLBACK")
        except duckdb.Error:
            pass

    def _one(self, sql: str, params: list | None = None) -> tuple | None:
        """Run one statement and return its first row (or ``None``)."""
        rows = self._all(sql, params)
        return rows[0] if rows else None

    # -- lifetime --------------------------------------------------------------

    def close(self) -> None:
        """Close the store (releases the file for other processes)."""
        with self._lock:
            if self._con is not None:
                self._con.close()
                self._con = None

    @property
    def closed(self) -> bool:
        """Whether :meth:`close` has been called."""
        return self._con is None

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc_info: object) -> None:
        self.close()

    def __repr__(self) -> str:
        state = "closed" if self._con is None else ("read-only" if self.read_only else "open")
        return f"Store({str(self.path)!r}, {state})"

    # -- writing ---------------------------------------------------------------

    def find_source(self, content_sha256: str) -> dict | None:
        """Return the stored source with this content hash, or ``None``.

        Parameters
        ----------
        content_sha256 : str
            SHA-256 of a file's bytes.

        Returns
        -------
        dict or None
            The ``sources`` row (column name -> value), the earliest one if
            several hold that content.
        """
        with self._lock:
            cursor = self._connection.execute(
                "SELECT * FROM sources WHERE content_sha256 = ? ORDER BY source_id LIMIT 1", [content_sha256]
            )
            rows = cursor.fetchall()
            if not rows:
                return None
            return dict(zip([d[0] for d in cursor.description], rows[0], strict=True))

    def add_source(
        self,
        info: SourceInfo,
        attempts: pd.DataFrame,
        rejects: pd.DataFrame,
        *,
        replace: bool = False,
    ) -> IngestSummary:
        """Store one file's attempts and rejects, whole or not at all.

        Parameters
        ----------
        info : SourceInfo
            What the file is.
        attempts : pandas.DataFrame
            Its attempts in the canonical record (checked with
            :func:`~streakwise.ingest.record.validate_record`).
        rejects : pandas.DataFrame
            Its rejected rows: columns ``row`` (may be NA for a problem with
            the whole file), ``column`` (may be NA) and ``message``.
        replace : bool, optional
            Remove every earlier source with the same content or the same
            file name (with their attempts and rejects) before storing.

        Returns
        -------
        IngestSummary
            ``status`` is ``"already_stored"`` (nothing written) when the
            same content is stored and ``replace`` is false, ``"replaced"``
            when earlier sources were removed, else ``"stored"``.

        Raises
        ------
        InputError
            The attempts break the canonical record, or a (player, session)
            of the file is already stored from another file.
        ValueError
            ``info`` is malformed, or its counts do not add up.

        Notes
        -----
        ``rejected`` counts the distinct rows named in ``rejects``; it must
        hold that ``info.rows_read == len(attempts) + info.skipped +
        rejected``. Everything (removing replaced sources, the source row,
        attempts, rejects and the data version) happens in one transaction
        that is rolled back on any error.
        """
        with self._lock:
            attempts, rejects, rejected = self._add_source_iv(info, attempts, rejects)
            con = self._connection
            if not replace:
                earlier = self.find_source(info.content_sha256)
                if earlier is not None:
                    return IngestSummary(
                        source_id=None,
                        path=info.path,
                        rows_read=int(earlier["rows_read"]),
                        rows_stored=int(earlier["rows_stored"]),
                        attempts=int(earlier["attempts"]),
                        skipped=int(earlier["skipped"]),
                        rejected=int(earlier["rejected"]),
                        status="already_stored",
                        replaced_source_ids=(),
                    )
            self._all("BEGIN TRANSACTION")
            try:
                replaced = self._delete_replaced(info) if replace else ()
                source_id = self._next_source_id()
                new_attempts = self._register_attempts(attempts)
                try:
                    self._check_sessions_free(info, new_attempts)
                    self._insert_source_row(source_id, info, len(attempts), rejected)
                    self._insert_attempts(source_id)
                finally:
                    con.unregister("new_attempts")
                self._insert_rejects(source_id, info, rejects)
                self._bump_data_version()
                self._all("COMMIT")
            except BaseException:
                self._rollback()
                raise
            return IngestSummary(
                source_id=source_id,
                path=info.path,
                rows_read=int(info.rows_read),
                rows_stored=int(info.rows_stored),
                attempts=len(attempts),
                skipped=int(info.skipped),
                rejected=rejected,
                status="replaced" if replaced else "stored",
                replaced_source_ids=replaced,
            )

    def _add_source_iv(
        self, info: SourceInfo, attempts: pd.DataFrame, rejects: pd.DataFrame | None
    ) -> tuple[pd.DataFrame, pd.DataFrame, int]:
        if self.read_only:
            raise InputError("the store was opened read-only; cannot add a source", path=str(self.path))
        if not isinstance(info, SourceInfo):
            raise TypeError(f"`info` must be a SourceInfo (got {type(info).__name__})")
        if info.layout not in LAYOUTS:
            raise ValueError(f"`info.layout` must be one of {', '.join(map(repr, LAYOUTS))} (got {info.layout!r})")
        if not info.content_sha256:
            raise ValueError("`info.content_sha256` must not be empty")
        if not info.name:
            raise ValueError("`info.name` must not be empty")
        for field in ("rows_read", "rows_stored", "skipped"):
            value = getattr(info, field)
            if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 0:
                raise ValueError(f"`info.{field}` must be a non-negative integer (got {value!r})")
        attempts = validate_record(attempts, path=info.path)
        if rejects is None or (len(rejects) == 0 and not {"row", "column", "message"} <= set(rejects.columns)):
            rejects = pd.DataFrame({"row": [], "column": [], "message": []})
        missing = [c for c in ("row", "column", "message") if c not in rejects.columns]
        if missing:
            raise ValueError(f"`rejects` must have columns row, column, message (missing {', '.join(missing)})")
        try:
            rejects = pd.DataFrame(
                {
                    "row": rejects["row"].astype("Int64"),
                    "column": rejects["column"].astype("string"),
                    "message": rejects["message"].astype("string"),
                }
            ).reset_index(drop=True)
        except (TypeError, ValueError) as exc:
            raise ValueError(f"`rejects` has a value of the wrong type: {exc}") from exc
        if rejects["message"].isna().any():
            raise ValueError("`rejects` has a missing message")
        rejected = int(rejects["row"].dropna().nunique())
        total = int(info.rows_stored) + int(info.skipped) + rejected
        if int(info.rows_read) != total:
            raise ValueError(
                f"{info.path}: counts do not add up: rows_read is {info.rows_read}, but rows stored "
                f"({info.rows_stored}) + skipped ({info.skipped}) + rejected rows ({rejected}) = {total}"
            )
        if info.layout != "drills" and int(info.rows_stored) != len(attempts):
            raise ValueError(f"{info.path}: rows_stored ({info.rows_stored}) must equal the attempts ({len(attempts)}) outside drill sheets")
        return attempts, rejects, rejected

    def _delete_replaced(self, info: SourceInfo) -> tuple[int, ...]:
        rows = self._all(
            "SELECT source_id FROM sources WHERE content_sha256 = ? OR name = ? ORDER BY source_id",
            [info.content_sha256, info.name],
        )
        replaced = tuple(int(r[0]) for r in rows)
        if replaced:
            marks = ", ".join("?" for _ in replaced)
            for table in ("attempts", "rejects", "sources"):
                self._all(f"DELETE FROM {table} WHERE source_id IN ({marks})", list(replaced))
        return replaced

    def _next_source_id(self) -> int:
        value = int(self._one("SELECT value FROM meta WHERE key = 'next_source_id'")[0])
        self._all("UPDATE meta SET value = ? WHERE key = 'next_source_id'", [str(value + 1)])
        return value

    def _register_attempts(self, attempts: pd.DataFrame) -> pa.Table:
        table = pa.Table.from_pandas(attempts, preserve_index=False)
        table = table.append_column("_position", pa.array(np.arange(len(attempts), dtype=np.int64)))
        self._connection.register("new_attempts", table)
        return table

    def _check_sessions_free(self, info: SourceInfo, new_attempts: pa.Table) -> None:
        if new_attempts.num_rows == 0:
            return
        clash = self._one(
            """
            SELECT n.player, n.session, n.source_row, s.source_id, s.name
            FROM new_attempts AS n
            JOIN (SELECT DISTINCT player, session, source_id FROM attempts) AS e
              ON e.player = n.player AND e.session = n.session
            JOIN sources AS s ON s.source_id = e.source_id
            ORDER BY n._position, s.source_id
            LIMIT 1
            """
        )
        if clash is not None:
            player, session, row, source_id, name = clash
            raise InputError(
                f"session {session!r} of player {player!r} is already stored from {name!r} "
                f"(source {source_id}); use --replace to replace a file you ingested before",
                path=info.path,
                row=int(row),
                column="session",
            )

    def _insert_source_row(self, source_id: int, info: SourceInfo, attempts: int, rejected: int) -> None:
        self._all(
            "INSERT INTO sources VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            [
                source_id,
                str(info.path),
                str(info.name),
                str(info.content_sha256),
                str(info.layout),
                str(info.profile),
                str(info.profile_sha256),
                int(info.rows_read),
                int(info.rows_stored),
                int(attempts),
                int(info.skipped),
                int(rejected),
                datetime.now(UTC).replace(tzinfo=None),
                _streakwise_version(),
            ],
        )

    def _insert_attempts(self, source_id: int) -> None:
        columns = ", ".join(_quote(name) for name in DTYPES)
        self._all(
            f"INSERT INTO attempts ({columns}, source_id) SELECT {columns}, ? FROM new_attempts", [source_id]
        )

    def _insert_rejects(self, source_id: int, info: SourceInfo, rejects: pd.DataFrame) -> None:
        if len(rejects) == 0:
            return
        con = self._connection
        con.register("new_rejects", pa.Table.from_pandas(rejects, preserve_index=False))
        try:
            self._all(
                'INSERT INTO rejects (source_id, source, "row", "column", message) '
                'SELECT ?, ?, "row", "column", message FROM new_rejects',
                [source_id, str(info.name)],
            )
        finally:
            con.unregister("new_rejects")

    def _bump_data_version(self) -> None:
        self._all(
            "UPDATE meta SET value = CAST(CAST(value AS BIGINT) + 1 AS VARCHAR) WHERE key = 'data_version'"
        )

    # -- reading ---------------------------------------------------------------

    def _query_frame(self, sql: str, params: list | None, dtypes: dict[str, str]) -> pd.DataFrame:
        with self._lock:
            table = self._connection.sql(sql, params=params or None).to_arrow_table()
        return _arrow_to_frame(table, dtypes)

    def attempts(self, *, players=None, seasons=None, teams=None, attempt_types=None) -> pd.DataFrame:
        """Return stored attempts in the canonical record.

        Parameters
        ----------
        players, seasons, teams, attempt_types : str or sequence of str, optional
            Keep only attempts with these values (all when ``None``).

        Returns
        -------
        pandas.DataFrame
            The canonical columns and dtypes, ordered by player, session and
            seq, with a fresh ``RangeIndex``.
        """
        where, params = _where(
            {
                "player": _filter_values("players", players),
                "season": _filter_values("seasons", seasons),
                "team": _filter_values("teams", teams),
                "attempt_type": _filter_values("attempt_types", attempt_types),
            }
        )
        columns = ", ".join(_quote(name) for name in DTYPES)
        sql = f'SELECT {columns} FROM attempts{where} ORDER BY "player", "session", "seq"'
        return self._query_frame(sql, params, DTYPES)

    def players(self, *, season=None, team=None, attempt_type=None) -> pd.DataFrame:
        """Return one row per player with their attempt counts.

        Parameters
        ----------
        season, team, attempt_type : str or sequence of str, optional
            Count only attempts with these values (all when ``None``).

        Returns
        -------
        pandas.DataFrame
            Columns ``player``, ``player_name`` (the most common name given),
            ``team`` (the player's teams joined with ``" / "``, most attempts
            first; one team for most players), ``attempts``, ``makes``,
            ``sessions`` and ``make_rate``; sorted by player.
        """
        where, params = _where(
            {
                "season": _filter_values("season", season),
                "team": _filter_values("team", team),
                "attempt_type": _filter_values("attempt_type", attempt_type),
            }
        )
        sql = f"""
            WITH chosen AS (SELECT player, player_name, team, session, made FROM attempts{where}),
            totals AS (
                SELECT player, count(*) AS attempts, sum(CAST(made AS BIGINT)) AS makes,
                       count(DISTINCT session) AS sessions
                FROM chosen GROUP BY player
            ),
            names AS (
                SELECT player, player_name FROM chosen WHERE player_name IS NOT NULL
                GROUP BY player, player_name
                QUALIFY row_number() OVER (PARTITION BY player ORDER BY count(*) DESC, player_name) = 1
            ),
            teams AS (
                SELECT player, string_agg(team, ? ORDER BY n DESC, team) AS team
                FROM (SELECT player, team, count(*) AS n FROM chosen WHERE team IS NOT NULL GROUP BY player, team)
                GROUP BY player
            )
            SELECT t.player, n.player_name, m.team,
                   CAST(t.attempts AS BIGINT) AS attempts, CAST(t.makes AS BIGINT) AS makes,
                   CAST(t.sessions AS BIGINT) AS sessions, t.makes / t.attempts AS make_rate
            FROM totals AS t
            LEFT JOIN names AS n ON n.player = t.player
            LEFT JOIN teams AS m ON m.player = t.player
            ORDER BY t.player
        """
        return self._query_frame(sql, [*params, TEAM_SEPARATOR], _PLAYER_DTYPES)

    def sources(self) -> pd.DataFrame:
        """Return the ``sources`` table ordered by ``source_id``.

        Returns
        -------
        pandas.DataFrame
            ``source_id``, ``path``, ``name``, ``content_sha256``, ``layout``,
            ``profile``, ``profile_sha256``, ``rows_read``, ``attempts``,
            ``skipped``, ``rejected``, ``ingested_at`` (UTC) and
            ``streakwise_version``.
        """
        columns = ", ".join(_quote(name) for name in _SOURCE_DTYPES)
        return self._query_frame(f"SELECT {columns} FROM sources ORDER BY source_id", None, _SOURCE_DTYPES)

    def rejects(self) -> pd.DataFrame:
        """Return the ``rejects`` table: ``source_id``, ``source``, ``row``, ``column``, ``message``.

        Returns
        -------
        pandas.DataFrame
            Ordered by source and row (``row`` and ``column`` may be NA).
        """
        columns = ", ".join(_quote(name) for name in _REJECT_DTYPES)
        sql = f"SELECT {columns} FROM rejects ORDER BY {_EXPORT_ORDER['rejects']}"
        return self._query_frame(sql, None, _REJECT_DTYPES)

    def data_version(self) -> str:
        """Return a label that changes whenever the stored attempts change.

        Returns
        -------
        str
            ``"<counter>-<hash>"``: the count of ingests that wrote to the
            store, and a short hash of the stored source ids and content
            hashes.
        """
        with self._lock:
            counter = self._one("SELECT value FROM meta WHERE key = 'data_version'")[0]
            rows = self._all("SELECT source_id, content_sha256 FROM sources ORDER BY source_id")
        digest = hashlib.sha256("".join(f"{sid}:{sha}\n" for sid, sha in rows).encode()).hexdigest()
        return f"{counter}-{digest[:16]}"

    def save_result(self, kind: str, settings: dict, payload: dict) -> str:
        """Save a result keyed by its kind, the data version and ``settings``.

        ``settings`` must hold everything that decides the result (filters,
        permutations, seed, ...); the key is a hash of the kind, the current
        :meth:`data_version` and the settings, so a result saved for older
        data is never read back for newer data.  Saving the same key again
        replaces it.  Returns the key.
        """
        if self.read_only:
            raise InputError("the store was opened read-only; cannot save a result", path=str(self.path))
        key = self.result_key(kind, settings)
        settings_text = json.dumps(settings, sort_keys=True, default=str)
        payload_text = json.dumps(payload, sort_keys=False, default=str, allow_nan=False)
        with self._lock:
            self._all("BEGIN TRANSACTION")
            try:
                self._all("DELETE FROM results WHERE key = ?", [key])
                self._all(
                    "INSERT INTO results VALUES (?, ?, ?, ?, ?)",
                    [key, kind, datetime.now(UTC).replace(tzinfo=None), settings_text, payload_text],
                )
                self._all("COMMIT")
            except BaseException:
                self._rollback()
                raise
        return key

    def result_key(self, kind: str, settings: dict) -> str:
        """The key :meth:`save_result` would use for ``kind`` and ``settings`` now."""
        return _result_key(kind, self.data_version(), settings)

    def load_result(self, kind: str, settings: dict) -> dict | None:
        """The payload saved for ``kind`` and ``settings`` on the current data, or None."""
        key = self.result_key(kind, settings)
        with self._lock:
            row = self._one("SELECT payload FROM results WHERE key = ?", [key])
        return None if row is None else json.loads(row[0])

    def latest_result(self, kind: str, where: dict) -> dict | None:
        """The newest payload of ``kind`` saved on the current data whose settings hold all of ``where``.

        For results keyed by settings the reader cannot know in full (a
        difficulty scan's ``draws``, say): a saved result matches when its
        settings contain every item of ``where`` (compared as JSON) and its
        key is the one :meth:`result_key` gives its settings now, so results
        saved for older data are never returned. None when nothing matches.
        """
        wanted = json.loads(json.dumps(where, sort_keys=True, default=str))
        with self._lock:
            version = self.data_version()
            rows = self._all(
                "SELECT key, settings, payload FROM results WHERE kind = ? ORDER BY created_at DESC, key",
                [kind],
            )
            for key, settings_text, payload_text in rows:
                settings = json.loads(settings_text)
                if not isinstance(settings, dict):
                    continue
                if any(name not in settings or settings[name] != value for name, value in wanted.items()):
                    continue
                if _result_key(kind, version, settings) == key:
                    return json.loads(payload_text)
        return None

    def table_names(self) -> tuple[str, ...]:
        """Return the names of the tables :meth:`export` can write."""
        return _TABLES

    def export(self, table: str, output: str | os.PathLike) -> int:
        """Write one table to a CSV or Parquet file.

        Parameters
        ----------
        table : str
            One of :meth:`table_names`.
        output : str or path-like
            The file to write; ``.csv`` or ``.parquet`` chooses the format.
            An existing file is overwritten.

        Returns
        -------
        int
            The number of rows written.

        Raises
        ------
        InputError
            Unknown table, unknown extension, or a missing output folder.

        Notes
        -----
        In CSV, a text cell that a spreadsheet would run as a formula (it
        starts with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return)
        is written with a leading ``'``; a text cell that is a plain number
        (``-3``, ``+2.5``) is left as it is, and so are numeric, boolean and
        date columns. Parquet keeps the column types.
        """
        output = pathlib.Path(output)
        if table not in _TABLES:
            raise InputError(
                f"unknown table {table!r} (expected one of {', '.join(_TABLES)})", path=str(self.path)
            )
        suffix = output.suffix.lower()
        if suffix not in (".csv", ".parquet"):
            raise InputError(
                f"cannot tell the export format from the extension {output.suffix!r} (expected .csv or .parquet)",
                path=str(output),
            )
        if not output.parent.is_dir():
            raise InputError(f"folder {str(output.parent)!r} does not exist", path=str(output))
        target = "'" + str(output).replace("'", "''") + "'"
        with self._lock:
            described = self._all(f"DESCRIBE {table}")
            if suffix == ".csv":
                select = ", ".join(
                    _escaped(name) if column_type == "VARCHAR" else _quote(name)
                    for name, column_type, *_ in described
                )
                options = "FORMAT csv, HEADER true"
            else:
                select = ", ".join(_quote(name) for name, *_ in described)
                options = "FORMAT parquet"
            sql = f"COPY (SELECT {select} FROM {table} ORDER BY {_EXPORT_ORDER[table]}) TO {target} ({options})"
            try:
                row = self._one(sql)
            except duckdb.IOException as exc:
                raise InputError(f"cannot write the export: {exc}", path=str(output)) from None
        return int(row[0]) if row is not None else 0


def _result_key(kind: str, data_version: str, settings: dict) -> str:
    """Hash of a result's kind, data version and settings (the ``results`` key)."""
    text = json.dumps({"kind": kind, "data_version": data_version, "settings": settings}, sort_keys=True, default=str)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _escaped(name: str) -> str:
    """SQL for a text column with spreadsheet formulas made inert."""
    column = _quote(name)
    return (
        f"CASE WHEN regexp_matches({column}, '{_FORMULA_START}') "
        f"AND NOT regexp_matches({column}, '{_PLAIN_NUMBER}') "
        f"THEN '''' || {column} ELSE {column} END AS {column}"
    )
