"""Build the dashboard: one Dash app over one store, six views and a router.

:func:`create_app` opens the store (the server process owns it), builds the
page frame (header, navigation, the view, footer) and registers every view's
callbacks. The views are flat modules (``view_compare``, ``view_league``,
``view_player``, ``view_odds``, ``view_planning``, ``view_data``), each with
``PATH``, ``TITLE``, ``layout(service, params)`` and ``register(app, service)``.
A simple router shows the view for the address; the selection lives in the
query string (``/compare?players=P001,P028&k=2``), and the navigation links
carry it from view to view.
"""

from __future__ import annotations

import os

import dash
from dash import Input, Output, State, dcc, html

from . import ids, theme, view_compare, view_data, view_league, view_odds, view_planning, view_player
from .service import DashboardService, DashboardSettings
from .urls import parse_query

__all__ = ["DEFAULT_VIEW", "VIEWS", "create_app", "nav_links", "render_page", "view_for_path"]

#: The views, in navigation order.
VIEWS = (view_compare, view_league, view_player, view_odds, view_planning, view_data)

#: Shown at ``/``.
DEFAULT_VIEW = view_compare

_INDEX = """<!DOCTYPE html>
<html lang="en">
    <head>
        {%metas%}
        <title>{%title%}</title>
        {%favicon%}
        {%css%}
        <style>""" + theme.CSS + """</style>
    </head>
    <body>
        {%app_entry%}
        <footer>
            {%config%}
            {%scripts%}
            {%renderer%}
        </footer>
    </body>
</html>"""


def view_for_path(pathname: str | None):
    """The view module for an address path, or None for an unknown path."""
    path = (pathname or "/").rstrip("/") or "/"
    if path == "/":
        return DEFAULT_VIEW
    for view in VIEWS:
        if view.PATH == path:
            return view
    return None


def render_page(service: DashboardService, pathname: str | None, search: str | None):
    """The router's work: the chosen view's layout for the address."""
    view = view_for_path(pathname)
    if view is None:
        return html.Div([
            html.H1("No such view"),
            html.P([f"Nothing lives at {pathname}. Try ", dcc.Link(DEFAULT_VIEW.TITLE, href=DEFAULT_VIEW.PATH), "."]),
        ])
    return view.layout(service, parse_query(search))


def nav_links(pathname: str | None, search: str | None) -> list:
    """(href, className) of every navigation link: the current query carried along."""
    current = view_for_path(pathname)
    out = []
    for view in VIEWS:
        carry = search if view is not view_data else ""
        out += [view.PATH + (carry or ""), "sw-active" if view is current else ""]
    return out


def _frame(service: DashboardService) -> html.Div:
    return html.Div(
        [
            dcc.Location(id=ids.URL, refresh=False),
            html.Header(
                [
                    html.Span("streakwise", className="sw-brand"),
                    html.Span("Are a shooter's streaks more than chance?", className="sw-tagline"),
                    html.Span(id=ids.HEADER_DATA_VERSION, className="sw-store"),
                ],
                className="sw-header",
            ),
            html.Nav([dcc.Link(view.TITLE, href=view.PATH, id=ids.nav_link(view.NAME)) for view in VIEWS],
                     id=ids.NAV, className="sw-nav"),
            html.Main(id=ids.PAGE, className="sw-main"),
            html.Footer(
                "streakwise compares the order of makes and misses with what shuffling each game's attempts gives. "
                "It says how unusual a streak is under chance, not why it happened.",
                className="sw-footer",
            ),
        ]
    )


def create_app(store_path: str | os.PathLike | None = None, *, settings: DashboardSettings | None = None,
               service: DashboardService | None = None) -> dash.Dash:
    """Build the dashboard over the store at ``store_path``.

    Parameters
    ----------
    store_path : str or path-like
        An existing store. The app's process opens it and holds it (close it
        with ``app.streakwise.close()``).
    settings : DashboardSettings, optional
        Permutations, seed, upload limit and so on.
    service : DashboardService, optional
        An already opened service (then ``store_path`` and ``settings`` are
        ignored).

    Returns
    -------
    dash.Dash
        With the service as ``app.streakwise``; ``app.server`` is the WSGI
        application.
    """
    if service is None:
        if store_path is None:
            raise ValueError("create_app needs a store path (or an opened service)")
        service = DashboardService(store_path, settings)
    app = dash.Dash(
        __name__,
        title="streakwise",
        update_title=None,
        suppress_callback_exceptions=True,
        serve_locally=True,
        assets_folder=os.path.join(os.path.dirname(__file__), "_no_assets"),
    )
    limit = service.settings.upload_limit_bytes
    # A backstop behind the browser's own size check: base64 adds a third, plus the request's other fields.
    app.server.config["MAX_CONTENT_LENGTH"] = limit * 4 // 3 + 4 * 1024 * 1024
    app.index_string = _INDEX
    app.layout = _frame(service)

    nav_outputs = []
    for view in VIEWS:
        nav_outputs += [Output(ids.nav_link(view.NAME), "href"), Output(ids.nav_link(view.NAME), "className")]

    @app.callback(Output(ids.PAGE, "children"), Input(ids.URL, "pathname"), State(ids.URL, "search"))
    def _route(pathname, search):
        return render_page(service, pathname, search)

    @app.callback(*nav_outputs, Input(ids.URL, "pathname"), Input(ids.URL, "search"))
    def _nav(pathname, search):
        return nav_links(pathname, search)

    @app.callback(Output(ids.HEADER_DATA_VERSION, "children"), Input(ids.URL, "pathname"))
    def _header(_pathname):
        return f"store {service.store_path.name} · data version {service.data_version()}"

    for view in VIEWS:
        view.register(app, service)
    service.overview()  # read once now, so the first page is quick
    app.streakwise = service
    return app
