"""The dashboard's views: layouts, routing and every callback's work, called as plain functions."""

from __future__ import annotations

import base64
import json

import numpy as np
import plotly.graph_objects as go
import pytest
from dash import html
from dashboard_support import BAD_CSV, copy_store

from streakwise.analysis import player_sequences
from streakwise.analysis.runs import longest_run_distribution, season_longest_run_distribution
from streakwise.dashboard import app as app_module
from streakwise.dashboard import ids, view_compare, view_data, view_league, view_odds, view_planning, view_player
from streakwise.dashboard.cautions import CAUTIONS
from streakwise.dashboard.service import DashboardSettings

SETTINGS = DashboardSettings(permutations=300, seed=5)


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    app = app_module.create_app(copy_store(tmp_path_factory.mktemp("views")), settings=SETTINGS)
    yield app
    app.streakwise.close()


@pytest.fixture(scope="module")
def service(app):
    return app.streakwise


def text_of(component) -> str:
    """Every string inside a Dash component tree."""
    if component is None:
        return ""
    if isinstance(component, (str, int, float)):
        return str(component)
    if isinstance(component, (list, tuple)):
        return " ".join(text_of(c) for c in component)
    return text_of(getattr(component, "children", None))


def find(component, component_id):
    """The component with this id inside a tree (or None)."""
    if getattr(component, "id", None) == component_id:
        return component
    children = getattr(component, "children", None)
    if isinstance(children, (list, tuple)):
        for child in children:
            found = find(child, component_id)
            if found is not None:
                return found
    elif children is not None and not isinstance(children, (str, int, float)):
        return find(children, component_id)
    return None


class TestApp:
    def test_every_view_is_routed_and_shows_its_title(self, service):
        for view in app_module.VIEWS:
            page = app_module.render_page(service, view.PATH, "")
            assert view.TITLE in text_of(page)
        assert app_module.view_for_path("/") is view_compare
        assert app_module.view_for_path("/league/") is view_league
        assert "No such view" in text_of(app_module.render_page(service, "/nowhere", ""))

    def test_decision_views_show_every_caution(self, service):
        for view in (view_compare, view_league, view_player, view_odds, view_planning):
            page = text_of(app_module.render_page(service, view.PATH, ""))
            for caution in CAUTIONS:
                assert caution in page, (view.NAME, caution)
        assert "Not betting advice." in CAUTIONS[-1]

    def test_nav_links_carry_the_selection(self):
        links = app_module.nav_links("/league", "?players=S001,S002&k=2")
        hrefs, classes = links[0::2], links[1::2]
        assert hrefs[0] == "/compare?players=S001,S002&k=2"
        assert classes[1] == "sw-active" and classes[0] == ""
        assert hrefs[-1] == "/data"  # the data view takes no selection

    def test_the_app_is_wired(self, app):
        assert app.server.config["MAX_CONTENT_LENGTH"] > SETTINGS.upload_limit_bytes
        outputs = " ".join(app.callback_map)
        for component_id in (ids.PAGE, ids.COMPARE_TABLE, ids.LEAGUE_TABLE, ids.PLAYER_STRIP_GRAPH, ids.ODDS_ANSWER,
                             ids.DATA_REPORT, ids.PLANNING_ANSWER, ids.PLAYER_BRIEFING_DOWNLOAD, ids.LEAGUE_BRIEFING_DOWNLOAD):
            assert component_id in outputs, component_id

    def test_pages_are_served(self, app):
        client = app.server.test_client()
        response = client.get("/")
        assert response.status_code == 200 and b"streakwise" in response.data
        layout = client.get("/_dash-layout")
        assert layout.status_code == 200 and ids.PAGE.encode() in layout.data

    def test_ids_are_unique(self):
        values = [getattr(ids, name) for name in ids.__all__ if name.isupper()]
        assert len(values) == len(set(values))


class TestCompare:
    def test_layout_reads_the_address(self, service):
        page = view_compare.layout(service, {"players": "S003,S009,NOBODY", "k": "2", "season": "2040-41"})
        assert find(page, ids.COMPARE_PLAYERS).value == ["S003", "S009"]
        assert find(page, ids.COMPARE_K).value == 2
        assert find(page, ids.COMPARE_SEASON).value == "2040-41"

    def test_default_players_are_the_two_busiest(self, service):
        page = view_compare.layout(service, {})
        players = find(page, ids.COMPARE_PLAYERS).value
        frame = service.players(None, "field_goal").sort_values("attempts", ascending=False)
        assert players == list(frame["player"].head(2))

    def test_update(self, service):
        rates, effects, table, note = view_compare.update_compare(service, ["S001", "S002"], "all", "field_goal", 2)
        assert isinstance(rates, go.Figure) and isinstance(effects, go.Figure)
        assert "after 2 makes" in rates.layout.title.text
        assert len(effects.data[0].y) == 2
        assert "no league scan" in note
        cells = text_of(table)
        assert "Player 1 (S001)" in cells and "Player 2 (S002)" in cells
        assert "after 2 makes" in cells and "corrected D_2" in cells

    def test_numbers_are_the_tests(self, service):
        columns, _ = view_compare.compare_columns(service, ["S001"], None, "field_goal", 1)
        result = service.player_test("S001", None, "field_goal")
        row = view_compare.table_rows(columns, 1)[0]
        d1 = result.test("difference", 1)
        assert row[9] == f"{d1.corrected:+.3f}"
        assert row[2] == f"{result.attempts:,}"

    def test_no_players(self, service):
        rates, effects, table, note = view_compare.update_compare(service, [], "all", "field_goal", 1)
        assert "Choose two to four players" in rates.layout.annotations[0].text
        assert "No players chosen" in text_of(table)

    def test_one_and_too_many_players(self, service):
        *_, note = view_compare.update_compare(service, ["S001"], "all", "field_goal", 1)
        assert "Add another player" in note
        rates, *_, note = view_compare.update_compare(service, ["S001", "S002", "S003", "S004", "S005"], "all", "field_goal", 1)
        assert "first 4 players" in note and len(rates.data[0].x) == 4

    def test_difficulty_panel(self, tmp_path):
        from streakwise.cli.analyse_commands import DIFFICULTY_KIND
        from streakwise.dashboard.service import DashboardService

        service = DashboardService(copy_store(tmp_path), SETTINGS)
        try:
            page = view_compare.layout(service, {"players": "S001,S002", "k": "2"})
            panel = text_of(find(page, ids.COMPARE_DIFFICULTY))
            assert "No saved difficulty-adjusted scan" in panel
            assert "streakwise analyse --difficulty --save --permutations 300 --seed 5" in panel
            assert "--attempt-type field_goal" in panel and str(service.store_path) in panel
            assert "not available yet" not in text_of(page)

            def entry(player, corrected, p_value, warnings=()):
                return {
                    "player": player,
                    "difficulty_adjusted": [
                        {"k": k, "difference": 0.01 * k, "null_mean": -0.02, "corrected": corrected + k,
                         "p_value": p_value, "reason": None} for k in (1, 2, 3)
                    ],
                    "streak_coefficient": {"estimate": 0.1},
                    "shot_selection": {"k": 1, "difference": -0.0123, "p_value": 0.0456},
                    "shrunk": [],
                    "difficulty_warnings": list(warnings),
                }

            payload = {
                "difficulty_model": {"covariates": ["distance"], "log_loss": 0.66, "base_log_loss": 0.69, "warnings": []},
                "players": [entry("S001", 0.0421, 0.0123), entry("S002", -0.0312, 0.8765, ["harder shots after makes"])],
            }
            settings = service.scan_settings(None, "field_goal")
            service.store.save_result(DIFFICULTY_KIND, {**settings, "seed": 999, "draws": 10}, {"players": []})
            assert "No saved difficulty-adjusted scan" in text_of(
                view_compare.update_difficulty(service, ["S001", "S002"], "all", "field_goal", 2))
            service.store.save_result(DIFFICULTY_KIND, {**settings, "draws": 10}, payload)

            panel = text_of(view_compare.update_difficulty(service, ["S001", "S002", "S003"], "all", "field_goal", 2))
            assert "No saved difficulty-adjusted scan" not in panel
            assert "adjusted corrected D_2" in panel
            assert "+2.042" in panel and "0.0123" in panel  # S001: corrected D_2 and p
            assert "+1.969" in panel and "0.8765" in panel  # S002
            assert "-0.012" in panel and "0.0456" in panel  # shot selection
            assert "harder shots after makes" in panel
            assert "Player 3 (S003)" in panel and "not in the difficulty scan" in panel
            page = view_compare.layout(service, {"players": "S001,S002", "k": "1"})
            assert "+1.042" in text_of(find(page, ids.COMPARE_DIFFICULTY))
            # other filters have no saved scan
            assert "--season 2040-41" in text_of(
                view_compare.update_difficulty(service, ["S001"], "2040-41", "field_goal", 1))
        finally:
            service.close()

    def test_url(self):
        assert view_compare.url_for_compare("?run=5", ["S001", "S002"], "all", "field_goal", 3) == \
            "?run=5&players=S001,S002&type=field_goal&k=3"


class TestLeague:
    def test_first_render_starts_a_scan_then_shows_it(self, service):
        out = view_league.render_league(service, "2041-42", "field_goal", "all", 100, 1)
        rows, columns, figure, pooled, status, poll_disabled, *_ = out
        assert rows == [] and not poll_disabled and "background" in status
        assert columns[5]["name"] == "after 1 make"
        job = service.scan("2041-42", "field_goal").job
        assert job is not None and job.wait(120)
        value, text, token, disabled = view_league.poll_scan(service, "2041-42", "field_goal")
        assert value == "1.000" and text.startswith("done") and disabled and token.endswith(":done")
        rows, columns, figure, pooled, status, poll_disabled, *_ = view_league.render_league(
            service, "2041-42", "field_goal", "all", 100, 1, token)
        assert poll_disabled and "Saved scan: 24 players" in status
        assert len(rows) == 24 and pooled.startswith("Pooled league test of D_1")
        q = [r["q_value"] for r in rows]
        assert q == sorted(q)  # smallest q first
        assert rows[0]["player_link"].startswith(f"[{rows[0]['player']}](/player?player=")
        assert {trace.name for trace in figure.data} >= {"each player's null band (2.5–97.5%, chance alone)"}

    def test_display_filters(self, service):
        service.start_scan("2041-42", "field_goal").job.wait(120)
        rows, *_ = view_league.render_league(service, "2041-42", "field_goal", "Amber Gulls", 100, 2)
        assert rows and {r["team"] for r in rows} == {"Amber Gulls"}
        rows, *_, = view_league.render_league(service, "2041-42", "field_goal", "all", 10_000, 2)
        assert rows == []

    def test_funnel_bands_are_centred(self, service):
        payload = service.start_scan("2041-42", "field_goal").job.result
        rows = view_league.league_rows(service, payload, "2041-42", "field_goal", 1)
        entry = payload["players"][0]
        row = next(r for r in rows if r["player"] == entry["player"])
        streak = entry["streak"][0]
        assert row["null_low"] == pytest.approx(streak["null_band"][0] - streak["null_mean"])
        assert row["null_low"] < 0 < row["null_high"]

    def test_cancel_and_run_again(self, service):
        service.cancel_scan("2040-41", "field_goal")  # nothing running: harmless
        token = view_league.start_scan(service, "2040-41", "field_goal")
        assert ":started:" in token
        assert view_league.cancel_scan(service, "2040-41", "field_goal") == "Cancelling…"
        job = service.scan("2040-41", "field_goal").job
        job.wait(120)
        status = view_league.render_league(service, "2040-41", "field_goal", "all", 100, 1)[4]
        if job.state == "cancelled":
            assert "cancelled" in status
        else:  # the scan of a small league may finish before the cancel lands
            assert "Saved scan" in status

    def test_briefing(self, service):
        service.start_scan("2041-42", "field_goal").job.wait(120)
        download = view_league.league_briefing(service, "2041-42", "field_goal")
        assert download["filename"].endswith(".html") and download["type"] == "text/html"
        assert download["content"].lstrip().lower().startswith("<!doctype html")
        assert view_league.league_briefing(service, "2039-40", "field_goal") is None

    def test_url(self):
        assert view_league.url_for_league("", "all", "field_goal", "all", 200, 2) == "?type=field_goal&min=200&k=2"


class TestPlayer:
    def test_run_lengths(self):
        assert view_player.run_lengths(np.array([1, 1, 0, 1, 1, 1, 0])).tolist() == [2, 2, 0, 3, 3, 3, 0]
        assert view_player.run_lengths(np.array([], dtype=int)).tolist() == []

    def test_season_longest_run_against_brute_force(self):
        # two games; the longest run of makes in any one game, every arrangement equally likely
        import itertools

        import pandas as pd

        made = np.array([1, 1, 0, 1, 0, 1, 1, 0, 0])
        frame = pd.DataFrame({"player": "a", "session": ["g1"] * 4 + ["g2"] * 5, "seq": [0, 1, 2, 3, 0, 1, 2, 3, 4],
                              "made": made.astype(bool)})
        sequences = player_sequences(frame)["a"]
        observed, pmf = view_player.season_longest_run(sequences)
        counts = np.zeros(6)
        first = set(itertools.permutations(made[:4]))
        second = set(itertools.permutations(made[4:]))
        for a in first:
            for b in second:
                longest = max(view_player.run_lengths(np.array(a)).max(), view_player.run_lengths(np.array(b)).max())
                counts[longest] += 1
        expected = counts / counts.sum()
        assert observed == 2
        np.testing.assert_allclose(pmf, expected[: pmf.size], atol=1e-12)
        # one game reduces to the exact distribution of streakwise.analysis
        np.testing.assert_allclose(np.cumsum(season_longest_run_distribution([9], [4])), np.cumsum(longest_run_distribution(9, 4)))

    def test_update(self, service):
        summary, strip, longest, rates = view_player.update_player(service, "S009", "2040-41", "field_goal", 3)
        assert "Player 9 (S009)" in text_of(summary)
        heat = strip.data[0]
        sequences = service.sequences("S009", "2040-41", "field_goal")
        assert heat.z.shape == (int(sequences.lengths.max()), len(sequences))
        assert np.nansum(np.asarray(heat.z) >= 2) == int(sequences.made.sum())  # every make is drawn
        assert longest.data[0].type == "bar" and "longest run" in longest.layout.xaxis.title.text
        assert rates.data

    def test_update_without_a_player(self, service):
        summary, strip, *_ = view_player.update_player(service, None, "all", "field_goal", 4)
        assert "Choose a player" in text_of(summary)

    def test_hot_state_panel(self, service):
        panel = view_player.hot_state_panel(service, "S009", "2040-41", "field_goal")
        graph = panel.children[0]
        result = service.hot_state("S009", "2040-41", "field_goal")
        assert np.nanmax(np.asarray(graph.figure.data[0].z)) <= 1.0
        assert "not run here" in text_of(panel)
        assert result.hot_probability.shape == (result.attempts,)

    def test_briefing(self, service):
        download = view_player.player_briefing(service, "S009", "2040-41", "field_goal")
        assert download["filename"] == "streakwise-briefing-S009-2040-41.html"
        assert "S009" in download["content"]
        assert view_player.player_briefing(service, "NOBODY", None, "field_goal") is None

    def test_url(self):
        assert view_player.url_for_player("?players=S001,S002", "S001", "2040-41", "field_goal", 5) == \
            "?players=S001,S002&player=S001&season=2040-41&type=field_goal&run=5"


class TestOdds:
    def test_form_defaults(self, service):
        form = view_odds.form_from_params(service, {})
        assert form.shooter == "player" and form.season == "2041-42" and form.league_players == 24

    def test_player_claim(self, service):
        form = view_odds.form_from_params(service, {"player": "S002", "claim": "run", "r": "6"})
        answer = view_odds.check_claim(service, form)
        assert answer.result.claim == "6 or more makes in a row"
        assert 0 < answer.result.probability_player < answer.result.probability_league <= 1
        card = text_of(view_odds.answer_children(answer))
        assert answer.result.sentence in card and "Caution:" in card and "not betting advice" in card

    def test_numbers_claim(self, service):
        form = view_odds.ClaimForm(kind="window", window=10, at_least=8, shooter="numbers", rate="45%", attempts="15",
                                   games=60, league_players=100, seasons=2)
        answer = view_odds.check_claim(service, form)
        assert answer.result.claim == "at least 8 makes in some 10 consecutive attempts"
        assert "over 2 seasons" in text_of(view_odds.answer_children(answer))

    @pytest.mark.parametrize(
        ("changes", "message"),
        [
            (dict(run=40), "40 in a row is more than the longest game's attempts"),
            (dict(kind="window", window=5, at_least=6), "X (6) cannot exceed Y (5)"),
            (dict(kind="each_game", games_in_a_row=500), "500 games in a row"),
            (dict(shooter="numbers", rate="1.5"), "Make rate: must be in [0, 1]"),
            (dict(league_players=0), "Players like this in the league: must be a whole number of at least 1"),
        ],
    )
    def test_bad_forms_say_which_field(self, service, changes, message):
        base = view_odds.form_from_params(service, {"player": "S002"})
        form = view_odds.ClaimForm(**{**base.__dict__, **changes})
        out = view_odds.update_odds(service, form)
        assert "Cannot check this claim" in text_of(out) and message in text_of(out)

    def test_shooter_fields(self):
        assert view_odds.shooter_fields_disabled("player") == (False, False, False, True, True, True)
        assert view_odds.shooter_fields_disabled("numbers") == (True, True, True, False, False, False)

    def test_url_round_trip(self, service):
        form = view_odds.ClaimForm(kind="each_game", at_least=5, games_in_a_row=4, shooter="player", player="S003",
                                   season="2040-41", attempt_type="field_goal", league_players=24, seasons=3)
        search = view_odds.url_for_odds("", form)
        from streakwise.dashboard.urls import parse_query

        again = view_odds.form_from_params(service, parse_query(search))
        assert (again.kind, again.at_least, again.games_in_a_row, again.player, again.season, again.seasons) == \
            ("each_game", 5, 4, "S003", "2040-41", 3)


class TestPlanning:
    def test_spec_from_form(self):
        spec = view_planning.spec_from_form("markov", 0.5, 12, 0.9, "0.2, 0, 0.1", "40,20", 20, 100, 0.8, 0.3)
        assert spec.effects == (0.0, 0.1, 0.2) and spec.games == (20, 40) and spec.key.startswith("plan-")
        with pytest.raises(ValueError, match="Effects: expected numbers"):
            view_planning.spec_from_form("hidden", 0.5, 12, 0.9, "a,b", "40", 20, 100, 0.8, 0.3)
        with pytest.raises(ValueError, match="Make rate"):
            view_planning.spec_from_form("hidden", 1.5, 12, 0.9, "0.1", "40", 20, 100, 0.8, 0.3)

    def test_plan_runs_as_a_job(self, service):
        spec = view_planning.spec_from_form("markov", 0.5, 10, 0.9, "0,0.3", "10,20", 20, 60, 0.8, 0.3)
        key = view_planning.start_plan(service, spec)
        job = service.jobs.get(key)
        assert job.wait(300) and job.state == "done", job.error
        status, value, disabled, by_effect, by_attempts, table = view_planning.poll_plan(service, key)
        assert status.startswith("Done") and value == "1" and disabled
        assert by_effect.data and by_attempts.data
        assert "D_1" in text_of(table) and "runs" in text_of(table)

    def test_poll_without_a_job(self, service):
        assert view_planning.poll_plan(service, None)[:3] == ("", "0", True)


class TestData:
    def upload(self, text: str, name: str = "bad.csv") -> dict:
        return {"name": name, "contents": "data:text/csv;base64," + base64.b64encode(text.encode()).decode()}

    def test_decode(self):
        assert view_data.decode_upload(self.upload("a,b\n")["contents"]) == b"a,b\n"
        with pytest.raises(ValueError, match="empty"):
            view_data.decode_upload("")

    def test_bad_file_report(self, service):
        report, sources, rejects = view_data.handle_upload(service, "check", self.upload(BAD_CSV), view_data.CANONICAL,
                                                           None, None, False)
        assert "bad.csv:3:made: unknown outcome 'maybe'" in report
        assert "refused, nothing was stored" in report
        assert [s["name"] for s in sources] == ["league.parquet"] and rejects == []

    def test_nothing_chosen_and_missing_profile(self, service):
        assert view_data.handle_upload(service, "check", None, view_data.CANONICAL, None, None, False)[0] == "Choose a file first."
        report = view_data.handle_upload(service, "check", self.upload(BAD_CSV), view_data.UPLOADED, None, None, False)[0]
        assert "Upload a profile file" in report

    def test_uploaded_profile_problems(self, service):
        profile = "data:text/plain;base64," + base64.b64encode(b"layout = 'sideways'\n").decode()
        report = view_data.handle_upload(service, "check", self.upload(BAD_CSV), view_data.UPLOADED, profile, "mine.toml", False)[0]
        assert report.startswith("The profile cannot be used:") and "mine.toml" in report

    def test_shipped_profile(self, service):
        report = view_data.handle_upload(service, "check", self.upload(BAD_CSV), "demo-attempts", None, None, False)[0]
        assert "bad.csv" in report and "refused" in report

    def test_too_big(self, service, monkeypatch):
        small = DashboardSettings(permutations=300, seed=5, upload_limit_bytes=10)
        monkeypatch.setattr(service, "settings", small)
        report = view_data.handle_upload(service, "store", self.upload(BAD_CSV), view_data.CANONICAL, None, None, False)[0]
        assert "over the dashboard's limit of" in report and "nothing was stored" in report

    def test_size_check_script(self):
        script = view_data.size_check_js(50 * 1024 * 1024)
        assert "52428800" in script and "50 MB" in script

    def test_tables(self, service):
        rows = view_data.sources_rows(service)
        assert rows[0]["name"] == "league.parquet" and rows[0]["attempts"] > 0
        json.dumps(rows)  # what the table is sent as
        assert view_data.rejects_rows(service) == []


def test_empty_figure_says_why():
    from streakwise.dashboard.theme import empty_figure

    figure = empty_figure("nothing here")
    assert figure.layout.annotations[0].text == "nothing here"


def test_caution_box_lists_every_caution():
    from streakwise.dashboard.cautions import caution_box

    box = caution_box("one more")
    items = box.children[1].children
    assert isinstance(items[0], html.Li) and len(items) == len(CAUTIONS) + 1


def test_shrunk_effects_pull_towards_the_league(service):
    service.start_scan("2041-42", "field_goal").job.wait(120)
    payload = service.scan("2041-42", "field_goal").payload
    shrunk = service.shrunk_effects("2041-42", "field_goal", 1)
    assert set(shrunk) == {p["player"] for p in payload["players"]}
    corrected = {p["player"]: p["streak"][0]["corrected"] for p in payload["players"]}
    mean = np.mean([value for value, _, _ in shrunk.values()])
    for player, (value, low, high) in shrunk.items():
        assert low <= value <= high
        assert abs(value - mean) <= abs(corrected[player] - mean) + 1e-9
    assert service.shrunk_effects("2039-40", "field_goal", 1) == {}  # no scan, nothing to shrink


def test_public_surface():
    import importlib
    import pkgutil

    import streakwise.dashboard as dashboard

    assert list(dashboard.__all__) == sorted(dashboard.__all__)
    for name in dashboard.__all__:
        assert getattr(dashboard, name) is not None
    for info in pkgutil.iter_modules(dashboard.__path__):
        module = importlib.import_module(f"streakwise.dashboard.{info.name}")
        exported = getattr(module, "__all__", None)
        assert exported is not None and list(exported) == sorted(exported), info.name
        for item in exported:
            assert hasattr(module, item), (info.name, item)
