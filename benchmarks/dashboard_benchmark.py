"""Dashboard speed: switching players with a warm cache, and the league view's first render.

Two leagues: the demo league (``streakwise demo``) and an invented 450-player
league written through the ingest path. For each:

- player switch, warm cache (target <= 0.5 s): the side-by-side view's and
  the season view's callbacks for players already shown once;
- league view, first render (target <= 3 s): a fresh server process state
  (new service, empty caches) with the scan saved in the store: the router's
  layout plus the view's first callback (reads the saved scan, builds the
  table and the funnel plot);
- for information: a player's first (cold) view, and the background scan.

With ``/usr/bin/chromium`` present it also times one browser round trip
(change k on the side-by-side view until the table shows it) and the league
view's load in a real browser.

Usage: python benchmarks/dashboard_benchmark.py [--quick] [--no-browser]
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests"))

from dashboard_support import write_synthetic_store  # noqa: E402

from streakwise.dashboard import view_compare, view_league, view_player  # noqa: E402
from streakwise.dashboard.app import create_app, render_page  # noqa: E402
from streakwise.dashboard.service import DashboardService, DashboardSettings  # noqa: E402

TARGET_SWITCH = 0.5
TARGET_LEAGUE = 3.0


def timed(function, *args, repeat: int = 1):
    times = []
    out = None
    for _ in range(repeat):
        start = time.perf_counter()
        out = function(*args)
        times.append(time.perf_counter() - start)
    return out, times


def busiest(service: DashboardService, attempt_type: str, n: int) -> list[str]:
    frame = service.players(None, attempt_type).sort_values(["attempts", "player"], ascending=[False, True])
    return [str(p) for p in frame["player"].head(n)]


def bench_store(label: str, store: Path, settings: DashboardSettings) -> dict:
    print(f"\n== {label}: {store}")
    service = DashboardService(store, settings)
    attempt_type = service.default_attempt_type()
    players = busiest(service, attempt_type, 6)
    pairs = [players[0:2], players[2:4], players[4:6]]
    # cold: each pair the first time
    cold = []
    for pair in pairs:
        _, t = timed(view_compare.update_compare, service, pair, "all", attempt_type, 1)
        cold.append(t[0])
    # warm: back to pairs already shown, other k
    warm_compare = []
    for k in (2, 3, 1):
        for pair in pairs:
            _, t = timed(view_compare.update_compare, service, pair, "all", attempt_type, k)
            warm_compare += t
    for player in players:  # first view of each season page (fits the hot-state model too)
        view_player.update_player(service, player, "all", attempt_type, 4)
        view_player.hot_state_panel(service, player, "all", attempt_type)
    warm_player = []
    for player in players * 2:
        _, t1 = timed(view_player.update_player, service, player, "all", attempt_type, 4)
        _, t2 = timed(view_player.hot_state_panel, service, player, "all", attempt_type)
        warm_player.append(t1[0] + t2[0])
    # the scan, saved in the store (what the league view finds)
    start = time.perf_counter()
    job = service.start_scan(None, attempt_type).job
    if job is not None:
        job.wait()
    scan_seconds = time.perf_counter() - start
    players_scanned = len(service.scan(None, attempt_type).payload["players"])
    service.close()
    # a fresh server: empty caches, the scan in the store
    service = DashboardService(store, settings)
    start = time.perf_counter()
    render_page(service, "/league", "")
    out = view_league.render_league(service, "all", attempt_type, "all", settings.min_attempts, 1)
    league_first = time.perf_counter() - start
    assert "Saved scan" in out[4], out[4]
    _, again = timed(view_league.render_league, service, "all", attempt_type, "all", settings.min_attempts, 2, repeat=3)
    service.close()
    result = {
        "label": label,
        "players scanned": players_scanned,
        "compare, first view of a pair (cold)": statistics.median(cold),
        "compare, switch back (warm), median": statistics.median(warm_compare),
        "compare, switch back (warm), max": max(warm_compare),
        "season view, switch back (warm), median": statistics.median(warm_player),
        "season view, switch back (warm), max": max(warm_player),
        "league scan in the background": scan_seconds,
        "league view, first render": league_first,
        "league view, change k": statistics.median(again),
    }
    for key, value in result.items():
        if isinstance(value, float):
            print(f"  {key:<44} {value:8.3f} s")
        else:
            print(f"  {key:<44} {value}")
    ok_switch = max(result["compare, switch back (warm), max"], result["season view, switch back (warm), max"]) <= TARGET_SWITCH
    ok_league = league_first <= TARGET_LEAGUE
    print(f"  targets: player switch <= {TARGET_SWITCH} s {'MET' if ok_switch else 'MISSED'}; "
          f"league first render <= {TARGET_LEAGUE} s {'MET' if ok_league else 'MISSED'}")
    result["ok"] = ok_switch and ok_league
    return result


def bench_browser(store: Path, settings: DashboardSettings) -> None:
    if not Path("/usr/bin/chromium").exists():
        print("\n== browser: /usr/bin/chromium not found; skipped")
        return
    from playwright.sync_api import expect, sync_playwright

    from streakwise.dashboard.serve import ServerThread

    print("\n== browser round trips (headless Chromium, waitress on 127.0.0.1)")
    app = create_app(store, settings=settings)
    service = app.streakwise
    attempt_type = service.default_attempt_type()
    players = busiest(service, attempt_type, 2)
    view_compare.update_compare(service, players, "all", attempt_type, 1)  # warm
    try:
        with ServerThread(app) as server, sync_playwright() as playwright:
            browser = playwright.chromium.launch(executable_path="/usr/bin/chromium", headless=True, args=[
                "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                "--disable-background-networking", "--disable-component-update", "--disable-sync"])
            page = browser.new_page(viewport={"width": 1400, "height": 1000})
            page.goto(f"{server.url}/compare?players={','.join(players)}&k=1")
            page.wait_for_selector("#compare-table table", timeout=60_000)
            rounds = []
            for k in (2, 3, 1, 2):
                start = time.perf_counter()
                page.locator(f"input[name=compare-k][value='{k}']").click()
                expect(page.locator("#compare-rates-graph")).to_contain_text(f"after {k} make", timeout=60_000)
                rounds.append(time.perf_counter() - start)
            print(f"  change k, until the figure shows it (median of 4) {statistics.median(rounds):8.3f} s")
            start = time.perf_counter()
            page.goto(f"{server.url}/league")
            page.wait_for_selector("#league-table td", timeout=60_000)
            print(f"  league view, load until the table has rows     {time.perf_counter() - start:8.3f} s")
            browser.close()
    finally:
        service.close()


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="a 120-player synthetic league instead of the demo and 450 players")
    parser.add_argument("--no-browser", action="store_true")
    args = parser.parse_args(argv)
    settings = DashboardSettings()
    folder = Path(tempfile.mkdtemp(prefix="streakwise-dashboard-bench-"))
    results = []
    try:
        if args.quick:
            store = write_synthetic_store(folder / "quick", players=120, games=60, seasons=("2050-51",))
            results.append(bench_store("synthetic league, 120 players", store, settings))
        else:
            from streakwise.demo_league import build_demo

            start = time.perf_counter()
            demo = build_demo(folder / "demo").store_path
            print(f"built the demo league in {time.perf_counter() - start:.1f} s")
            results.append(bench_store("demo league", demo, settings))
            start = time.perf_counter()
            big = write_synthetic_store(folder / "big", players=450, games=80, seasons=("2050-51",))
            print(f"\nwrote and ingested the 450-player league in {time.perf_counter() - start:.1f} s")
            results.append(bench_store("synthetic league, 450 players", big, settings))
            store = demo
        if not args.no_browser:
            bench_browser(store, settings)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    return 0 if all(r["ok"] for r in results) else 1


if __name__ == "__main__":
    raise SystemExit(main())
