"""Serve the dashboard on waitress (a production WSGI server), on loopback by default.

Debug mode (Dash's development server with its error pages) only when asked.
"""

from __future__ import annotations

import ipaddress
import os
import sys
import threading
from collections.abc import Callable

import dash

from .app import create_app
from .service import DashboardSettings

__all__ = ["DEFAULT_HOST", "DEFAULT_PORT", "ServerThread", "create_server", "is_loopback", "serve"]

DEFAULT_HOST = "127.0.0.1"
DEFAULT_PORT = 8050


def is_loopback(host: str) -> bool:
    """Whether ``host`` is reachable only from this machine."""
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def create_server(app: dash.Dash, host: str = DEFAULT_HOST, port: int = DEFAULT_PORT, *, threads: int = 8):
    """A waitress server for ``app`` (port 0 picks a free port: see ``server.effective_port``)."""
    from waitress.server import create_server as waitress_server

    limit = app.server.config.get("MAX_CONTENT_LENGTH") or 64 * 1024 * 1024
    return waitress_server(app.server, host=host, port=port, threads=threads, max_request_body_size=limit,
                           ident="streakwise", clear_untrusted_proxy_headers=True)


class ServerThread:
    """Run a waitress server for ``app`` in a background thread (tests, benchmarks, notebooks).

    Examples
    --------
    >>> # with ServerThread(create_app("demo/streakwise.duckdb")) as server:
    >>> #     print(server.url)
    """

    def __init__(self, app: dash.Dash, host: str = DEFAULT_HOST, port: int = 0, *, threads: int = 8) -> None:
        self.app = app
        self.server = create_server(app, host, port, threads=threads)
        self.url = f"http://{host}:{self.server.effective_port}"
        self._thread = threading.Thread(target=self.server.run, name="streakwise-server", daemon=True)

    def start(self) -> ServerThread:
        self._thread.start()
        return self

    def stop(self) -> None:
        self.server.close()
        self._thread.join(5)

    def __enter__(self) -> ServerThread:
        return self.start()

    def __exit__(self, *exc_info) -> None:
        self.stop()


def _interrupt(signum, frame):
    raise KeyboardInterrupt


def _stop_on_terminate() -> None:
    """Treat SIGTERM (a service manager's stop) like Ctrl+C, so the store is closed cleanly."""
    import signal

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGTERM, _interrupt)


def serve(
    store_path: str | os.PathLike,
    *,
    host: str = DEFAULT_HOST,
    port: int = DEFAULT_PORT,
    debug: bool = False,
    settings: DashboardSettings | None = None,
    threads: int = 8,
    say: Callable[[str], None] = print,
) -> None:
    """Open the store, build the app and serve it until interrupted."""
    app = create_app(store_path, settings=settings)
    service = app.streakwise
    try:
        if debug:
            say(f"streakwise dashboard (DEBUG mode, development server) on http://{host}:{port}/")
            app.run(host=host, port=port, debug=True, use_reloader=False)
            return
        server = create_server(app, host, port, threads=threads)
        address = f"http://{host if ':' not in host else '[' + host + ']'}:{server.effective_port}/"
        say(f"streakwise dashboard on {address}")
        say(f"  store: {service.store_path} (data version {service.data_version()})")
        say(f"  {service.settings.permutations:,} permutations per player, seed {service.settings.seed}; press Ctrl+C to stop")
        if not is_loopback(host):
            say(f"  note: bound to {host}, so other machines can reach it; the dashboard has no login.")
        sys.stdout.flush()
        _stop_on_terminate()
        try:
            server.run()  # returns on Ctrl+C (waitress handles the interrupt)
        except KeyboardInterrupt:
            pass
        finally:
            server.close()
        say("stopped")
    finally:
        service.close()
