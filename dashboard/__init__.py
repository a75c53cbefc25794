"""The dashboard: a Dash app over one store, and the HTML briefings.

``create_app(store_path)`` builds the app (module ``app``);
``streakwise.dashboard.serve.serve(store_path)`` serves it on waitress
(``streakwise serve`` on the command line).
The views are flat modules (``view_compare``, ``view_league``,
``view_player``, ``view_odds``, ``view_planning``, ``view_data``) over a
``DashboardService`` (``service``: the store, caches, background jobs).
``briefing`` writes self-contained HTML briefings and imports no Dash, so
the names here are loaded only when first used: importing
``streakwise.dashboard.briefing`` stays light.
"""

from __future__ import annotations

import importlib

__all__ = ["DashboardService", "DashboardSettings", "create_app"]

_HOMES = {
    "DashboardService": "service",
    "DashboardSettings": "service",
    "create_app": "app",
}


def __getattr__(name: str):
    if name in _HOMES:
        module = importlib.import_module(f"{__name__}.{_HOMES[name]}")
        return getattr(module, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
