"""League: every player's corrected effect in a sortable table and a funnel plot.

The view reads the saved league scan for the season and attempt type chosen
(the same scan ``streakwise analyse --save`` saves with the dashboard's
settings). When none matches, it starts one in the background, shows its
progress and lets the user cancel; the finished scan is saved in the store.
Team and minimum attempts only filter what is shown: q-values are always
across every player the scan tested.
"""

from __future__ import annotations

from urllib.parse import urlencode

import plotly.graph_objects as go
from dash import Input, Output, State, dash_table, dcc, html, no_update
from dash.dash_table.Format import Format, Scheme, Sign

from . import ids, theme
from .briefing import league_briefing_html
from .cautions import caution_box
from .controls import ALL, control, filter_value, fmt_p, fmt_signed, k_options, season_dropdown, type_dropdown
from .service import DashboardService, ScanView
from .urls import query_int, update_query

__all__ = [
    "FLAG_Q",
    "NAME",
    "PATH",
    "TITLE",
    "cancel_scan",
    "funnel_figure",
    "layout",
    "league_briefing",
    "league_rows",
    "poll_scan",
    "pooled_text",
    "register",
    "render_league",
    "start_scan",
    "table_columns",
    "url_for_league",
]

NAME = "league"
PATH = "/league"
TITLE = "League"

#: Players with a q-value at most this are marked in the funnel plot.
FLAG_Q = 0.10

POLL_MS = 500

LEAGUE_CAVEAT = (
    "Many players were tested at once, so some small p-values are expected by chance alone: pick players "
    "out by their q-values (Benjamini–Hochberg), not their p-values."
)

_FIXED3 = Format(precision=3, scheme=Scheme.fixed)
_SIGNED3 = Format(precision=3, scheme=Scheme.fixed, sign=Sign.positive)
_PERCENT1 = Format(precision=1, scheme=Scheme.percentage)
_P4 = Format(precision=4, scheme=Scheme.fixed)

def table_columns(k: int) -> list[dict]:
    """The table's columns for streak length ``k`` (numbers stay numbers, so sorting is numeric)."""
    makes, misses = ("make", "miss") if k == 1 else ("makes", "misses")
    return [
        {"name": "player", "id": "player_link", "presentation": "markdown"},
        {"name": "name", "id": "player_name"},
        {"name": "team", "id": "team"},
        {"name": "attempts", "id": "attempts", "type": "numeric"},
        {"name": "make rate", "id": "make_rate", "type": "numeric", "format": _PERCENT1},
        {"name": f"after {k} {makes}", "id": "after_makes", "type": "numeric", "format": _PERCENT1},
        {"name": f"after {k} {misses}", "id": "after_misses", "type": "numeric", "format": _PERCENT1},
        {"name": f"D_{k} raw", "id": "difference", "type": "numeric", "format": _SIGNED3},
        {"name": f"corrected D_{k}", "id": "corrected", "type": "numeric", "format": _SIGNED3},
        {"name": "interval low", "id": "interval_low", "type": "numeric", "format": _SIGNED3},
        {"name": "interval high", "id": "interval_high", "type": "numeric", "format": _SIGNED3},
        {"name": "p", "id": "p_value", "type": "numeric", "format": _P4},
        {"name": "q", "id": "q_value", "type": "numeric", "format": _P4},
        {"name": f"shrunk D_{k}", "id": "shrunk", "type": "numeric", "format": _SIGNED3},
    ]


def layout(service: DashboardService, params: dict[str, str]) -> html.Div:
    season = params.get("season", ALL)
    chosen_type = params.get("type")
    max_k = service.settings.max_k
    k = query_int(params, "k", 1, low=1, high=max_k)
    min_attempts = query_int(params, "min", service.settings.min_attempts, low=1)
    teams = [{"label": "every team", "value": ALL}] + [{"label": t, "value": t} for t in service.overview()["teams"]]
    team = params.get("team", ALL)
    if team not in {t["value"] for t in teams}:
        team = ALL
    return html.Div(
        [
            html.H1(TITLE),
            html.P(
                "Every player's bias-corrected streak effect D_k from the within-game permutation test. The funnel "
                "plot puts each effect against the player's attempts, with the band where chance alone puts it: "
                "players with few attempts scatter widely by chance, so look for effects outside their band and "
                "small q-values, not for the largest raw numbers.",
                className="sw-lead",
            ),
            caution_box(LEAGUE_CAVEAT),
            html.Div(
                [
                    control("Season", season_dropdown(ids.LEAGUE_SEASON, service, season)),
                    control("Attempt type", type_dropdown(ids.LEAGUE_TYPE, service, chosen_type)),
                    control("Team", dcc.Dropdown(id=ids.LEAGUE_TEAM, options=teams, value=team, clearable=False)),
                    control("Show players with at least", dcc.Input(id=ids.LEAGUE_MIN_ATTEMPTS, type="number", min=1, step=1,
                                                                  value=min_attempts, debounce=True), html_for=ids.LEAGUE_MIN_ATTEMPTS),
                    control("Streak length", dcc.RadioItems(id=ids.LEAGUE_K, options=k_options(max_k), value=k, inline=True)),
                ],
                className="sw-controls",
            ),
            html.Div(
                [
                    html.Span(id=ids.LEAGUE_STATUS),
                    html.Progress(id=ids.LEAGUE_PROGRESS, max="1", value="0", style={"display": "none"}),
                    html.Span(id=ids.LEAGUE_PROGRESS_TEXT, className="sw-note"),
                    html.Button("Run the scan", id=ids.LEAGUE_RUN, className="sw-button", n_clicks=0, style={"display": "none"}),
                    html.Button("Cancel", id=ids.LEAGUE_CANCEL, className="sw-button sw-secondary", n_clicks=0, style={"display": "none"}),
                    html.Button("Export league briefing (HTML)", id=ids.LEAGUE_BRIEFING, className="sw-button sw-secondary", n_clicks=0),
                    dcc.Download(id=ids.LEAGUE_BRIEFING_DOWNLOAD),
                ],
                className="sw-status",
            ),
            dcc.Interval(id=ids.LEAGUE_POLL, interval=POLL_MS, disabled=True),
            dcc.Store(id=ids.LEAGUE_SCAN_TOKEN),
            html.Div(id=ids.LEAGUE_POOLED, className="sw-note"),
            html.Div(dcc.Graph(id=ids.LEAGUE_FUNNEL, config={"displaylogo": False}), className="sw-card"),
            html.H2("Players"),
            html.P("Click a column name to sort; type in the row under the names to filter (e.g. > 0.05, or a team). "
                   "Shrunk D_k pulls each corrected effect towards the league's spread of effects, more so the less "
                   "certain it is (empirical Bayes, standard errors read off the 95% intervals).",
                   className="sw-note"),
            dash_table.DataTable(
                id=ids.LEAGUE_TABLE,
                columns=table_columns(k),
                data=[],
                sort_action="native",
                filter_action="native",
                page_action="native",
                page_size=20,
                markdown_options={"link_target": "_self"},
                style_table={"overflowX": "auto"},
                style_cell={"fontFamily": "system-ui, -apple-system, 'Segoe UI', Roboto, Arial, sans-serif", "fontSize": "13px", "padding": "3px 6px", "textAlign": "right",
                            "whiteSpace": "normal", "height": "auto"},
                style_cell_conditional=[
                    {"if": {"column_id": c}, "textAlign": "left"} for c in ("player_link", "player_name", "team")
                ],
                style_header={"fontWeight": "600", "backgroundColor": "#f6f8fa"},
                style_data_conditional=[
                    {"if": {"filter_query": f"{{q_value}} <= {FLAG_Q}"}, "backgroundColor": "#fff1e0"},
                ],
            ),
        ]
    )


# -- pure helpers ----------------------------------------------------------------


def _markdown_text(text: str) -> str:
    """Text shown literally inside a markdown link."""
    return "".join("\\" + c if c in "\\`*_{}[]()#+-.!<>|" else c for c in str(text))


def _player_href(player: str, season: str | None, attempt_type: str | None) -> str:
    params = {"player": player}
    if season:
        params["season"] = season
    if attempt_type:
        params["type"] = attempt_type
    return "/player?" + urlencode(params)


def league_rows(service: DashboardService, payload: dict, season, attempt_type, k: int, team=None, min_attempts: int = 1) -> list[dict]:
    """One table row per scanned player (numbers as numbers), after the display filters; smallest q first."""
    roster = service.players(season, attempt_type).set_index("player")
    shrunk = service.shrunk_effects(season, attempt_type, k)
    rows = []
    for entry in payload["players"]:
        player = entry["player"]
        if entry["attempts"] < (min_attempts or 1):
            continue
        name = roster["player_name"].get(player) if player in roster.index else None
        player_team = roster["team"].get(player) if player in roster.index else None
        player_team = None if player_team is None or player_team != player_team else str(player_team)
        if team and (player_team is None or team not in player_team.split(" / ")):
            continue
        streak = entry["streak"][k - 1]
        band = streak["null_band"]
        null_mean = streak["null_mean"]
        interval = streak["interval"] or [None, None]
        rows.append({
            "player": player,
            "player_link": f"[{_markdown_text(player)}]({_player_href(player, season, attempt_type)})",
            "player_name": None if name is None or name != name else str(name),
            "team": player_team,
            "attempts": entry["attempts"],
            "make_rate": entry["make_rate"],
            "after_makes": streak["after_makes"]["rate"],
            "after_misses": streak["after_misses"]["rate"],
            "difference": streak["difference"],
            "corrected": streak["corrected"],
            "interval_low": interval[0],
            "interval_high": interval[1],
            "p_value": streak["p_value"],
            "q_value": streak["q_value"],
            "shrunk": shrunk[player][0] if player in shrunk else None,
            "null_low": band[0] - null_mean if band and null_mean is not None else None,
            "null_high": band[1] - null_mean if band and null_mean is not None else None,
        })
    rows.sort(key=lambda r: (r["q_value"] is None, r["q_value"] or 0.0, r["p_value"] is None, r["p_value"] or 0.0, r["player"]))
    return rows


def funnel_figure(rows: list[dict], k: int) -> go.Figure:
    """Corrected D_k against attempts, each player's null band behind it."""
    shown = [r for r in rows if r["corrected"] is not None]
    if not shown:
        return theme.empty_figure("No player to show under these filters.")
    figure = go.Figure()
    band_x, band_y = [], []
    for row in shown:
        if row["null_low"] is None:
            continue
        band_x += [row["attempts"], row["attempts"], None]
        band_y += [row["null_low"], row["null_high"], None]
    figure.add_trace(go.Scatter(
        x=band_x, y=band_y, mode="lines", name="each player's null band (2.5–97.5%, chance alone)",
        line=dict(color=theme.NULL, width=3), opacity=0.35, hoverinfo="skip",
    ))
    for flagged, name, colour, symbol, size in (
        (False, f"player (q > {FLAG_Q:.2f})", theme.MAKE, "circle", 9),
        (True, f"player with q ≤ {FLAG_Q:.2f}", theme.FLAGGED, "diamond", 12),
    ):
        group = [r for r in shown if (r["q_value"] is not None and r["q_value"] <= FLAG_Q) == flagged]
        if not group:
            continue
        figure.add_trace(go.Scatter(
            x=[r["attempts"] for r in group], y=[r["corrected"] for r in group], mode="markers", name=name,
            marker=dict(color=colour, size=size, symbol=symbol, line=dict(color="#000000", width=0.5)),
            customdata=[[r["player_name"] or r["player"], r["player"], fmt_p(r["p_value"]), fmt_p(r["q_value"])] for r in group],
            hovertemplate="%{customdata[0]} (%{customdata[1]})<br>attempts %{x:,}<br>corrected D_" + str(k)
            + " %{y:+.3f}<br>p %{customdata[2]}, q %{customdata[3]}<extra></extra>",
        ))
    figure.add_hline(y=0, line=dict(color=theme.NULL, dash="dash", width=1))
    figure.update_xaxes(title="attempts", tickformat=",")
    figure.update_yaxes(title=f"corrected D_{k} (hit-rate points)", tickformat="+.0%")
    theme.apply_figure_style(figure, height=460, title=f"Streak effect D_{k} against attempts: small samples scatter widely")
    return figure


def pooled_text(payload: dict, k: int) -> str:
    tests = [t for t in payload.get("league", []) if t["k"] == k]
    if not tests:
        return ""
    t = tests[0]
    if t["corrected_mean"] is None:
        return f"Pooled league test of D_{k}: {t['reason']}."
    return (
        f"Pooled league test of D_{k}: mean corrected effect {fmt_signed(t['corrected_mean'])} over {t['players']} "
        f"players, p = {fmt_p(t['p_value'])} (are the league's players, on average, streakier than chance?)."
    )


def _status(view: ScanView, service: DashboardService) -> tuple[str, bool, dict, dict, dict]:
    """(status text, poll disabled, progress style, run button style, cancel button style)."""
    hidden, shown = {"display": "none"}, {}
    payload, job = view.payload, view.job
    if payload is not None:
        players = len(payload["players"])
        return (
            f"Saved scan: {players} players tested (at least {view.settings['min_attempts']} attempts), "
            f"{payload['permutations']:,} permutations each, seed {payload['seed']}.",
            True, hidden, hidden, hidden,
        )
    if job is None or job.running:
        return ("Computing the league scan in the background; it is saved in the store when done.",
                False, shown, hidden, shown)
    if job.state == "cancelled":
        return ("The scan was cancelled.", True, hidden, shown, hidden)
    if job.state == "failed":
        return (f"The scan failed: {job.error}", True, hidden, shown, hidden)
    return ("The scan finished, but the data changed meanwhile; run it again.", True, hidden, shown, hidden)


def render_league(service: DashboardService, season, attempt_type, team, min_attempts, k, _token=None):
    """The callback's work: table rows and columns, funnel, pooled text, status, poll switch, styles."""
    season = filter_value(season)
    team = filter_value(team)
    k = int(k or 1)
    try:
        min_attempts = max(1, int(min_attempts))
    except (TypeError, ValueError):
        min_attempts = 1
    view = service.scan(season, attempt_type)
    if view.payload is None and view.job is None:
        view = service.start_scan(season, attempt_type)
    status, poll_disabled, progress_style, run_style, cancel_style = _status(view, service)
    if view.payload is None:
        figure = theme.empty_figure("The league scan is not ready yet.")
        return [], table_columns(k), figure, "", status, poll_disabled, progress_style, run_style, cancel_style
    rows = league_rows(service, view.payload, season, attempt_type, k, team, min_attempts)
    shown = f" Showing {len(rows)} of them." if len(rows) != len(view.payload["players"]) else ""
    return (rows, table_columns(k), funnel_figure(rows, k), pooled_text(view.payload, k), status + shown, poll_disabled,
            progress_style, run_style, cancel_style)


def poll_scan(service: DashboardService, season, attempt_type):
    """The poller's work: (progress value, progress text, token, poll disabled)."""
    view = service.scan(filter_value(season), attempt_type)
    job = view.job
    if job is None:
        return "0", "", view.key, True
    text = f"{job.done} of {job.total} players ({job.elapsed:.0f} s)"
    if job.running:
        return f"{job.fraction:.3f}", text, no_update, False
    return f"{job.fraction:.3f}", f"{job.state}: {text}", f"{view.key}:{job.state}", True


def start_scan(service: DashboardService, season, attempt_type) -> str:
    view = service.start_scan(filter_value(season), attempt_type)
    return f"{view.key}:started:{id(view.job)}"


def cancel_scan(service: DashboardService, season, attempt_type) -> str:
    service.cancel_scan(filter_value(season), attempt_type)
    return "Cancelling…"


def league_briefing(service: DashboardService, season, attempt_type) -> dict | None:
    """The league briefing as a download (``dcc.Download`` data), or None until the scan is ready."""
    season = filter_value(season)
    view = service.scan(season, attempt_type)
    if view.payload is None:
        return None
    text = league_briefing_html(view.payload, service.players(season, attempt_type), data_version=service.data_version(),
                                settings=view.settings)
    filename = f"streakwise-league-briefing-{season or 'all-seasons'}-{attempt_type or 'all'}.html".replace(" ", "-")
    return dict(content=text, filename=filename, type="text/html")


def url_for_league(search, season, attempt_type, team, min_attempts, k) -> str:
    return update_query(search, season=filter_value(season), type=attempt_type, team=filter_value(team),
                        min=min_attempts, k=k)


def register(app, service: DashboardService) -> None:
    @app.callback(
        Output(ids.LEAGUE_TABLE, "data"),
        Output(ids.LEAGUE_TABLE, "columns"),
        Output(ids.LEAGUE_FUNNEL, "figure"),
        Output(ids.LEAGUE_POOLED, "children"),
        Output(ids.LEAGUE_STATUS, "children"),
        Output(ids.LEAGUE_POLL, "disabled"),
        Output(ids.LEAGUE_PROGRESS, "style"),
        Output(ids.LEAGUE_RUN, "style"),
        Output(ids.LEAGUE_CANCEL, "style"),
        Input(ids.LEAGUE_SEASON, "value"),
        Input(ids.LEAGUE_TYPE, "value"),
        Input(ids.LEAGUE_TEAM, "value"),
        Input(ids.LEAGUE_MIN_ATTEMPTS, "value"),
        Input(ids.LEAGUE_K, "value"),
        Input(ids.LEAGUE_SCAN_TOKEN, "data"),
    )
    def _render(season, attempt_type, team, min_attempts, k, token):
        return render_league(service, season, attempt_type, team, min_attempts, k, token)

    @app.callback(
        Output(ids.LEAGUE_PROGRESS, "value"),
        Output(ids.LEAGUE_PROGRESS_TEXT, "children"),
        Output(ids.LEAGUE_SCAN_TOKEN, "data"),
        Output(ids.LEAGUE_POLL, "disabled", allow_duplicate=True),
        Input(ids.LEAGUE_POLL, "n_intervals"),
        State(ids.LEAGUE_SEASON, "value"),
        State(ids.LEAGUE_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _poll(_n, season, attempt_type):
        return poll_scan(service, season, attempt_type)

    @app.callback(
        Output(ids.LEAGUE_SCAN_TOKEN, "data", allow_duplicate=True),
        Input(ids.LEAGUE_RUN, "n_clicks"),
        State(ids.LEAGUE_SEASON, "value"),
        State(ids.LEAGUE_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _run(clicks, season, attempt_type):
        if not clicks:
            return no_update
        return start_scan(service, season, attempt_type)

    @app.callback(
        Output(ids.LEAGUE_PROGRESS_TEXT, "children", allow_duplicate=True),
        Input(ids.LEAGUE_CANCEL, "n_clicks"),
        State(ids.LEAGUE_SEASON, "value"),
        State(ids.LEAGUE_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _cancel(clicks, season, attempt_type):
        if not clicks:
            return no_update
        return cancel_scan(service, season, attempt_type)

    @app.callback(
        Output(ids.LEAGUE_BRIEFING_DOWNLOAD, "data"),
        Output(ids.LEAGUE_PROGRESS_TEXT, "children", allow_duplicate=True),
        Input(ids.LEAGUE_BRIEFING, "n_clicks"),
        State(ids.LEAGUE_SEASON, "value"),
        State(ids.LEAGUE_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _briefing(clicks, season, attempt_type):
        if not clicks:
            return no_update, no_update
        download = league_briefing(service, season, attempt_type)
        if download is None:
            return no_update, "The briefing needs the finished league scan."
        return download, ""

    @app.callback(
        Output(ids.URL, "search", allow_duplicate=True),
        Input(ids.LEAGUE_SEASON, "value"),
        Input(ids.LEAGUE_TYPE, "value"),
        Input(ids.LEAGUE_TEAM, "value"),
        Input(ids.LEAGUE_MIN_ATTEMPTS, "value"),
        Input(ids.LEAGUE_K, "value"),
        State(ids.URL, "search"),
        prevent_initial_call=True,
    )
    def _url(season, attempt_type, team, min_attempts, k, search):
        return url_for_league(search, season, attempt_type, team, min_attempts, k)

