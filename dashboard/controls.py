"""Pieces shared by the views: filter controls, number formats, plain tables."""

from __future__ import annotations

import math
from collections.abc import Sequence

import pandas as pd
from dash import dcc, html

from .service import DashboardService

__all__ = [
    "ALL",
    "control",
    "filter_value",
    "fmt_count",
    "fmt_number",
    "fmt_p",
    "fmt_percent",
    "fmt_signed",
    "k_options",
    "player_options",
    "season_dropdown",
    "season_options",
    "simple_table",
    "type_dropdown",
    "type_options",
    "unavailable",
]

#: Dropdown value meaning "no filter" (every season, every team).
ALL = "all"


def filter_value(value: str | None) -> str | None:
    """A dropdown value as a filter: ``None`` for :data:`ALL` or nothing."""
    return None if value in (None, "", ALL) else str(value)


def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value)) or value is pd.NA


def fmt_percent(value, digits: int = 1) -> str:
    return "–" if _missing(value) else f"{100 * float(value):.{digits}f}%"


def fmt_number(value, digits: int = 3) -> str:
    return "–" if _missing(value) else f"{float(value):.{digits}f}"


def fmt_signed(value, digits: int = 3) -> str:
    return "–" if _missing(value) else f"{float(value):+.{digits}f}"


def fmt_count(value) -> str:
    return "–" if _missing(value) else f"{int(value):,}"


def fmt_p(value) -> str:
    if _missing(value):
        return "–"
    return "<0.0001" if float(value) < 1e-4 else f"{float(value):.4f}"


def control(label: str, component, *, wide: bool = False, html_for: str | None = None) -> html.Div:
    """A labelled control in a controls bar."""
    return html.Div([html.Label(label, htmlFor=html_for), component], className="sw-control sw-wide" if wide else "sw-control")


def season_options(service: DashboardService) -> list[dict]:
    return [{"label": "every season", "value": ALL}] + [
        {"label": s, "value": s} for s in service.overview()["seasons"]
    ]


def type_options(service: DashboardService) -> list[dict]:
    return [{"label": t.replace("_", " "), "value": t} for t in service.overview()["attempt_types"]]


def season_dropdown(component_id: str, service: DashboardService, value: str | None) -> dcc.Dropdown:
    options = season_options(service)
    known = {o["value"] for o in options}
    return dcc.Dropdown(id=component_id, options=options, value=value if value in known else ALL, clearable=False)


def type_dropdown(component_id: str, service: DashboardService, value: str | None) -> dcc.Dropdown:
    options = type_options(service)
    known = [o["value"] for o in options]
    chosen = value if value in known else service.default_attempt_type()
    return dcc.Dropdown(id=component_id, options=options, value=chosen, clearable=False)


def player_options(service: DashboardService, season: str | None, attempt_type: str | None) -> list[dict]:
    """One option per player with attempts under the filters, most attempts first."""
    frame = service.players(season, attempt_type).sort_values(["attempts", "player"], ascending=[False, True])
    options = []
    for row in frame.itertuples(index=False):
        name = row.player_name if not _missing(row.player_name) else row.player
        team = f" · {row.team}" if not _missing(row.team) else ""
        options.append({"label": f"{name} ({row.player}){team} · {int(row.attempts):,} attempts", "value": row.player})
    return options


def k_options(max_k: int) -> list[dict]:
    return [{"label": f"k = {k}", "value": k} for k in range(1, max_k + 1)]


def simple_table(columns: Sequence[str], rows: Sequence[Sequence], *, table_id: str | None = None) -> html.Table:
    """A plain, readable HTML table (strings in, nothing interactive)."""
    head = html.Thead(html.Tr([html.Th(c) for c in columns]))
    body = html.Tbody([html.Tr([html.Td(cell) for cell in row]) for row in rows])
    kwargs = {"id": table_id} if table_id else {}
    return html.Table([head, body], className="sw-table", **kwargs)


def unavailable(what: str, detail: str) -> html.Div:
    """A clearly labelled panel for a part that is not built yet."""
    return html.Div([html.Strong(f"{what}: not available yet. "), html.Span(detail)], className="sw-unavailable")
