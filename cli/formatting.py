"""Pure text formatting for the command line (no I/O, no statistics)."""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from typing import Any

__all__ = ["format_count", "format_ingest_line", "format_rate", "plural", "render_table", "to_json"]


def format_count(value: int) -> str:
    """``1234567`` -> ``1,234,567``."""
    return f"{int(value):,}"


def plural(count: int, noun: str) -> str:
    """``plural(1, "attempt")`` -> ``1 attempt``; ``plural(1200, "attempt")`` -> ``1,200 attempts``."""
    return f"{format_count(count)} {noun}{'' if count == 1 else 's'}"


def format_rate(value: float | None, digits: int = 3) -> str:
    """A rate with fixed decimals, ``-`` when undefined."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{value:.{digits}f}"


def render_table(rows: Sequence[Mapping[str, Any]], columns: Sequence[tuple[str, str]], *, empty: str = "(no rows)") -> str:
    """Fixed-width table: ``columns`` are (key, heading); numbers right-aligned."""
    if not rows:
        return empty
    cells = [[_cell(row.get(key)) for key, _ in columns] for row in rows]
    numeric = [all(_is_number(row.get(key)) for row in rows) for key, _ in columns]
    widths = [max(len(heading), *(len(r[i]) for r in cells)) for i, (_, heading) in enumerate(columns)]

    def line(values: Sequence[str]) -> str:
        parts = [v.rjust(w) if num else v.ljust(w) for v, w, num in zip(values, widths, numeric, strict=True)]
        return "  ".join(parts).rstrip()

    out = [line([h for _, h in columns]), line(["-" * w for w in widths])]
    out.extend(line(r) for r in cells)
    return "\n".join(out)


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) or value is None


def _cell(value: Any) -> str:
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return format_count(value)
    if isinstance(value, float):
        return format_rate(value)
    return str(value)


def format_ingest_line(result: Mapping[str, Any]) -> str:
    """One file's accounting, e.g. for ``streakwise ingest``."""
    status = result["status"]
    name = result["path"]
    if status == "already_stored":
        return f"{name}: already in the store (same content); nothing added. Use --replace to load it again."
    if status == "refused":
        return f"{name}: refused ({format_count(result['problems'])} problem{'s' if result['problems'] != 1 else ''}); the store is unchanged."
    if status == "checked":
        verb = "checked (not stored)"
    else:
        verb = "replaced" if status == "replaced" else "stored"
    text = (
        f"{name}: {verb}: {format_count(result['rows_read'])} rows read = "
        f"{format_count(result['rows_stored'])} stored + {format_count(result['rows_skipped'])} skipped + "
        f"{format_count(result['rows_rejected'])} rejected; {plural(result['attempts'], 'attempt')} "
        f"by {plural(result['players'], 'player')} in {plural(result['sessions'], 'session')}"
    )
    skipped = result.get("skipped_kinds") or {}
    if skipped:
        shown = ", ".join(f"{kind} {format_count(n)}" for kind, n in list(skipped.items())[:8])
        more = " ..." if len(skipped) > 8 else ""
        text += f"\n  skipped events: {shown}{more}"
    return text


def to_json(value: Any) -> str:
    """Stable, readable JSON (NaN becomes null)."""
    return json.dumps(_clean(value), indent=2, sort_keys=False, ensure_ascii=False)


def _clean(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, Mapping):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):
        try:
            return _clean(value.item())
        except (TypeError, ValueError):
            return str(value)
    return value
