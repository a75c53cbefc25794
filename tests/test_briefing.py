"""HTML briefings: well-formed, self-contained, escaped, and the same numbers as the analysis."""

from __future__ import annotations

import json
import math
from html.parser import HTMLParser

import numpy as np
import pandas as pd
import pytest

from streakwise.analysis import league_scan, permutation_test, player_sequences
from streakwise.analysis.simulate import simulate_hidden_state
from streakwise.cli import main
from streakwise.dashboard.briefing import (
    BRIEFING_CAUTIONS,
    LEAGUE_CAUTION,
    league_briefing_html,
    league_funnel_figure,
    player_briefing_html,
)
from streakwise.ingest.store import Store

SEED = 20240
PERMUTATIONS = 400
HOSTILE = "<script>alert('x')</script> O'Neil & \"Sons\""
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}


def write_canonical(path, *, games=14, attempts=13, seed=3):
    """Three players: 'a' streaky (hostile display name), 'b' steady, 'c' with few attempts."""
    rng = np.random.default_rng(seed)
    lines = ["player,player_name,team,season,game,session,seq,made,attempt_type"]
    hot = simulate_hidden_state(attempts, hot_rate=0.8, cold_rate=0.2, stay_hot=0.9, stay_cold=0.9,
                                n_sequences=games, rng=rng).made
    steady = rng.random((games, attempts)) < 0.45
    few = rng.random((3, 8)) < 0.5
    name = '"' + HOSTILE.replace('"', '""') + '"'
    for player, label, made in (("a", name, hot), ("b", "Brin Talloway", steady), ("c", "Cade Moss", few)):
        for g in range(made.shape[0]):
            for s in range(made.shape[1]):
                lines.append(f"{player},{label},Lake Otters,2030,g{g:02d},g{g:02d},{s},{int(made[g, s])},field_goal")
            lines.append(f"{player},{label},Lake Otters,2030,g{g:02d},g{g:02d},{made.shape[1]},1,free_throw")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def store_path(tmp_path_factory):
    folder = tmp_path_factory.mktemp("briefing")
    csv = write_canonical(folder / "attempts.csv")
    path = folder / "store.duckdb"
    assert main(["ingest", str(csv), "--store", str(path)]) == 0
    return path


@pytest.fixture(scope="module")
def frame(store_path):
    with Store(store_path, read_only=True) as store:
        return store.attempts()


@pytest.fixture(scope="module")
def players_table(store_path):
    with Store(store_path, read_only=True) as store:
        return store.players(attempt_type="field_goal")


@pytest.fixture(scope="module")
def scan(frame):
    sequences = player_sequences(frame, attempt_type="field_goal")
    result = league_scan([sequences[p] for p in sorted(sequences)], min_attempts=100, permutations=PERMUTATIONS,
                         rng=SEED)
    payload = result.to_dict()
    payload["attempt_type"] = "field_goal"
    return payload


@pytest.fixture(scope="module")
def page_a(frame, scan):
    return player_briefing_html(frame, "a", permutations=PERMUTATIONS, seed=SEED, scan=scan, data_version="1-abc")


@pytest.fixture(scope="module")
def page_league(scan, players_table):
    return league_briefing_html(scan, players_table, data_version="1-abc",
                                settings={"seasons": ["2030"], "min_attempts": 100, "alternative": "hot"})


class Page(HTMLParser):
    """Checks nesting and collects what the tests look at."""

    def __init__(self, text):
        super().__init__(convert_charrefs=True)
        self.stack, self.errors = [], []
        self.scripts, self.links, self.ids, self.cells, self.rows = [], [], set(), [], []
        self.text, self._in_script, self.json_block = [], None, None
        self.h1 = []
        self._in_h1 = False
        self.feed(text)
        self.close()
        if self.stack:
            self.errors.append(f"unclosed: {self.stack}")

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if "id" in attrs:
            self.ids.add(attrs["id"])
        if tag == "script":
            self.scripts.append(attrs)
            self._in_script = attrs
        if tag == "link":
            self.links.append(attrs)
        if tag == "tr":
            self.rows.append(attrs)
        if "data-field" in attrs:
            self.cells.append((dict(self.rows[-1]) if self.rows else {}, attrs))
        if tag == "h1":
            self._in_h1 = True
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if tag in VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1] if self.stack else 'nothing'}")
            return
        self.stack.pop()
        if tag == "script":
            self._in_script = None
        if tag == "h1":
            self._in_h1 = False

    def handle_data(self, data):
        if self._in_script is not None:
            if self._in_script.get("id") == "briefing-data":
                self.json_block = json.loads(data)
            return
        if self._in_h1:
            self.h1.append(data)
        self.text.append(data)

    @property
    def words(self):
        return " ".join("".join(self.text).split())

    def values(self, statistic, k=None):
        """``{field: cell attributes}`` of one row of the numbers tables."""
        out = {}
        for row, cell in self.cells:
            if row.get("data-statistic") == statistic and (k is None or row.get("data-k") == str(k)):
                out[cell["data-field"]] = cell
        return out


def number(text):
    return None if text == "" else float(text)


def assert_self_contained(text, page):
    for attrs in page.scripts:
        assert "src" not in attrs, attrs
    for attrs in page.links:
        assert not str(attrs.get("href", "")).startswith(("http://", "https://", "//")), attrs
    assert "@import" not in text and "url(http" not in text
    assert text.count("plotly.js v") == 1  # the library is inlined exactly once


def assert_same(value, expected):
    if expected is None or (isinstance(expected, float) and math.isnan(expected)):
        assert value is None
    else:
        assert value == pytest.approx(float(expected), rel=0, abs=0)


class TestPlayerBriefing:
    def test_well_formed_self_contained_and_complete(self, page_a):
        page = Page(page_a)
        assert page.errors == []
        assert page_a.startswith("<!DOCTYPE html>")
        assert_self_contained(page_a, page)
        assert {"cautions", "reading", "numbers", "figures", "provenance", "briefing-data"} <= page.ids
        assert {"figure-rates", "figure-null-d1", "figure-null-d3", "figure-longest-run"} <= page.ids
        for caution in BRIEFING_CAUTIONS:
            assert caution in page.words
        for needle in ("After a make", "After three makes in a row", "longest run of makes", "In short:",
                       "data version", "1-abc", "seed", str(SEED), f"{PERMUTATIONS:,}", "generated"):
            assert needle in page.words, needle

    def test_names_are_escaped(self, page_a):
        assert "<script>alert" not in page_a
        assert "&lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt; O&#x27;Neil &amp; &quot;Sons&quot;" in page_a
        page = Page(page_a)
        assert "".join(page.h1) == f"{HOSTILE} (a)"
        assert page.json_block["player_name"] == HOSTILE
        # inside the figures the name reaches plotly as entities, never as a tag
        figures = page_a.split('id="briefing-data"')[0]
        assert "\\u003cscript\\u003ealert" not in figures and "script&gt;alert" in figures

    def test_numbers_equal_the_analysis(self, page_a, frame, scan):
        sequences = player_sequences(frame, attempt_type="field_goal")["a"]
        result = permutation_test(sequences, player="a", permutations=PERMUTATIONS, rng=SEED)
        page = Page(page_a)
        entry = next(p for p in scan["players"] if p["player"] == "a")
        for k in (1, 2, 3):
            test = result.test("difference", k)
            cells = page.values("difference", k)
            for field in ("observed", "null_mean", "corrected", "p_value"):
                assert_same(number(cells[field]["data-value"]), getattr(test, field))
            assert_same(number(cells["interval"]["data-low"]), test.interval[0])
            assert_same(number(cells["interval"]["data-high"]), test.interval[1])
            assert_same(number(cells["null_band"]["data-low"]), test.null_band[0])
            i = k - 1
            rate = result.rates.makes_after_makes[i] / result.rates.attempts_after_makes[i]
            assert_same(number(cells["after_makes"]["data-value"]), rate)
            # the same seed gives the league scan's numbers; q comes from the scan
            assert_same(number(cells["p_value"]["data-value"]), entry["streak"][i]["p_value"])
            assert_same(number(cells["q_value"]["data-value"]), entry["streak"][i]["q_value"])
        for statistic in ("runs", "longest_run", "lag1"):
            test = result.test(statistic)
            cells = page.values(statistic)
            assert_same(number(cells["observed"]["data-value"]), test.observed)
            assert_same(number(cells["p_value"]["data-value"]), test.p_value)
        assert_same(number(page.values("wald_wolfowitz")["p_value"]["data-value"]), result.runs_test.p_value)
        assert page.json_block["result"] == json.loads(json.dumps(
            result.to_dict({k: entry["streak"][k - 1]["q_value"] for k in (1, 2, 3)})))
        # the reading quotes the same rates, rounded for people
        made, tried = int(result.rates.makes_after_makes[0]), int(result.rates.attempts_after_makes[0])
        assert f"{100 * made / tried:.1f}% of the next attempts ({made} of {tried})" in page.words

    def test_verdict_follows_p_and_q(self, page_a, frame, scan):
        assert "In short: the order of makes and misses is more streaky" in Page(page_a).words
        alone = Page(player_briefing_html(frame, "a", permutations=PERMUTATIONS, seed=SEED)).words
        assert "In short: a gap is unusual for a steady shooter (p below 0.05)" in alone
        steady = Page(player_briefing_html(frame, "b", permutations=PERMUTATIONS, seed=SEED, scan=scan)).words
        assert "In short: the gaps are within what chance alone commonly produces" in steady

    def test_same_seed_same_page(self, frame):
        from datetime import UTC, datetime

        when = datetime(2030, 1, 2, tzinfo=UTC)
        first = player_briefing_html(frame, "b", permutations=200, seed=5, max_k=2, generated=when)
        again = player_briefing_html(frame, "b", permutations=200, seed=5, max_k=2, generated=when)
        assert first == again
        page = Page(first)
        assert page.errors == []
        assert "figure-null-d2" in page.ids and "figure-null-d3" not in page.ids
        assert "none: no league scan" in page.words and page.values("difference", 1)["q_value"]["data-value"] == ""

    def test_small_sample_and_title(self, frame):
        text = player_briefing_html(frame, "c", permutations=100, seed=1, title="Scouting <note>")
        page = Page(text)
        assert page.errors == []
        assert "Only 24 attempts" in page.words
        assert "".join(page.h1) == "Scouting <note>" and "<note>" not in text

    def test_attempt_type_none_pools_and_free_throws_alone(self, frame):
        pooled = Page(player_briefing_html(frame, "b", attempt_type=None, permutations=100, seed=1))
        assert "all attempts" in pooled.words and f"{14 * 14:,} attempts in 14 games" in pooled.words
        throws = Page(player_briefing_html(frame, "b", attempt_type="free_throw", permutations=100, seed=1))
        assert "free throws" in throws.words and "14 attempts in 14 games" in throws.words

    @pytest.mark.parametrize(
        ("kwargs", "match"),
        [
            (dict(player="zz"), "player 'zz' has no attempts"),
            (dict(player=""), "non-empty player id"),
            (dict(player="a", attempt_type="dunk"), "no attempts of type 'dunk'"),
            (dict(player="a", title=3), "`title` must be a string"),
            (dict(player="a", scan={"seed": 1}), "LeagueScanResult.to_dict"),
            (dict(player="a", permutations=0), "permutations"),
            (dict(player="a", max_k=9), "max_k"),
        ],
    )
    def test_validation(self, frame, kwargs, match):
        with pytest.raises(ValueError, match=match):
            player_briefing_html(frame, **kwargs)

    def test_frame_needs_columns(self):
        with pytest.raises(ValueError, match="needs the columns"):
            player_briefing_html(pd.DataFrame({"player": ["a"]}), "a")
        with pytest.raises(ValueError, match="pandas DataFrame"):
            player_briefing_html([1, 2], "a")


class TestLeagueBriefing:
    def test_well_formed_self_contained_and_complete(self, page_league, scan):
        page = Page(page_league)
        assert page.errors == []
        assert_self_contained(page_league, page)
        assert {"cautions", "reading", "players", "league-table", "figures", "provenance"} <= page.ids
        assert {"figure-funnel-k1", "figure-funnel-k2", "figure-funnel-k3"} <= page.ids
        for caution in (*BRIEFING_CAUTIONS, LEAGUE_CAUTION):
            assert caution in page.words
        assert f"{len(scan['players'])} players were tested" in page.words
        assert "1 more in the table had too few attempts" in page.words  # player c
        assert "Across the league, the average corrected gap after a make" in page.words
        assert "1-abc" in page.words and str(SEED) in page.words

    def test_table_numbers_equal_the_scan(self, page_league, scan):
        page = Page(page_league)
        rows = {}
        for row, cell in page.cells:
            rows.setdefault(row["data-player"], []).append(cell)
        assert set(rows) == {p["player"] for p in scan["players"]}
        for entry in scan["players"]:
            cells = rows[entry["player"]]
            for k in (1, 2, 3):
                item = entry["streak"][k - 1]
                for field in ("corrected", "p_value", "q_value"):
                    cell = next(c for c in cells if c["data-field"] == field and c.get("data-k") == str(k))
                    assert_same(number(cell["data-value"]), item[field])
            attempts = next(c for c in cells if c["data-field"] == "attempts")
            assert number(attempts["data-value"]) == entry["attempts"]
        assert page.json_block["scan"] == json.loads(json.dumps(scan))

    def test_names_are_escaped(self, page_league):
        assert "<script>alert" not in page_league
        assert HOSTILE in Page(page_league).words

    def test_ranked_by_smallest_q(self, scan, players_table):
        page = Page(league_briefing_html(scan, players_table, top=1))
        players = [row["data-player"] for row in page.rows if "data-player" in row]
        best = min(scan["players"], key=lambda p: (min(s["q_value"] for s in p["streak"]), p["player"]))
        assert players == [best["player"]]

    def test_funnel_figure(self, scan, players_table):
        fig = league_funnel_figure(scan, 2, players_table)
        xs = [x for trace in fig.data for x in trace.x]
        ys = [y for trace in fig.data for y in trace.y]
        expected = sorted((p["attempts"], p["streak"][1]["corrected"]) for p in scan["players"])
        assert sorted(zip(xs, ys)) == expected
        names = [c[0] for trace in fig.data for c in trace.customdata]
        assert all("<script>" not in n for n in names)

    def test_empty_scan_and_missing_table(self):
        text = league_briefing_html({"seed": 1, "permutations": 10, "players": [], "league": []}, None)
        page = Page(text)
        assert page.errors == [] and "No player was tested." in page.words

    @pytest.mark.parametrize(
        ("args", "kwargs", "match"),
        [
            (({"players": "x"}, None), {}, "LeagueScanResult.to_dict"),
            (({"players": [{"player": "a"}]}, None), {}, "needs 'player' and 'streak'"),
            (({"players": []}, pd.DataFrame({"x": [1]})), {}, "'player' column"),
            (({"players": []}, None), {"top": 0}, "`top` must be a positive integer"),
            (({"players": []}, None), {"settings": [1]}, "`settings` must be a dict"),
        ],
    )
    def test_validation(self, args, kwargs, match):
        with pytest.raises(ValueError, match=match):
            league_briefing_html(*args, **kwargs)


def test_briefing_module_does_not_import_dash():
    import subprocess
    import sys

    code = ("import sys; import streakwise.dashboard.briefing; "
            "print(any(m == 'dash' or m.startswith('dash.') for m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"
