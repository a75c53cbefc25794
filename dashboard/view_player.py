"""One player's season: every game's makes and misses, runs, and how long runs get by chance.

- the game strip: one column per game, one cell per attempt (make dark blue,
  miss light grey, makes inside a run of at least R orange);
- the hot-state probability of every attempt, when the hot-state model is
  available;
- the longest run of makes in any one game, against its exact distribution
  when each game's makes are shuffled inside the game;
- rates after k makes and after k misses against the permutation null.
"""

from __future__ import annotations

import importlib.util

import numpy as np
import plotly.graph_objects as go
from dash import Input, Output, State, dcc, html, no_update

from streakwise.analysis import PlayerSequences, rates_figure
from streakwise.analysis.runs import season_longest_run_distribution

from . import ids, theme
from .briefing import player_briefing_html
from .cautions import caution_box
from .controls import (
    ALL,
    control,
    filter_value,
    fmt_count,
    fmt_p,
    fmt_percent,
    player_options,
    season_dropdown,
    type_dropdown,
    unavailable,
)
from .service import DashboardService
from .urls import query_int, query_list, update_query

__all__ = [
    "DEFAULT_RUN",
    "NAME",
    "PATH",
    "TITLE",
    "game_strip_figure",
    "hot_state_figure",
    "hot_state_panel",
    "layout",
    "longest_run_figure",
    "player_briefing",
    "register",
    "run_lengths",
    "season_longest_run",
    "summary_children",
    "update_player",
    "url_for_player",
]

NAME = "player"
PATH = "/player"
TITLE = "One player's season"

#: Runs of at least this many makes are highlighted unless the address says otherwise.
DEFAULT_RUN = 4


def layout(service: DashboardService, params: dict[str, str]) -> html.Div:
    season = params.get("season", ALL)
    chosen_type = params.get("type")
    attempt_type = chosen_type or service.default_attempt_type()
    options = player_options(service, filter_value(season), attempt_type)
    known = [o["value"] for o in options]
    wanted = params.get("player") or next(iter(query_list(params, "players")), None)
    player = wanted if wanted in known else (known[0] if known else None)
    run = query_int(params, "run", DEFAULT_RUN, low=2, high=30)
    return html.Div(
        [
            html.H1(TITLE),
            html.P(
                "Every game of the season as a column of attempts, with the runs of makes marked, and the longest "
                "run set against what shuffling each game's makes inside the game gives.",
                className="sw-lead",
            ),
            caution_box(),
            html.Div(
                [
                    control("Player", dcc.Dropdown(id=ids.PLAYER_PLAYER, options=options, value=player, clearable=False), wide=True),
                    control("Season", season_dropdown(ids.PLAYER_SEASON, service, season)),
                    control("Attempt type", type_dropdown(ids.PLAYER_TYPE, service, chosen_type)),
                    control("Mark runs of at least", dcc.Input(id=ids.PLAYER_RUN, type="number", min=2, max=30, step=1, value=run,
                                                             debounce=True), html_for=ids.PLAYER_RUN),
                    html.Button("Export player briefing (HTML)", id=ids.PLAYER_BRIEFING, className="sw-button sw-secondary", n_clicks=0),
                    dcc.Download(id=ids.PLAYER_BRIEFING_DOWNLOAD),
                ],
                className="sw-controls",
            ),
            html.Div(id=ids.PLAYER_SUMMARY),
            dcc.Loading(
                [
                    html.Div(dcc.Graph(id=ids.PLAYER_STRIP_GRAPH, config={"displaylogo": False}), className="sw-card"),
                    html.Div(
                        [
                            html.Div(dcc.Graph(id=ids.PLAYER_LONGEST_GRAPH, config={"displaylogo": False}), className="sw-card"),
                            html.Div(dcc.Graph(id=ids.PLAYER_RATES_GRAPH, config={"displaylogo": False}), className="sw-card"),
                        ],
                        className="sw-grid",
                    ),
                ],
                delay_show=300,
            ),
            html.H2("Hot and cold states"),
            dcc.Loading(html.Div(id=ids.PLAYER_HOT_STATE), delay_show=300),
        ]
    )


# -- pure helpers ----------------------------------------------------------------


def run_lengths(made: np.ndarray) -> np.ndarray:
    """For each attempt of one game, the length of the run of makes it is in (0 for a miss)."""
    made = np.asarray(made).astype(bool)
    out = np.zeros(made.size, dtype=np.int64)
    start = None
    for i, value in enumerate(made.tolist() + [False]):
        if value and start is None:
            start = i
        elif not value and start is not None:
            out[start:i] = i - start
            start = None
    return out


def game_strip_figure(sequences: PlayerSequences, label: str, run: int) -> go.Figure:
    """Each game's makes and misses (games left to right, attempts top to bottom)."""
    games = len(sequences)
    if games == 0:
        return theme.empty_figure("No games under these filters.")
    lengths = sequences.lengths
    depth = int(lengths.max())
    z = np.zeros((depth, games))
    text = np.full((depth, games), "", dtype=object)
    runs_marked = 0
    for g in range(games):
        outcome = sequences.session(g)
        lengths_here = run_lengths(outcome)
        runs_marked += int(np.sum((np.diff(np.r_[0, (lengths_here >= run).astype(int)]) == 1)))
        for i, made in enumerate(outcome.tolist()):
            in_run = made and lengths_here[i] >= run
            z[i, g] = 3 if in_run else (2 if made else 1)
            what = "make" if made else "miss"
            extra = f", in a run of {lengths_here[i]} makes" if made and lengths_here[i] > 1 else ""
            text[i, g] = f"game {g + 1} ({sequences.games[g]})<br>attempt {i + 1}: {what}{extra}"
    colours = [
        [0.0, theme.NO_ATTEMPT], [1 / 6, theme.NO_ATTEMPT],
        [1 / 6, theme.MISS], [1 / 2, theme.MISS],
        [1 / 2, theme.MAKE], [5 / 6, theme.MAKE],
        [5 / 6, theme.RUN], [1.0, theme.RUN],
    ]
    figure = go.Figure(go.Heatmap(
        z=z, x=np.arange(1, games + 1), y=np.arange(1, depth + 1), zmin=0, zmax=3, colorscale=colours, showscale=False,
        xgap=1, ygap=1, text=text, hovertemplate="%{text}<extra></extra>",
    ))
    for name, colour in (("make", theme.MAKE), ("miss", theme.MISS), (f"make in a run of {run} or more", theme.RUN)):
        figure.add_trace(go.Scatter(x=[None], y=[None], mode="markers", name=name,
                                    marker=dict(symbol="square", size=12, color=colour, line=dict(color="#888888", width=0.5))))
    figure.update_yaxes(title="attempt in the game", autorange="reversed", showgrid=False, zeroline=False)
    figure.update_xaxes(title=f"game (season order, {games} games)", showgrid=False, zeroline=False)
    theme.apply_figure_style(
        figure, height=max(300, 14 * depth + 170),
        title=f"{label}: every game's makes and misses ({runs_marked} run{'s' if runs_marked != 1 else ''} of {run}+ makes marked)",
    )
    figure.update_layout(plot_bgcolor="#ffffff", legend=dict(y=-0.25))
    return figure


def season_longest_run(sequences: PlayerSequences) -> tuple[int, np.ndarray]:
    """The longest run of makes in any one game, and its distribution under within-game shuffles.

    Returns ``(observed, pmf)``; the distribution comes from
    :func:`streakwise.analysis.runs.season_longest_run_distribution`.
    """
    observed = max((int(run_lengths(sequences.session(g)).max(initial=0)) for g in range(len(sequences))), default=0)
    return observed, season_longest_run_distribution(sequences.lengths, sequences.makes)


def longest_run_figure(observed: int, pmf: np.ndarray, label: str) -> go.Figure:
    """Bars of the longest in-game run under within-game shuffles, the observed run marked."""
    if pmf.size == 0 or pmf.sum() <= 0:
        return theme.empty_figure("No makes under these filters.")
    keep = np.flatnonzero(pmf > 1e-5)
    low, high = int(keep.min()), max(int(keep.max()), observed)
    lengths = np.arange(low, high + 1)
    probabilities = np.array([pmf[r] if r < pmf.size else 0.0 for r in lengths])
    tail = float(pmf[observed:].sum()) if observed < pmf.size else 0.0
    colours = [theme.RUN if r >= observed else theme.AFTER_MAKES for r in lengths]
    figure = go.Figure(go.Bar(
        x=lengths, y=probabilities, marker_color=colours, marker_line_color="#000000", marker_line_width=0.5,
        hovertemplate="longest run %{x}: probability %{y:.4f}<extra></extra>", name="chance alone",
    ))
    figure.add_vline(x=observed - 0.5, line=dict(color=theme.OBSERVED, dash="dash", width=1.5))
    figure.add_annotation(
        x=0.99, y=0.99, xref="paper", yref="paper", text=f"observed longest run: {observed}<br>chance of {observed} or longer: {tail:.3g}",
        showarrow=False, xanchor="right", yanchor="top", align="right", bgcolor="rgba(255,255,255,0.9)",
        bordercolor="#999999", borderwidth=1,
    )
    figure.update_xaxes(title="longest run of makes in any one game", dtick=1)
    figure.update_yaxes(title="probability")
    theme.apply_figure_style(figure, height=400, title="Longest run in a game: observed against within-game shuffles")
    figure.update_layout(showlegend=False, bargap=0.1)
    return figure


def summary_children(label: str, team: str | None, result, observed: int, tail: float) -> html.Div:
    if result is None:
        return html.P("No attempts under these filters.")
    runs = result.test("runs")
    items = [
        ("attempts", fmt_count(result.attempts)),
        ("games", fmt_count(result.sessions)),
        ("make rate", fmt_percent(result.make_rate)),
        (f"longest run of makes in a game; by chance one this long or longer: {tail:.3g}", str(observed)),
        (f"runs of makes and misses (chance alone: {runs.null_mean:.0f}; fewer is streakier), p {fmt_p(runs.p_value)}"
         if runs.null_mean is not None else "runs of makes and misses", fmt_count(runs.observed)),
    ]
    return html.Div(
        [html.Div([html.Div(label, className="sw-value"), html.Div(team or "", className="sw-what")], className="sw-number")]
        + [html.Div([html.Div(value, className="sw-value"), html.Div(what, className="sw-what")], className="sw-number")
           for what, value in items],
        className="sw-numbers",
    )


def hot_state_figure(sequences: PlayerSequences, probability: np.ndarray, label: str) -> go.Figure:
    """P(hot state) of every attempt, laid out like the game strip."""
    games = len(sequences)
    depth = int(sequences.lengths.max())
    z = np.full((depth, games), np.nan)
    text = np.full((depth, games), "", dtype=object)
    for g in range(games):
        start, stop = int(sequences.offsets[g]), int(sequences.offsets[g + 1])
        for i, position in enumerate(range(start, stop)):
            z[i, g] = probability[position]
            what = "make" if sequences.made[position] else "miss"
            text[i, g] = f"game {g + 1} ({sequences.games[g]})<br>attempt {i + 1}: {what}<br>P(hot) {probability[position]:.2f}"
    figure = go.Figure(go.Heatmap(
        z=z, x=np.arange(1, games + 1), y=np.arange(1, depth + 1), zmin=0, zmax=1, colorscale=theme.PROBABILITY_SCALE,
        xgap=1, ygap=1, text=text, hovertemplate="%{text}<extra></extra>",
        colorbar=dict(title=dict(text="P(hot)", side="right"), thickness=12, len=0.9),
    ))
    figure.update_yaxes(title="attempt in the game", autorange="reversed", showgrid=False, zeroline=False)
    figure.update_xaxes(title="game (season order)", showgrid=False, zeroline=False)
    theme.apply_figure_style(figure, height=max(300, 14 * depth + 150),
                             title=f"{label}: probability that each attempt came in the model's hot state")
    figure.update_layout(plot_bgcolor="#ffffff")
    return figure


HOT_STATE_CAUTION = (
    "A two-state model always finds a 'hot' and a 'cold' state, also in a shooter with no hot hand, and "
    "game-to-game form looks like hot and cold states too. The model's test against a single state (which "
    "refits it on within-game shuffles) takes minutes and is not run here, so read this picture as a "
    "description of the season, not as evidence of a hot hand."
)


def hot_state_panel(service: DashboardService, player, season, attempt_type) -> html.Div:
    """The hot-state probability per attempt (or a labelled placeholder when the model is missing)."""
    return service.remember(("hot_state_panel", player, filter_value(season), attempt_type),
                            lambda: _hot_state_panel(service, player, season, attempt_type))


def _hot_state_panel(service: DashboardService, player, season, attempt_type) -> html.Div:
    if importlib.util.find_spec("streakwise.analysis.hotstate") is None:
        return unavailable(
            "Hot-state probability",
            "the hidden hot-state model (streakwise.analysis.hotstate) is not part of this version yet; when it is, "
            "this panel shows the probability that each attempt was taken in a hot state.",
        )
    season = filter_value(season)
    sequences = service.sequences(player, season, attempt_type) if player else None
    if sequences is None:
        return html.Div()
    result = service.hot_state(player, season, attempt_type)
    label = service.player_label(player, season, attempt_type)

    def interval(name):
        value = result.intervals.get(name)
        return "" if value is None else f" ({fmt_percent(value[0])} to {fmt_percent(value[1])})"

    facts = (
        f"Hot state: makes {fmt_percent(result.hot_rate)}{interval('hot_rate')}, stays hot from one attempt to the next "
        f"{fmt_percent(result.stay_hot)} of the time; cold state: makes {fmt_percent(result.cold_rate)}{interval('cold_rate')}, "
        f"stays cold {fmt_percent(result.stay_cold)}. Share of attempts in the hot state (long run): {fmt_percent(result.hot_share)}."
    )
    return html.Div(
        [
            dcc.Graph(figure=hot_state_figure(sequences, result.hot_probability, label), config={"displaylogo": False}),
            html.P(facts, className="sw-note"),
            html.P([html.Strong("Caution: "), HOT_STATE_CAUTION], className="sw-note"),
            *[html.P(w, className="sw-note") for w in result.warnings],
        ],
        className="sw-card",
    )


def update_player(service: DashboardService, player, season, attempt_type, run):
    """The callback's work: (summary, strip figure, longest-run figure, rates figure)."""
    season = filter_value(season)
    try:
        run = min(30, max(2, int(run)))
    except (TypeError, ValueError):
        run = DEFAULT_RUN
    return service.remember(("player", player, season, attempt_type, run),
                            lambda: _player_outputs(service, player, season, attempt_type, run))


def _player_outputs(service: DashboardService, player, season, attempt_type, run):
    if not player:
        empty = theme.empty_figure("Choose a player.")
        return html.P("Choose a player."), empty, empty, empty
    sequences = service.sequences(player, season, attempt_type)
    if sequences is None:
        empty = theme.empty_figure("No attempts under these filters.")
        return html.P("No attempts under these filters."), empty, empty, empty
    label = service.player_label(player, season, attempt_type)
    roster = service.players(season, attempt_type)
    team = roster.loc[roster["player"] == player, "team"]
    team = str(team.iloc[0]) if len(team) and team.iloc[0] == team.iloc[0] and team.iloc[0] is not None else None
    result = service.player_test(player, season, attempt_type)
    observed, pmf = season_longest_run(sequences)
    tail = float(pmf[observed:].sum()) if observed < pmf.size else 0.0
    rates = rates_figure(result)
    theme.apply_figure_style(rates, height=400, title="Hit rate after k makes and after k misses, against chance")
    return (
        summary_children(label, team, result, observed, tail),
        game_strip_figure(sequences, label, run),
        longest_run_figure(observed, pmf, label),
        rates,
    )


def _safe(text: str) -> str:
    return "".join(c if c.isalnum() or c in "-_." else "-" for c in str(text))


def player_briefing(service: DashboardService, player, season, attempt_type) -> dict | None:
    """The player's briefing as a download (``dcc.Download`` data), or None without attempts.

    Uses the dashboard's seed and permutations, so the briefing's numbers are
    the ones on the screen; q-values come from the saved league scan when
    there is one.
    """
    season = filter_value(season)
    if not player:
        return None
    frame = service.attempts(player, season, attempt_type)
    if frame.empty:
        return None
    scan = service.scan(season, attempt_type).payload
    if scan is not None and not any(str(p.get("player")) == player for p in scan.get("players", ())):
        scan = None
    s = service.settings
    text = player_briefing_html(frame, player, attempt_type=attempt_type, permutations=s.permutations, seed=s.seed,
                                max_k=s.max_k, scan=scan, data_version=service.data_version())
    filename = f"streakwise-briefing-{_safe(player)}-{_safe(season or 'all-seasons')}.html"
    return dict(content=text, filename=filename, type="text/html")


def url_for_player(search, player, season, attempt_type, run) -> str:
    return update_query(search, player=player, season=filter_value(season), type=attempt_type, run=run)


def register(app, service: DashboardService) -> None:
    @app.callback(
        Output(ids.PLAYER_SUMMARY, "children"),
        Output(ids.PLAYER_STRIP_GRAPH, "figure"),
        Output(ids.PLAYER_LONGEST_GRAPH, "figure"),
        Output(ids.PLAYER_RATES_GRAPH, "figure"),
        Input(ids.PLAYER_PLAYER, "value"),
        Input(ids.PLAYER_SEASON, "value"),
        Input(ids.PLAYER_TYPE, "value"),
        Input(ids.PLAYER_RUN, "value"),
    )
    def _update(player, season, attempt_type, run):
        return update_player(service, player, season, attempt_type, run)

    @app.callback(
        Output(ids.PLAYER_HOT_STATE, "children"),
        Input(ids.PLAYER_PLAYER, "value"),
        Input(ids.PLAYER_SEASON, "value"),
        Input(ids.PLAYER_TYPE, "value"),
    )
    def _hot_state(player, season, attempt_type):
        return hot_state_panel(service, player, season, attempt_type)

    @app.callback(
        Output(ids.PLAYER_BRIEFING_DOWNLOAD, "data"),
        Input(ids.PLAYER_BRIEFING, "n_clicks"),
        State(ids.PLAYER_PLAYER, "value"),
        State(ids.PLAYER_SEASON, "value"),
        State(ids.PLAYER_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _briefing(clicks, player, season, attempt_type):
        if not clicks:
            return no_update
        return player_briefing(service, player, season, attempt_type) or no_update

    @app.callback(
        Output(ids.PLAYER_PLAYER, "options"),
        Input(ids.PLAYER_SEASON, "value"),
        Input(ids.PLAYER_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _options(season, attempt_type):
        return player_options(service, filter_value(season), attempt_type)

    @app.callback(
        Output(ids.URL, "search", allow_duplicate=True),
        Input(ids.PLAYER_PLAYER, "value"),
        Input(ids.PLAYER_SEASON, "value"),
        Input(ids.PLAYER_TYPE, "value"),
        Input(ids.PLAYER_RUN, "value"),
        State(ids.URL, "search"),
        prevent_initial_call=True,
    )
    def _url(player, season, attempt_type, run, search):
        return url_for_player(search, player, season, attempt_type, run)
