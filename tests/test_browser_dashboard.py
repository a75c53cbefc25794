"""The dashboard in a real browser: Debian's headless Chromium driven by Playwright.

The app is served in-process by waitress on 127.0.0.1 (a free port) over a
synthetic store. Every test fails if the browser console logged an error.
Screenshots go to ``test-output/screenshots/`` for a person to look at.

No browser is downloaded: Playwright drives ``/usr/bin/chromium`` (``.ci/run``
installs it). These tests never skip: without Chromium they fail.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from dashboard_support import BAD_CSV, copy_store
from playwright.sync_api import expect, sync_playwright

from streakwise.dashboard import ids
from streakwise.dashboard.app import create_app
from streakwise.dashboard.serve import ServerThread
from streakwise.dashboard.service import DashboardSettings

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = [
    "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
    "--disable-background-networking", "--disable-component-update", "--disable-sync",
]
SCREENSHOTS = Path(__file__).resolve().parents[1] / "test-output" / "screenshots"
#: Small, so the browser's own size check can be seen refusing a file.
UPLOAD_LIMIT = 4096
WAIT = 60_000  # ms


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    settings = DashboardSettings(permutations=300, seed=5, upload_limit_bytes=UPLOAD_LIMIT)
    app = create_app(copy_store(tmp_path_factory.mktemp("browser")), settings=settings)
    with ServerThread(app) as running:
        yield running
    app.streakwise.close()


@pytest.fixture(scope="module")
def browser_context(tmp_path_factory):
    with sync_playwright() as playwright:
        context = playwright.chromium.launch_persistent_context(
            str(tmp_path_factory.mktemp("chromium-profile")),
            executable_path=CHROMIUM,
            headless=True,
            args=CHROMIUM_ARGS,
            viewport={"width": 1400, "height": 1000},
            accept_downloads=True,
        )
        try:
            yield context
        finally:
            context.close()


@pytest.fixture
def page(browser_context, request):
    """A fresh tab; the test fails if the console logged an error or the page threw."""
    tab = browser_context.new_page()
    problems: list[str] = []
    tab.on("console", lambda message: problems.append(f"console {message.type}: {message.text}") if message.type == "error" else None)
    tab.on("pageerror", lambda error: problems.append(f"page error: {error}"))
    yield tab
    tab.close()
    assert problems == [], f"{request.node.name}: the browser reported errors:\n" + "\n".join(problems)


def shoot(page, name: str) -> None:
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(SCREENSHOTS / f"{name}.png"), full_page=True)


def by_id(page, component_id: str):
    return page.locator(f"#{component_id}")


def choose_players(page, dropdown_id: str, players: list[str]) -> None:
    """Replace a multi-select dropdown's choice with ``players`` (typed into its search box)."""
    by_id(page, dropdown_id).click()
    page.get_by_text("Deselect All").click()
    search = page.locator("input.dash-dropdown-search")
    for player in players:
        search.fill(player)
        page.locator(".dash-dropdown-option", has_text=f"({player})").first.click()
    page.keyboard.press("Escape")


# Each view, and a sign that its callbacks have drawn it.
VIEWS = [
    ("compare", "/compare", f"#{ids.COMPARE_TABLE} table"),
    ("league", "/league", f"#{ids.LEAGUE_TABLE} td"),
    ("player", "/player", f"#{ids.PLAYER_STRIP_GRAPH} .main-svg"),
    ("odds", "/odds", "#odds-answer-card"),
    ("planning", "/planning", f"#{ids.PLANNING_RUN}"),
    ("data", "/data", f"#{ids.DATA_SOURCES} td"),
]


@pytest.mark.parametrize(("name", "path", "ready"), VIEWS, ids=[v[0] for v in VIEWS])
def test_every_view_loads(page, server, name, path, ready):
    page.goto(server.url + path)
    page.wait_for_selector(ready, timeout=WAIT)
    expect(page.locator("h1")).to_be_visible()
    if name != "data":
        expect(page.locator(".sw-caution")).to_contain_text("Not betting advice.")
        expect(page.locator(".sw-caution")).to_contain_text("licensed practitioners")
    page.wait_for_load_state("networkidle")
    shoot(page, f"view-{name}")


def test_pick_two_players_and_change_k(page, server):
    page.goto(server.url + "/compare")
    page.wait_for_selector(f"#{ids.COMPARE_TABLE} table", timeout=WAIT)
    choose_players(page, ids.COMPARE_PLAYERS, ["S003", "S009"])
    page.locator(f"input[name={ids.COMPARE_K}][value='2']").click()
    table = by_id(page, ids.COMPARE_TABLE)
    expect(table).to_contain_text("Player 3 (S003)", timeout=WAIT)
    expect(table).to_contain_text("Player 9 (S009)", timeout=WAIT)
    expect(by_id(page, ids.COMPARE_RATES_GRAPH)).to_contain_text("after 2 makes", timeout=WAIT)
    expect(page).to_have_url(re.compile(r"players=S003,S009.*k=2|k=2.*players=S003,S009"))
    assert table.locator("tbody tr").count() == 2
    page.wait_for_load_state("networkidle")
    shoot(page, "compare-two-players-k2")
    # the address keeps the selection: open it afresh
    address = page.url
    page.goto(address)
    expect(by_id(page, ids.COMPARE_TABLE)).to_contain_text("Player 9 (S009)", timeout=WAIT)
    assert page.locator(f"input[name={ids.COMPARE_K}][value='2']").is_checked()
    # and the navigation carries it to the season view
    by_id(page, ids.nav_link("player")).click()
    expect(by_id(page, ids.PLAYER_SUMMARY)).to_contain_text("(S003)", timeout=WAIT)


def test_claim_check(page, server):
    page.goto(server.url + "/odds")
    page.wait_for_selector("#odds-answer-card", timeout=WAIT)
    by_id(page, ids.ODDS_RUN).fill("5")
    by_id(page, ids.ODDS_CHECK).click()
    answer = by_id(page, ids.ODDS_ANSWER)
    expect(answer).to_contain_text("Claim: 5 or more makes in a row", timeout=WAIT)
    expect(answer).to_contain_text("Caution:")
    text = answer.inner_text()
    assert re.search(r"\d+(\.\d)?%|almost certain", text), text
    assert "expected games with it for this player, per season" in text
    assert "by chance alone" in text
    expect(page).to_have_url(re.compile(r"claim=run.*r=5"))
    shoot(page, "odds-claim-checked")
    # numbers of one's own, and a mistake that names its field
    page.get_by_text("numbers I give").click()
    by_id(page, ids.ODDS_RATE).fill("1.4")
    by_id(page, ids.ODDS_CHECK).click()
    expect(answer).to_contain_text("Cannot check this claim: Make rate: must be in [0, 1]", timeout=WAIT)


def test_bad_upload_shows_the_place_of_the_error(page, server, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text(BAD_CSV)
    page.goto(server.url + "/data")
    page.wait_for_selector(f"#{ids.DATA_SOURCES} td", timeout=WAIT)
    page.locator(f"#{ids.DATA_UPLOAD} input[type=file]").set_input_files(str(bad))
    expect(by_id(page, ids.DATA_UPLOAD_NAME)).to_contain_text("bad.csv", timeout=WAIT)
    by_id(page, ids.DATA_CHECK).click()
    report = by_id(page, ids.DATA_REPORT)
    expect(report).to_contain_text("bad.csv:3:made: unknown outcome 'maybe'", timeout=WAIT)
    expect(report).to_contain_text("refused, nothing was stored")
    shoot(page, "data-bad-upload")
    # too big: the browser refuses it before sending anything
    big = tmp_path / "big.csv"
    big.write_text("player,game,session,seq,made\n" + "Q1,g1,g1,0,1\n" * 600)
    page.locator(f"#{ids.DATA_UPLOAD} input[type=file]").set_input_files(str(big))
    expect(by_id(page, ids.DATA_UPLOAD_TOO_BIG)).to_contain_text("accepts files up to", timeout=WAIT)
    expect(by_id(page, ids.DATA_UPLOAD_TOO_BIG)).to_contain_text("Nothing was uploaded")


def test_export_briefings(page, server):
    page.goto(server.url + "/player?player=S009&season=2040-41")
    expect(by_id(page, ids.PLAYER_SUMMARY)).to_contain_text("(S009)", timeout=WAIT)
    with page.expect_download(timeout=WAIT) as download:
        by_id(page, ids.PLAYER_BRIEFING).click()
    assert download.value.suggested_filename == "streakwise-briefing-S009-2040-41.html"
    text = Path(download.value.path()).read_text(encoding="utf-8")
    assert text.lstrip().lower().startswith("<!doctype html") and "S009" in text

    page.goto(server.url + "/league?season=2040-41")
    page.wait_for_selector(f"#{ids.LEAGUE_TABLE} td", timeout=WAIT)
    expect(by_id(page, ids.LEAGUE_STATUS)).to_contain_text("Saved scan", timeout=WAIT)
    page.wait_for_load_state("networkidle")
    shoot(page, "league-scan-ready")
    with page.expect_download(timeout=WAIT) as download:
        by_id(page, ids.LEAGUE_BRIEFING).click()
    assert download.value.suggested_filename.endswith(".html")
    text = Path(download.value.path()).read_text(encoding="utf-8")
    assert text.lstrip().lower().startswith("<!doctype html") and "S001" in text


def test_planner_runs_in_the_background(page, server):
    page.goto(server.url + "/planning")
    page.wait_for_selector(f"#{ids.PLANNING_RUN}", timeout=WAIT)
    page.get_by_text("after a make (effect").click()
    for component_id, value in ((ids.PLANNING_EFFECTS, "0,0.3"), (ids.PLANNING_GAMES, "10,20"),
                                (ids.PLANNING_SIMULATIONS, "20"), (ids.PLANNING_PERMUTATIONS, "60"),
                                (ids.PLANNING_ATTEMPTS, "10")):
        by_id(page, component_id).fill(value)
        by_id(page, component_id).press("Tab")
    by_id(page, ids.PLANNING_RUN).click()
    expect(by_id(page, ids.PLANNING_STATUS)).to_contain_text("Done", timeout=180_000)
    expect(by_id(page, ids.PLANNING_ANSWER)).to_contain_text("D_1")
    expect(by_id(page, ids.PLANNING_POWER_GRAPH)).to_contain_text("Power against the size of the hot hand")
    page.wait_for_load_state("networkidle")
    shoot(page, "planning-done")
