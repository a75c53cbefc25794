"""Players side by side: rates after k makes and misses, corrected effects, p and q.

Thin: the callback reads the selection, asks the service for each player's
within-game permutation test (cached) and the saved league scan (for
q-values), and builds the figures and table with the pure helpers below.
"""

from __future__ import annotations

import shlex
from dataclasses import dataclass

import plotly.graph_objects as go
from dash import Input, Output, State, dcc, html

from streakwise.analysis import StreakTestResult

from . import ids, theme
from .cautions import caution_box
from .controls import (
    ALL,
    control,
    filter_value,
    fmt_count,
    fmt_p,
    fmt_percent,
    fmt_signed,
    k_options,
    player_options,
    season_dropdown,
    simple_table,
    type_dropdown,
)
from .service import DashboardService
from .urls import query_int, query_list, update_query

__all__ = [
    "MAX_PLAYERS",
    "NAME",
    "PATH",
    "PlayerColumn",
    "TITLE",
    "compare_columns",
    "difficulty_command",
    "difficulty_panel",
    "difficulty_rows",
    "effects_figure",
    "layout",
    "rates_figure",
    "register",
    "table_columns",
    "table_rows",
    "update_compare",
    "update_difficulty",
    "url_for_compare",
]

NAME = "compare"
PATH = "/compare"
TITLE = "Players side by side"
MAX_PLAYERS = 4

def table_columns(k: int) -> tuple[str, ...]:
    """The table's column names for streak length ``k``."""
    makes, misses = ("make", "miss") if k == 1 else ("makes", "misses")
    return ("player", "team", "attempts", "games", "make rate", f"after {k} {makes}", f"after {k} {misses}",
            f"D_{k} raw", "null mean", f"corrected D_{k}", "95% interval", "p", "q", f"shrunk D_{k} (95%)")


@dataclass(frozen=True)
class PlayerColumn:
    """One player's numbers for the chosen k (what the figures and table show)."""

    player: str
    label: str
    team: str | None
    result: StreakTestResult
    q_value: float | None
    shrunk: tuple[float, float, float] | None = None


def default_players(service: DashboardService, season: str | None, attempt_type: str | None) -> list[str]:
    """The two players with the most attempts under the filters."""
    frame = service.players(season, attempt_type).sort_values(["attempts", "player"], ascending=[False, True])
    return [str(p) for p in frame["player"].head(2)]


def layout(service: DashboardService, params: dict[str, str]) -> html.Div:
    season = params.get("season", ALL)
    chosen_type = params.get("type")
    max_k = service.settings.max_k
    k = query_int(params, "k", 1, low=1, high=max_k)
    attempt_type = chosen_type or service.default_attempt_type()
    options = player_options(service, filter_value(season), attempt_type)
    known = {o["value"] for o in options}
    players = [p for p in query_list(params, "players") if p in known][:MAX_PLAYERS]
    if not players:
        players = default_players(service, filter_value(season), attempt_type)
    return html.Div(
        [
            html.H1(TITLE),
            html.P(
                "Hit rates after k makes and after k misses for two to four players, each against what the "
                "same makes shuffled inside each game give (the within-game permutation null). The corrected "
                "effect is D_k (rate after k makes minus rate after k misses) minus its null mean, which "
                "removes the downward bias of rates after streaks in short games.",
                className="sw-lead",
            ),
            caution_box(),
            html.Div(
                [
                    control("Players (2 to 4)", dcc.Dropdown(id=ids.COMPARE_PLAYERS, options=options, value=players, multi=True,
                                                            placeholder="choose players"), wide=True),
                    control("Season", season_dropdown(ids.COMPARE_SEASON, service, season)),
                    control("Attempt type", type_dropdown(ids.COMPARE_TYPE, service, chosen_type)),
                    control("Streak length", dcc.RadioItems(id=ids.COMPARE_K, options=k_options(max_k), value=k, inline=True)),
                ],
                className="sw-controls",
            ),
            html.Div(id=ids.COMPARE_NOTE, className="sw-note"),
            dcc.Loading(
                html.Div(
                    [
                        html.Div(dcc.Graph(id=ids.COMPARE_RATES_GRAPH, config={"displaylogo": False}), className="sw-card"),
                        html.Div(dcc.Graph(id=ids.COMPARE_EFFECTS_GRAPH, config={"displaylogo": False}), className="sw-card"),
                    ],
                    className="sw-grid",
                ),
                delay_show=300,
            ),
            html.H2("The numbers"),
            html.Div(id=ids.COMPARE_TABLE),
            html.P(
                f"Within-game permutation test, {service.settings.permutations:,} permutations per player, seed "
                f"{service.settings.seed}, alternative '{service.settings.alternative}'. The null band is where chance "
                "alone puts a statistic (2.5–97.5%), not a confidence interval; the 95% interval of the corrected "
                "effect comes from resampling whole games. q-values (Benjamini–Hochberg) come from the league scan "
                "of the same filters. The shrunk effect pulls each corrected effect towards the league's spread of "
                "effects, more so the less certain it is (empirical Bayes; its standard error is read off the 95% "
                "interval, an approximation).",
                className="sw-note",
            ),
            html.H2("Adjusted for shot difficulty"),
            html.Div(difficulty_panel(service, players, season, attempt_type, k), id=ids.COMPARE_DIFFICULTY),
        ]
    )


def compare_columns(service: DashboardService, players, season, attempt_type, k) -> tuple[list[PlayerColumn], list[str]]:
    """Each chosen player's test and q-value; notes on anything left out."""
    notes: list[str] = []
    season = filter_value(season)
    players = [p for p in (players or []) if p][:MAX_PLAYERS]
    scan = service.scan(season, attempt_type)
    q_values = {}
    if scan.payload is not None:
        for entry in scan.payload["players"]:
            streak = entry["streak"]
            if k <= len(streak):
                q_values[entry["player"]] = streak[k - 1]["q_value"]
    roster = service.players(season, attempt_type).set_index("player")
    shrunk = service.shrunk_effects(season, attempt_type, k)
    columns = []
    for player in players:
        result = service.player_test(player, season, attempt_type)
        if result is None:
            notes.append(f"{player} has no {attempt_type or ''} attempts under these filters.")
            continue
        team = roster["team"].get(player) if player in roster.index else None
        columns.append(
            PlayerColumn(
                player=player,
                label=service.player_label(player, season, attempt_type),
                team=None if team is None or team != team else str(team),
                result=result,
                q_value=q_values.get(player),
                shrunk=shrunk.get(player),
            )
        )
    if scan.payload is None:
        notes.append("q-values: no league scan for these filters yet (the League view runs one).")
    elif any(c.q_value is None for c in columns):
        notes.append(
            f"Players with fewer than {service.settings.min_attempts} attempts are left out of the league scan, "
            "so they have no q-value."
        )
    return columns, notes


def _band(test):
    if test.null_band is None or test.null_mean is None:
        return float("nan"), float("nan")
    return test.null_mean - test.null_band[0], test.null_band[1] - test.null_mean


def rates_figure(columns: list[PlayerColumn], k: int) -> go.Figure:
    """Rates after k makes and after k misses per player, beside their null bands."""
    if not columns:
        return theme.empty_figure("Choose two to four players.")
    figure = go.Figure()
    positions = list(range(len(columns)))
    for statistic, label, colour, shift in (
        ("after_makes", f"after {k} make{'s' if k > 1 else ''}", theme.AFTER_MAKES, -0.16),
        ("after_misses", f"after {k} miss{'es' if k > 1 else ''}", theme.AFTER_MISSES, 0.16),
    ):
        tests = [c.result.test(statistic, k) for c in columns]
        observed = [t.observed if t.observed is not None else None for t in tests]
        means = [t.null_mean for t in tests]
        bands = [_band(t) for t in tests]
        figure.add_trace(go.Scatter(
            x=[p + shift for p in positions], y=observed, mode="markers", name=f"observed rate {label}",
            marker=dict(color=colour, size=13, symbol="circle", line=dict(color="#000000", width=0.5)),
            customdata=[c.label for c in columns],
            hovertemplate="%{customdata}<br>rate " + label + ": %{y:.1%}<extra></extra>",
        ))
        figure.add_trace(go.Scatter(
            x=[p + shift + 0.08 for p in positions], y=means, mode="markers", name=f"chance alone {label} (null mean, 95% band)",
            marker=dict(color=colour, size=10, symbol="circle-open", line=dict(width=2)),
            error_y=dict(type="data", symmetric=False, array=[b[1] for b in bands], arrayminus=[b[0] for b in bands],
                         color=theme.NULL, thickness=1.5, width=5),
            customdata=[c.label for c in columns],
            hovertemplate="%{customdata}<br>null mean " + label + ": %{y:.1%}<extra></extra>",
        ))
    figure.update_xaxes(tickmode="array", tickvals=positions, ticktext=[_wrap(c.label) for c in columns], range=[-0.6, len(columns) - 0.4])
    figure.update_yaxes(title="hit rate", tickformat=".0%")
    makes, misses = ("make", "miss") if k == 1 else ("makes", "misses")
    theme.apply_figure_style(figure, height=420, title=f"Hit rate after {k} {makes} and after {k} {misses}, against chance")
    return figure


def effects_figure(columns: list[PlayerColumn], k: int) -> go.Figure:
    """Corrected D_k per player with its 95% interval (resampling games)."""
    if not columns:
        return theme.empty_figure("Choose two to four players.")
    figure = go.Figure()
    positions = list(range(len(columns)))
    tests = [c.result.test("difference", k) for c in columns]
    y = [t.corrected for t in tests]
    low = [t.corrected - t.interval[0] if t.interval and t.corrected is not None else None for t in tests]
    high = [t.interval[1] - t.corrected if t.interval and t.corrected is not None else None for t in tests]
    text = [f"p {fmt_p(t.p_value)}, q {fmt_p(c.q_value)}" for t, c in zip(tests, columns)]
    figure.add_trace(go.Scatter(
        x=positions, y=y, mode="markers+text", name=f"corrected D_{k} with 95% interval",
        marker=dict(color=[theme.PLAYER_COLOURS[i % len(theme.PLAYER_COLOURS)] for i in positions], size=14,
                    line=dict(color="#000000", width=0.5)),
        error_y=dict(type="data", symmetric=False, array=high, arrayminus=low, color="#333333", thickness=2, width=8),
        text=text, textposition="middle right", textfont=dict(size=12),
        customdata=[c.label for c in columns],
        hovertemplate="%{customdata}<br>corrected D_" + str(k) + " %{y:+.3f}<extra></extra>",
    ))
    figure.add_hline(y=0, line=dict(color=theme.NULL, dash="dash", width=1),
                     annotation_text="no streak effect", annotation_position="bottom right")
    figure.update_xaxes(tickmode="array", tickvals=positions, ticktext=[_wrap(c.label) for c in columns], range=[-0.6, len(columns) - 0.1])
    figure.update_yaxes(title=f"corrected D_{k} (hit-rate points)", tickformat="+.0%", zeroline=False)
    theme.apply_figure_style(figure, height=420, title=f"Streak effect D_{k}, bias-corrected, with 95% interval")
    figure.update_layout(showlegend=False)
    return figure


def _wrap(label: str) -> str:
    """Put a player's id on its own line under the name (tick labels stay narrow)."""
    return label.replace(" (", "<br>(", 1)


def _rate_cell(rate: dict) -> str:
    if rate["attempts"] == 0:
        return "– (0 attempts)"
    return f"{fmt_percent(rate['rate'])} ({rate['makes']}/{rate['attempts']})"


def table_rows(columns: list[PlayerColumn], k: int) -> list[list[str]]:
    """The table's rows (strings) for the chosen k."""
    rows = []
    for column in columns:
        result = column.result
        entry = result.to_dict({k: column.q_value})["streak"][k - 1]
        interval = entry["interval"]
        rows.append([
            column.label,
            column.team or "–",
            fmt_count(result.attempts),
            fmt_count(result.sessions),
            fmt_percent(result.make_rate),
            _rate_cell(entry["after_makes"]),
            _rate_cell(entry["after_misses"]),
            fmt_signed(entry["difference"]),
            fmt_signed(entry["null_mean"]),
            fmt_signed(entry["corrected"]),
            f"[{fmt_signed(interval[0])}, {fmt_signed(interval[1])}]" if interval else "–",
            fmt_p(entry["p_value"]),
            fmt_p(column.q_value),
            f"{fmt_signed(column.shrunk[0])} [{fmt_signed(column.shrunk[1])}, {fmt_signed(column.shrunk[2])}]"
            if column.shrunk else "–",
        ])
    return rows


def update_compare(service: DashboardService, players, season, attempt_type, k):
    """The callback's work: (rates figure, effects figure, table, note)."""
    k = int(k or 1)
    scan = service.scan(filter_value(season), attempt_type)
    key = ("compare", tuple(players or ()), filter_value(season), attempt_type, k, scan.key, scan.payload is not None)
    return service.remember(key, lambda: _compare_outputs(service, players, season, attempt_type, k))


def _compare_outputs(service: DashboardService, players, season, attempt_type, k):
    columns, notes = compare_columns(service, players, season, attempt_type, k)
    if len(players or []) > MAX_PLAYERS:
        notes.insert(0, f"Showing the first {MAX_PLAYERS} players chosen.")
    if len(columns) == 1:
        notes.insert(0, "Add another player to compare.")
    table = html.Div(simple_table(table_columns(k), table_rows(columns, k)), className="sw-scroll") if columns else html.P("No players chosen.")
    return rates_figure(columns, k), effects_figure(columns, k), table, " ".join(notes)


def difficulty_command(service: DashboardService, season: str | None, attempt_type: str | None) -> str:
    """The command that saves the difficulty scan this view reads, for the dashboard's settings."""
    s = service.settings
    parts = ["streakwise", "analyse", "--difficulty", "--save", "--permutations", str(s.permutations), "--seed", str(s.seed)]
    if season:
        parts += ["--season", season]
    if attempt_type:
        parts += ["--attempt-type", attempt_type]
    for flag, value, default in (("--max-k", s.max_k, 3), ("--min-attempts", s.min_attempts, 100),
                                 ("--alternative", s.alternative, "hot")):
        if value != default:
            parts += [flag, str(value)]
    parts += ["--store", str(service.store_path)]
    return " ".join(shlex.quote(part) for part in parts)


def difficulty_rows(payload: dict, players, labels: dict[str, str], k: int) -> list[list[str]]:
    """One row per chosen player from a saved difficulty scan (strings; no statistics here)."""
    entries = {entry["player"]: entry for entry in payload.get("players", [])}
    rows = []
    for player in players:
        entry = entries.get(player)
        label = labels.get(player, player)
        if entry is None:
            rows.append([label, "not in the difficulty scan (too few attempts?)", "–", "–", "–", "–"])
            continue
        adjusted = next((a for a in entry.get("difficulty_adjusted", []) if a.get("k") == k), None)
        corrected = None if adjusted is None else adjusted.get("corrected")
        p_value = None if adjusted is None else adjusted.get("p_value")
        reason = None if adjusted is None else adjusted.get("reason")
        selection = entry.get("shot_selection") or {}
        warnings = entry.get("difficulty_warnings") or []
        rows.append([
            label,
            fmt_signed(corrected) if corrected is not None or not reason else f"– ({reason})",
            fmt_p(p_value),
            fmt_signed(selection.get("difference")),
            fmt_p(selection.get("p_value")),
            "; ".join(str(w) for w in warnings) or "–",
        ])
    return rows


def difficulty_panel(service: DashboardService, players, season, attempt_type, k) -> list:
    """The saved difficulty-adjusted effects of the chosen players, or how to produce them."""
    season = filter_value(season)
    k = int(k or 1)
    players = [p for p in (players or []) if p][:MAX_PLAYERS]
    payload = service.difficulty_scan(season, attempt_type)
    if payload is None:
        return [html.Div(
            [
                html.Strong("No saved difficulty-adjusted scan for these filters and settings. "),
                html.Span("The effects above assume a game's attempts are equally hard. To adjust them for shot "
                          "difficulty, stop the dashboard (it holds the store), run "),
                html.Code(difficulty_command(service, season, attempt_type)),
                html.Span(" and start it again."),
            ],
            className="sw-unavailable",
        )]
    model = payload.get("difficulty_model") or {}
    covariates = ", ".join(model.get("covariates") or []) or "no covariates"
    fit = (f"; log loss {model['log_loss']:.4f} against {model['base_log_loss']:.4f} for the base rate"
           if model.get("log_loss") is not None and model.get("base_log_loss") is not None else "")
    labels = {p: service.player_label(p, season, attempt_type) for p in players}
    columns = ("player", f"adjusted corrected D_{k}", "p", "shot selection: expected rate after makes − after misses",
               "p", "difficulty warnings")
    parts = [
        html.P(
            f"From the saved difficulty scan (streakwise analyse --difficulty). Makes minus the difficulty model's "
            f"expected probability; the null resamples each game's makes from its attempts' fitted probabilities. "
            f"Difficulty model on {covariates}{fit}. The shot-selection check asks whether attempts after makes are "
            "expected to go in less often than attempts after misses (harder shots).",
            className="sw-note",
        ),
    ]
    for warning in model.get("warnings") or []:
        parts.append(html.P(f"Model warning: {warning}", className="sw-note"))
    if players:
        parts.append(html.Div(simple_table(columns, difficulty_rows(payload, players, labels, k)), className="sw-scroll"))
    else:
        parts.append(html.P("No players chosen."))
    return parts


def update_difficulty(service: DashboardService, players, season, attempt_type, k) -> list:
    """The difficulty callback's work (the panel's children)."""
    return difficulty_panel(service, players, season, attempt_type, k)


def url_for_compare(search, players, season, attempt_type, k) -> str:
    return update_query(search, players=list(players or []), season=filter_value(season), type=attempt_type, k=k)


def register(app, service: DashboardService) -> None:
    @app.callback(
        Output(ids.COMPARE_RATES_GRAPH, "figure"),
        Output(ids.COMPARE_EFFECTS_GRAPH, "figure"),
        Output(ids.COMPARE_TABLE, "children"),
        Output(ids.COMPARE_NOTE, "children"),
        Input(ids.COMPARE_PLAYERS, "value"),
        Input(ids.COMPARE_SEASON, "value"),
        Input(ids.COMPARE_TYPE, "value"),
        Input(ids.COMPARE_K, "value"),
    )
    def _update(players, season, attempt_type, k):
        return update_compare(service, players, season, attempt_type, k)

    @app.callback(
        Output(ids.COMPARE_DIFFICULTY, "children"),
        Input(ids.COMPARE_PLAYERS, "value"),
        Input(ids.COMPARE_SEASON, "value"),
        Input(ids.COMPARE_TYPE, "value"),
        Input(ids.COMPARE_K, "value"),
    )
    def _difficulty(players, season, attempt_type, k):
        return update_difficulty(service, players, season, attempt_type, k)

    @app.callback(
        Output(ids.COMPARE_PLAYERS, "options"),
        Input(ids.COMPARE_SEASON, "value"),
        Input(ids.COMPARE_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _options(season, attempt_type):
        return player_options(service, filter_value(season), attempt_type)

    @app.callback(
        Output(ids.URL, "search", allow_duplicate=True),
        Input(ids.COMPARE_PLAYERS, "value"),
        Input(ids.COMPARE_SEASON, "value"),
        Input(ids.COMPARE_TYPE, "value"),
        Input(ids.COMPARE_K, "value"),
        State(ids.URL, "search"),
        prevent_initial_call=True,
    )
    def _url(players, season, attempt_type, k, search):
        return url_for_compare(search, players, season, attempt_type, k)
