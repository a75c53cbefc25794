"""Read shot logs into the canonical attempt record and keep them in the store.

The public surface of the ingest layer; the modules behind it are
``record`` (canonical columns), ``errors``, ``profiles`` (TOML mappings),
``readers`` (CSV, Parquet, JSON lines, Excel), ``attempts`` / ``events`` /
``drills`` (the adapters), ``sessions`` (order and sessions), ``load`` (one
file), ``pipeline`` (files into the store) and ``store`` (DuckDB).
"""

from .errors import InputError, Problem, StoreInUseError
from .load import LoadedFile, SessionMergeWarning, load_file
from .pipeline import FileOutcome, check_files, ingest_paths, store_files
from .profiles import Profile, load_profile, parse_profile, shipped_profiles
from .readers import RawTable, read_table
from .record import COLUMNS, DTYPES, FIELD_GOAL, FREE_THROW, empty_record, validate_record
from .store import IngestSummary, SourceInfo, Store, resolve_store_path

__all__ = [
    "COLUMNS",
    "DTYPES",
    "FIELD_GOAL",
    "FREE_THROW",
    "FileOutcome",
    "IngestSummary",
    "InputError",
    "LoadedFile",
    "Problem",
    "Profile",
    "RawTable",
    "SessionMergeWarning",
    "SourceInfo",
    "Store",
    "StoreInUseError",
    "check_files",
    "empty_record",
    "ingest_paths",
    "load_file",
    "load_profile",
    "parse_profile",
    "read_table",
    "resolve_store_path",
    "shipped_profiles",
    "store_files",
    "validate_record",
]
