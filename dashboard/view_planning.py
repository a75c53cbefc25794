"""Planning: how much data a streak test needs (power curves, games needed).

The planner (``streakwise.analysis.power``) simulates seasons of a shooter
with a known hot hand and counts how often each test finds it. It runs as a
background job of the server (progress and cancel), like league scans; the
numbers it needs come from the form, not from the store.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass

from dash import Input, Output, State, dcc, html, no_update

from . import ids, theme
from .cautions import caution_box
from .controls import control, fmt_count, simple_table, unavailable
from .service import DashboardService
from .urls import update_query

try:  # the planner is part of streakwise.analysis from this version on
    from streakwise.analysis.power import PLAN_CAVEATS, games_needed, estimate_power, power_curve_figure
except ImportError:  # pragma: no cover - only while the planner is missing
    estimate_power = games_needed = power_curve_figure = None
    PLAN_CAVEATS = ()

__all__ = [
    "NAME",
    "PATH",
    "PlanSpec",
    "TITLE",
    "layout",
    "plan_outputs",
    "poll_plan",
    "register",
    "run_plan",
    "spec_from_form",
    "start_plan",
]

NAME = "planning"
PATH = "/planning"
TITLE = "Planning"

POLL_MS = 500
#: Progress units of a plan: the power grid, then the games search.
_UNITS = 1000


@dataclass(frozen=True)
class PlanSpec:
    """The planner's settings from the form (the job key is a hash of them)."""

    model: str = "hidden"
    rate: float = 0.45
    attempts_per_game: int = 15
    persistence: float = 0.9
    effects: tuple[float, ...] = (0.0, 0.1, 0.2, 0.3, 0.4)
    games: tuple[int, ...] = (40, 80, 160)
    simulations: int = 200
    permutations: int = 500
    target_power: float = 0.8
    effect: float = 0.3
    seed: int = 0

    @property
    def key(self) -> str:
        return "plan-" + hashlib.sha256(json.dumps(asdict(self), sort_keys=True).encode()).hexdigest()


def _floats(text, name: str) -> tuple[float, ...]:
    try:
        values = tuple(float(v) for v in str(text).replace(";", ",").split(",") if v.strip())
    except ValueError:
        raise ValueError(f"{name}: expected numbers separated by commas (got {text!r})") from None
    if not values:
        raise ValueError(f"{name}: give at least one number")
    return values


def spec_from_form(model, rate, attempts, persistence, effects, games, simulations, permutations, target, effect, seed=0) -> PlanSpec:
    """The form's values as a :class:`PlanSpec` (ValueError says which field is wrong)."""
    named = {"Make rate": rate, "Attempts a game": attempts, "Hot state stays": persistence,
             "Simulated seasons per point": simulations, "Permutations per season": permutations,
             "Target power": target, "Effect to detect": effect}
    for name, value in named.items():
        if value is None or value == "":
            raise ValueError(f"{name}: give a number in the allowed range")
    try:
        games_values = tuple(sorted({int(g) for g in _floats(games, "Games per season")}))
    except (TypeError, ValueError) as exc:
        raise ValueError(str(exc)) from None
    spec = PlanSpec(
        model=model if model in ("hidden", "markov") else "hidden",
        rate=float(rate),
        attempts_per_game=int(attempts),
        persistence=float(persistence),
        effects=tuple(sorted(set(_floats(effects, "Effects")))),
        games=games_values,
        simulations=int(simulations),
        permutations=int(permutations),
        target_power=float(target),
        effect=float(effect),
        seed=int(seed),
    )
    if not 0 < spec.rate < 1:
        raise ValueError(f"Make rate: must be between 0 and 1 (got {spec.rate:g})")
    if spec.attempts_per_game < 1 or min(spec.games) < 1:
        raise ValueError("Attempts a game and games per season must be at least 1")
    if not 10 <= spec.simulations <= 5000 or not 50 <= spec.permutations <= 20000:
        raise ValueError("Simulations must be 10–5,000 and permutations 50–20,000")
    if not 0 < spec.target_power < 1:
        raise ValueError("Target power: must be between 0 and 1")
    return spec


def layout(service: DashboardService, params: dict[str, str]) -> html.Div:
    head = [
        html.H1(TITLE),
        html.P(
            "Before reading a test's silence as 'no streakiness', ask whether it could have found a streak of the "
            "size that matters. The planner simulates many seasons of a shooter with a known hot hand and counts "
            "how often each test finds it (its power), and searches for the games a test needs.",
            className="sw-lead",
        ),
        caution_box(*PLAN_CAVEATS[:2]),
    ]
    if estimate_power is None:
        return html.Div(head + [unavailable("The planner", "streakwise.analysis.power is not part of this version yet.")],
                        id=ids.PLANNING_BODY)
    d = PlanSpec(seed=service.settings.seed)

    def get(key, default):
        """The address's value, when it reads as the default's type."""
        try:
            return type(default)(params[key]) if key in params else default
        except ValueError:
            return default

    def number(component_id, value, **kwargs):
        return dcc.Input(id=component_id, type="number", value=value, debounce=True, **kwargs)

    form = html.Div(
        [
            control("Hot hand", dcc.RadioItems(id=ids.PLANNING_MODEL, value=get("model", d.model), options=[
                {"label": "hidden hot state (effect: hot minus cold make rate)", "value": "hidden"},
                {"label": "after a make (effect: P(make|make) − P(make|miss))", "value": "markov"},
            ]), wide=True),
            control("Make rate", number(ids.PLANNING_RATE, get("rate", d.rate), min=0.01, max=0.99, step="any"), html_for=ids.PLANNING_RATE),
            control("Attempts a game", number(ids.PLANNING_ATTEMPTS, get("apg", d.attempts_per_game), min=1, step=1),
                    html_for=ids.PLANNING_ATTEMPTS),
            control("Hot state stays (prob.)", number(ids.PLANNING_PERSISTENCE, get("stay", d.persistence), min=0, max=1, step="any"),
                    html_for=ids.PLANNING_PERSISTENCE),
        ],
        className="sw-controls",
    )
    grid = html.Div(
        [
            control("Effects (comma separated)", dcc.Input(id=ids.PLANNING_EFFECTS, type="text", debounce=True,
                                                         value=get("effects", ",".join(f"{e:g}" for e in d.effects))), html_for=ids.PLANNING_EFFECTS),
            control("Games per season (comma separated)", dcc.Input(id=ids.PLANNING_GAMES, type="text", debounce=True,
                                                                  value=get("games", ",".join(str(g) for g in d.games))), html_for=ids.PLANNING_GAMES),
            control("Simulated seasons per point", number(ids.PLANNING_SIMULATIONS, get("sims", d.simulations), min=10, max=5000, step=1),
                    html_for=ids.PLANNING_SIMULATIONS),
            control("Permutations per season", number(ids.PLANNING_PERMUTATIONS, get("perms", d.permutations), min=50, max=20000, step=1),
                    html_for=ids.PLANNING_PERMUTATIONS),
            control("Target power", number(ids.PLANNING_TARGET, get("target", d.target_power), min=0.05, max=0.99, step="any"),
                    html_for=ids.PLANNING_TARGET),
            control("Effect to detect (games needed)", number(ids.PLANNING_EFFECT, get("effect", d.effect), min=0.01, max=0.95, step="any"),
                    html_for=ids.PLANNING_EFFECT),
            html.Button("Run the planner", id=ids.PLANNING_RUN, className="sw-button", n_clicks=0),
            html.Button("Cancel", id=ids.PLANNING_CANCEL, className="sw-button sw-secondary", n_clicks=0),
        ],
        className="sw-controls",
    )
    status = html.Div(
        [html.Span(id=ids.PLANNING_STATUS), html.Progress(id=ids.PLANNING_PROGRESS, max="1", value="0")],
        className="sw-status",
    )
    results = html.Div(
        [
            html.Div(
                [
                    html.Div(dcc.Graph(id=ids.PLANNING_POWER_GRAPH, figure=theme.empty_figure("Run the planner to see power curves."),
                                       config={"displaylogo": False}), className="sw-card"),
                    html.Div(dcc.Graph(id=ids.PLANNING_ATTEMPTS_GRAPH, figure=theme.empty_figure("Power against attempts appears here."),
                                       config={"displaylogo": False}), className="sw-card"),
                ],
                className="sw-grid",
            ),
            html.H2("Games needed"),
            html.Div(id=ids.PLANNING_ANSWER),
        ]
    )
    return html.Div(
        head + [form, grid, status, dcc.Interval(id=ids.PLANNING_POLL, interval=POLL_MS, disabled=True),
                dcc.Store(id=ids.PLANNING_JOB), results],
        id=ids.PLANNING_BODY,
    )


# -- pure helpers ----------------------------------------------------------------


def run_plan(spec: PlanSpec, report) -> dict:
    """Power on the grid, then the games needed for ``spec.effect`` (D_1 and the runs test)."""
    common = dict(
        rate=spec.rate, attempts_per_game=spec.attempts_per_game, simulations=spec.simulations,
        permutations=spec.permutations, seed=spec.seed,
        persistence=spec.persistence if spec.model == "hidden" else None,
    )

    def stage(offset):
        def progress(done, planned):
            report(offset + int((_UNITS // 2) * done / max(planned, 1)))
        return progress

    power = estimate_power(spec.model, list(spec.effects), games=list(spec.games), progress=stage(0), **common)
    plan = games_needed(spec.model, spec.effect, target_power=spec.target_power, tests=["D_1", "runs"],
                        max_games=640, progress=stage(_UNITS // 2), **common)
    report(_UNITS)
    return {"power": power, "plan": plan, "spec": spec}


def plan_outputs(result: dict | None, spec: PlanSpec | None):
    """(power-vs-effect figure, power-vs-attempts figure, games-needed table)."""
    if result is None:
        return (theme.empty_figure("Run the planner to see power curves."),
                theme.empty_figure("Power against attempts appears here."), html.Div())
    power, plan = result["power"], result["plan"]
    tests = [t for t in power.tests if t in ("D_1", "D_2", "runs", "longest_run")]
    by_effect = power_curve_figure(power, against="effect", tests=tests, target_power=spec.target_power if spec else None)
    theme.apply_figure_style(by_effect, height=440, title="Power against the size of the hot hand")
    if len(power.games) > 1:
        by_attempts = power_curve_figure(power, against="attempts", tests=["D_1"], target_power=spec.target_power if spec else None)
        theme.apply_figure_style(by_attempts, height=440, title="Power of D_1 against attempts per season")
    else:
        by_attempts = theme.empty_figure("Give several numbers of games to see power against attempts.")
    rows = []
    for answer in plan.answers:
        if answer.found:
            bracket = f"{answer.low}–{answer.high}" if answer.low is not None else f"≤ {answer.high}"
            rows.append([answer.test, bracket, fmt_count(round(answer.estimate)) if answer.estimate is not None else "–",
                         fmt_count(answer.attempts_estimate) if answer.attempts_estimate is not None else "–"])
        else:
            rows.append([answer.test, "not found", "–", answer.reason or "–"])
    table = html.Div([
        html.P(f"Games (and attempts) needed for {plan.target_power:.0%} power against effect {plan.effect:g}, "
               f"at {spec.attempts_per_game if spec else '?'} attempts a game:", className="sw-note"),
        simple_table(["test", "games (bracket)", "games (estimate)", "attempts (estimate)"], rows),
    ])
    return by_effect, by_attempts, table


def start_plan(service: DashboardService, spec: PlanSpec) -> str:
    service.jobs.start(spec.key, "planner", _UNITS, lambda report, _executor: run_plan(spec, report))
    return spec.key


def poll_plan(service: DashboardService, key: str | None):
    """(status, progress value, poll disabled, figures and table or no_update)."""
    job = service.jobs.get(key) if key else None
    if job is None:
        return "", "0", True, no_update, no_update, no_update
    if job.running:
        return f"Simulating… {job.fraction:.0%} ({job.elapsed:.0f} s)", f"{job.fraction:.3f}", False, no_update, no_update, no_update
    if job.state == "done":
        spec = job.result.get("spec") if isinstance(job.result, dict) else None
        return (f"Done in {job.elapsed:.1f} s.", "1", True, *plan_outputs(job.result, spec))
    if job.state == "cancelled":
        return "Cancelled.", "0", True, no_update, no_update, no_update
    return f"The planner failed: {job.error}", "0", True, no_update, no_update, no_update


def register(app, service: DashboardService) -> None:
    if estimate_power is None:
        return

    @app.callback(
        Output(ids.PLANNING_JOB, "data"),
        Output(ids.PLANNING_POLL, "disabled"),
        Output(ids.PLANNING_STATUS, "children"),
        Output(ids.URL, "search", allow_duplicate=True),
        Input(ids.PLANNING_RUN, "n_clicks"),
        State(ids.PLANNING_MODEL, "value"),
        State(ids.PLANNING_RATE, "value"),
        State(ids.PLANNING_ATTEMPTS, "value"),
        State(ids.PLANNING_PERSISTENCE, "value"),
        State(ids.PLANNING_EFFECTS, "value"),
        State(ids.PLANNING_GAMES, "value"),
        State(ids.PLANNING_SIMULATIONS, "value"),
        State(ids.PLANNING_PERMUTATIONS, "value"),
        State(ids.PLANNING_TARGET, "value"),
        State(ids.PLANNING_EFFECT, "value"),
        State(ids.URL, "search"),
        prevent_initial_call=True,
    )
    def _run(clicks, model, rate, attempts, stay, effects, games, sims, perms, target, effect, search):
        if not clicks:
            return no_update, no_update, no_update, no_update
        try:
            spec = spec_from_form(model, rate, attempts, stay, effects, games, sims, perms, target, effect, service.settings.seed)
        except (TypeError, ValueError) as exc:
            return no_update, True, html.Span(f"Cannot plan: {exc}", className="sw-error"), no_update
        key = start_plan(service, spec)
        search = update_query(search, model=spec.model, rate=spec.rate, apg=spec.attempts_per_game, stay=spec.persistence,
                              effects=",".join(f"{e:g}" for e in spec.effects), games=",".join(map(str, spec.games)),
                              sims=spec.simulations, perms=spec.permutations, target=spec.target_power, effect=spec.effect)
        return key, False, "Starting…", search

    @app.callback(
        Output(ids.PLANNING_STATUS, "children", allow_duplicate=True),
        Output(ids.PLANNING_PROGRESS, "value"),
        Output(ids.PLANNING_POLL, "disabled", allow_duplicate=True),
        Output(ids.PLANNING_POWER_GRAPH, "figure"),
        Output(ids.PLANNING_ATTEMPTS_GRAPH, "figure"),
        Output(ids.PLANNING_ANSWER, "children"),
        Input(ids.PLANNING_POLL, "n_intervals"),
        State(ids.PLANNING_JOB, "data"),
        prevent_initial_call=True,
    )
    def _poll(_n, key):
        return poll_plan(service, key)

    @app.callback(
        Output(ids.PLANNING_STATUS, "children", allow_duplicate=True),
        Input(ids.PLANNING_CANCEL, "n_clicks"),
        State(ids.PLANNING_JOB, "data"),
        prevent_initial_call=True,
    )
    def _cancel(clicks, key):
        if not clicks:
            return no_update
        if key:
            service.jobs.cancel(key)
        return "Cancelling…"
