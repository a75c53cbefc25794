"""Streak odds: check a streak claim against chance, as a form.

The answer gives the chance for this player in a season like this one, the
chance that anyone in a league of such players does it, the expected count,
a plain sentence and the caution (``streakwise.analysis.claims``). The
shooter is a player from the store (their make rate and games) or numbers
typed in.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

from dash import Input, Output, State, dcc, html, no_update

from streakwise.analysis import ClaimResult, check_game_streak_claim, check_run_claim, check_window_claim
from streakwise.cli.odds_commands import game_attempts_from_store, parse_attempt_list, parse_rate
from streakwise.ingest import InputError

from . import ids
from .cautions import caution_box
from .controls import ALL, control, filter_value, fmt_percent, player_options, season_dropdown, type_dropdown
from .service import DashboardService
from .urls import query_int, update_query

__all__ = [
    "CLAIM_KINDS",
    "ClaimForm",
    "NAME",
    "PATH",
    "TITLE",
    "answer_children",
    "check_claim",
    "form_from_params",
    "layout",
    "register",
    "shooter_fields_disabled",
    "update_odds",
    "url_for_odds",
]

NAME = "odds"
PATH = "/odds"
TITLE = "Streak odds"

#: The claims the form checks (value -> label).
CLAIM_KINDS = {
    "run": "R or more makes in a row",
    "miss_run": "R or more misses in a row",
    "window": "at least X makes in some Y straight attempts",
    "each_game": "at least X makes in each of G games in a row",
}


@dataclass(frozen=True)
class ClaimForm:
    """The form's values (what the address keeps)."""

    kind: str = "run"
    run: int | None = 8
    window: int | None = 10
    at_least: int | None = 8
    games_in_a_row: int | None = 3
    shooter: str = "player"
    player: str | None = None
    season: str | None = None
    attempt_type: str | None = None
    rate: str | None = "0.45"
    attempts: str | None = "15"
    games: int | None = 70
    league_players: int | None = 1
    seasons: int | None = 1
    across_games: bool = False


@dataclass(frozen=True)
class ClaimAnswer:
    """A checked claim and what the view says around it."""

    result: ClaimResult
    shooter: str
    notes: tuple[str, ...] = field(default=())


def _int(value) -> int | None:
    try:
        return int(value)
    except (TypeError, ValueError):
        return None


def form_from_params(service: DashboardService, params: dict[str, str]) -> ClaimForm:
    """The form as the address gives it (defaults filled in from the store)."""
    attempt_type = params.get("type") or service.default_attempt_type()
    season = filter_value(params["season"]) if "season" in params else service.latest_season(attempt_type)
    roster = service.players(season, attempt_type)
    eligible = int((roster["attempts"] >= service.settings.min_attempts).sum()) if len(roster) else 0
    player = params.get("player")
    if player not in set(roster["player"]):
        ranked = roster.sort_values(["attempts", "player"], ascending=[False, True])
        player = str(ranked["player"].iloc[0]) if len(ranked) else None
    kind = params.get("claim", "run")
    return ClaimForm(
        kind=kind if kind in CLAIM_KINDS else "run",
        run=query_int(params, "r", 8, low=1),
        window=query_int(params, "y", 10, low=1),
        at_least=query_int(params, "x", 8, low=1),
        games_in_a_row=query_int(params, "g", 3, low=1),
        shooter="numbers" if params.get("shooter") == "numbers" or player is None else "player",
        player=player,
        season=season,
        attempt_type=attempt_type,
        rate=params.get("rate", "0.45"),
        attempts=params.get("attempts", "15"),
        games=query_int(params, "games", 70, low=1),
        league_players=query_int(params, "league", max(1, eligible), low=1),
        seasons=query_int(params, "seasons", 1, low=1),
        across_games=params.get("across") == "1",
    )


def layout(service: DashboardService, params: dict[str, str]) -> html.Div:
    form = form_from_params(service, params)
    options = player_options(service, form.season, form.attempt_type)
    return html.Div(
        [
            html.H1(TITLE),
            html.P(
                "How often does chance alone produce a streak like this one? Describe the streak and the shooter; "
                "the answer is for a steady shooter of the same make rate whose attempts are independent, in a "
                "season of the same games.",
                className="sw-lead",
            ),
            caution_box(),
            html.Div(
                [
                    control("The claim", dcc.RadioItems(id=ids.ODDS_KIND, value=form.kind,
                                                        options=[{"label": v, "value": k} for k, v in CLAIM_KINDS.items()]), wide=True),
                    control("R (in a row)", dcc.Input(id=ids.ODDS_RUN, type="number", min=1, step=1, value=form.run), html_for=ids.ODDS_RUN),
                    control("X (makes)", dcc.Input(id=ids.ODDS_AT_LEAST, type="number", min=1, step=1, value=form.at_least), html_for=ids.ODDS_AT_LEAST),
                    control("Y (straight attempts)", dcc.Input(id=ids.ODDS_WINDOW, type="number", min=1, step=1, value=form.window), html_for=ids.ODDS_WINDOW),
                    control("G (games in a row)", dcc.Input(id=ids.ODDS_GAMES_IN_A_ROW, type="number", min=1, step=1, value=form.games_in_a_row),
                            html_for=ids.ODDS_GAMES_IN_A_ROW),
                ],
                className="sw-controls",
            ),
            html.Div(
                [
                    control("The shooter", dcc.RadioItems(id=ids.ODDS_SHOOTER, value=form.shooter, options=[
                        {"label": "a player in the store", "value": "player"},
                        {"label": "numbers I give", "value": "numbers"},
                    ])),
                    control("Player", dcc.Dropdown(id=ids.ODDS_PLAYER, options=options, value=form.player, clearable=False), wide=True),
                    control("Season", season_dropdown(ids.ODDS_SEASON, service, form.season or ALL)),
                    control("Attempt type", type_dropdown(ids.ODDS_TYPE, service, form.attempt_type)),
                    control("Make rate", dcc.Input(id=ids.ODDS_RATE, type="text", value=form.rate, placeholder="0.45, 45% or 45/100"),
                            html_for=ids.ODDS_RATE),
                    control("Attempts a game", dcc.Input(id=ids.ODDS_ATTEMPTS, type="text", value=form.attempts, placeholder="15, or 12,15,9,…"),
                            html_for=ids.ODDS_ATTEMPTS),
                    control("Games", dcc.Input(id=ids.ODDS_GAMES, type="number", min=1, step=1, value=form.games), html_for=ids.ODDS_GAMES),
                ],
                className="sw-controls",
            ),
            html.Div(
                [
                    control("Players like this in the league", dcc.Input(id=ids.ODDS_LEAGUE_PLAYERS, type="number", min=1, step=1,
                                                                       value=form.league_players), html_for=ids.ODDS_LEAGUE_PLAYERS),
                    control("Seasons", dcc.Input(id=ids.ODDS_SEASONS, type="number", min=1, step=1, value=form.seasons), html_for=ids.ODDS_SEASONS),
                    control("Runs may continue", dcc.Checklist(id=ids.ODDS_ACROSS, value=["across"] if form.across_games else [],
                                                               options=[{"label": "from one game into the next", "value": "across"}])),
                    html.Button("Check the claim", id=ids.ODDS_CHECK, className="sw-button", n_clicks=0),
                ],
                className="sw-controls",
            ),
            dcc.Loading(html.Div(id=ids.ODDS_ANSWER), delay_show=300),
        ]
    )


# -- pure helpers ----------------------------------------------------------------


def _need(value, name: str, minimum: int = 1) -> int:
    number = _int(value)
    if number is None or number < minimum:
        raise InputError(f"must be a whole number of at least {minimum}", path=name)
    return number


def _shooter(service: DashboardService, form: ClaimForm):
    """(rate, game attempts, description, notes) from the store or from the form."""
    if form.shooter == "player":
        if not form.player:
            raise InputError("choose a player, or give the shooter's numbers", path="Player")
        frame = service.attempts(form.player, form.season, form.attempt_type)
        if frame.empty:
            raise InputError(f"no {form.attempt_type} attempts for {form.player} under these filters", path="Player")
        makes, total, games = game_attempts_from_store(frame)
        if makes == 0:
            raise InputError(f"{form.player} has no makes here: a 0% shooter has no runs of makes", path="Player")
        label = service.player_label(form.player, form.season, form.attempt_type)
        notes = [f"The make rate ({makes}/{total}) and the games come from the stored data, which include the streak being checked."]
        seasons = frame["season"].dropna().nunique()
        if form.season is None and seasons > 1:
            notes.append(f"The stored games span {seasons} seasons and are treated as one season here; choose a season to check one.")
        return Fraction(makes, total), games, f"{label}, {fmt_percent(makes / total)} make rate, {len(games)} games", notes
    rate = parse_rate(form.rate or "", option="Make rate")
    games = parse_attempt_list(form.attempts or "", _int(form.games), option="Attempts a game")
    if sum(games) == 0:
        raise InputError("the games hold no attempts", path="Attempts a game")
    return rate, games, f"a {fmt_percent(float(rate))} shooter, {len(games)} games", []


def check_claim(service: DashboardService, form: ClaimForm) -> ClaimAnswer:
    """Check the form's claim (InputError names the field that is wrong)."""
    rate, games, shooter, notes = _shooter(service, form)
    league = _need(form.league_players, "Players like this in the league")
    seasons = _need(form.seasons, "Seasons")
    common = dict(league_players=league, seasons=seasons)
    longest = sum(games) if form.across_games else max(games)
    where = "the season's attempts" if form.across_games else "the longest game's attempts"
    if form.kind in ("run", "miss_run"):
        run = _need(form.run, "R (in a row)")
        if run > longest:
            raise InputError(f"{run} in a row is more than {where} ({longest})", path="R (in a row)")
        result = check_run_claim(run, rate, games, misses=form.kind == "miss_run", across_games=form.across_games, **common)
    elif form.kind == "window":
        window = _need(form.window, "Y (straight attempts)")
        at_least = _need(form.at_least, "X (makes)")
        if at_least > window:
            raise InputError(f"X ({at_least}) cannot exceed Y ({window})", path="X (makes)")
        if window > longest:
            raise InputError(f"{window} straight attempts is more than {where} ({longest})", path="Y (straight attempts)")
        result = check_window_claim(window, at_least, rate, games, across_games=form.across_games, rng=service.settings.seed, **common)
    elif form.kind == "each_game":
        at_least = _need(form.at_least, "X (makes)")
        in_a_row = _need(form.games_in_a_row, "G (games in a row)")
        if in_a_row > len(games):
            raise InputError(f"{in_a_row} games in a row, but the season has {len(games)} games", path="G (games in a row)")
        if at_least > max(games):
            raise InputError(f"{at_least} makes is more than any game's attempts ({max(games)})", path="X (makes)")
        if form.across_games:
            notes = [*notes, "A streak of games already spans games: 'runs may continue' does not apply."]
        result = check_game_streak_claim(at_least, in_a_row, rate, games, **common)
    else:
        raise InputError(f"unknown claim {form.kind!r}", path="The claim")
    return ClaimAnswer(result=result, shooter=shooter, notes=tuple(notes))


def _number(what: str, value: str) -> html.Div:
    return html.Div([html.Div(value, className="sw-value"), html.Div(what, className="sw-what")], className="sw-number")


def _chance(p: float) -> str:
    if p >= 0.9995:
        return "almost certain (>99.9%)"
    if p < 0.001:
        return f"{p:.2g}" if p > 0 else "0"
    return fmt_percent(p)


def _count(x: float) -> str:
    return f"{x:.3g}" if x < 100 else f"{x:,.0f}"


def answer_children(answer: ClaimAnswer) -> html.Div:
    r = answer.result
    occurrence = r.occurrence
    numbers = [
        _number("chance this player does it at least once in one season", _chance(r.probability_player)),
        _number(f"chance that at least one of {r.players:,} such players does it in one season", _chance(r.probability_league)),
        _number(f"expected {occurrence}s with it for this player, per season", _count(r.expected_player)),
        _number(f"expected {occurrence}s with it across the league, per season", _count(r.expected_league)),
    ]
    if r.seasons != 1:
        numbers += [
            _number(f"chance for this player over {r.seasons} seasons", _chance(r.probability_player_span)),
            _number(f"chance for anyone in the league over {r.seasons} seasons", _chance(r.probability_league_span)),
        ]
    notes = [*r.notes, *answer.notes]
    return html.Div(
        [
            html.Div([html.Strong("Claim: "), r.claim], className="sw-claim"),
            html.Div([html.Strong("Shooter: "), answer.shooter], className="sw-note"),
            html.Div(numbers, className="sw-numbers"),
            html.P(r.sentence, className="sw-sentence"),
            html.P([html.Strong("Caution: "), r.caution], className="sw-caution-line"),
            html.Ul([html.Li(n) for n in notes], className="sw-note") if notes else None,
            html.P(f"Method: {r.method}.", className="sw-note"),
        ],
        className="sw-answer",
        id="odds-answer-card",
    )


def update_odds(service: DashboardService, form: ClaimForm):
    """The callback's work: the answer, or the problem with the form."""
    try:
        answer = check_claim(service, form)
    except InputError as exc:
        return html.Div([html.Span("Cannot check this claim: ", className="sw-error"), html.Span(f"{exc.path}: {exc.reason}")],
                        className="sw-answer")
    return answer_children(answer)


def shooter_fields_disabled(shooter: str) -> tuple[bool, ...]:
    """Which fields are off: the player's when numbers are given, the numbers when a player is chosen."""
    from_store = shooter != "numbers"
    return (not from_store,) * 3 + (from_store,) * 3


def url_for_odds(search, form: ClaimForm) -> str:
    return update_query(
        search, claim=form.kind, r=form.run, x=form.at_least, y=form.window, g=form.games_in_a_row,
        shooter=form.shooter, player=form.player if form.shooter == "player" else None, season=form.season,
        type=form.attempt_type, rate=form.rate if form.shooter == "numbers" else None,
        attempts=form.attempts if form.shooter == "numbers" else None,
        games=form.games if form.shooter == "numbers" else None, league=form.league_players, seasons=form.seasons,
        across="1" if form.across_games else None,
    )


_FORM_STATES = (
    ids.ODDS_KIND, ids.ODDS_RUN, ids.ODDS_WINDOW, ids.ODDS_AT_LEAST, ids.ODDS_GAMES_IN_A_ROW, ids.ODDS_SHOOTER,
    ids.ODDS_PLAYER, ids.ODDS_SEASON, ids.ODDS_TYPE, ids.ODDS_RATE, ids.ODDS_ATTEMPTS, ids.ODDS_GAMES,
    ids.ODDS_LEAGUE_PLAYERS, ids.ODDS_SEASONS, ids.ODDS_ACROSS,
)


def _form(kind, run, window, at_least, in_a_row, shooter, player, season, attempt_type, rate, attempts, games,
          league, seasons, across) -> ClaimForm:
    return ClaimForm(
        kind=kind, run=_int(run), window=_int(window), at_least=_int(at_least), games_in_a_row=_int(in_a_row),
        shooter=shooter, player=player, season=filter_value(season), attempt_type=attempt_type, rate=rate,
        attempts=attempts, games=_int(games), league_players=_int(league), seasons=_int(seasons),
        across_games="across" in (across or []),
    )


def register(app, service: DashboardService) -> None:
    @app.callback(
        Output(ids.ODDS_ANSWER, "children"),
        Output(ids.URL, "search", allow_duplicate=True),
        Input(ids.ODDS_CHECK, "n_clicks"),
        *[State(i, "value") for i in _FORM_STATES],
        State(ids.URL, "search"),
        prevent_initial_call="initial_duplicate",
    )
    def _check(n_clicks, *values):
        *form_values, search = values
        form = _form(*form_values)
        search_out = url_for_odds(search, form) if n_clicks else no_update
        return update_odds(service, form), search_out

    @app.callback(
        Output(ids.ODDS_PLAYER, "disabled"),
        Output(ids.ODDS_SEASON, "disabled"),
        Output(ids.ODDS_TYPE, "disabled"),
        Output(ids.ODDS_RATE, "disabled"),
        Output(ids.ODDS_ATTEMPTS, "disabled"),
        Output(ids.ODDS_GAMES, "disabled"),
        Input(ids.ODDS_SHOOTER, "value"),
    )
    def _shooter_fields(shooter):
        return shooter_fields_disabled(shooter)

    @app.callback(
        Output(ids.ODDS_PLAYER, "options"),
        Input(ids.ODDS_SEASON, "value"),
        Input(ids.ODDS_TYPE, "value"),
        prevent_initial_call=True,
    )
    def _options(season, attempt_type):
        return player_options(service, filter_value(season), attempt_type)
