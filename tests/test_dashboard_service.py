"""The dashboard's server-side pieces: settings, caches, league scans, ingest, jobs, the address bar."""

from __future__ import annotations

import argparse
import threading
import time

import pytest
from dashboard_support import BAD_CSV, copy_store

from streakwise.cli.analyse_commands import RESULT_KIND, scan_settings
from streakwise.dashboard.jobs import Job, Jobs
from streakwise.dashboard.service import DashboardService, DashboardSettings, run_league_scan
from streakwise.dashboard.urls import parse_query, query_int, query_list, update_query
from streakwise.ingest import InputError, Store, StoreInUseError

SETTINGS = DashboardSettings(permutations=300, seed=5)


@pytest.fixture(scope="module")
def service(tmp_path_factory):
    service = DashboardService(copy_store(tmp_path_factory.mktemp("service")), SETTINGS)
    yield service
    service.close()


def wait_for(job: Job, timeout: float = 120.0) -> Job:
    assert job.wait(timeout), f"job {job.label} did not finish in {timeout} s"
    return job


class TestDashboardSettings:
    def test_defaults(self):
        settings = DashboardSettings()
        assert settings.permutations == 2000 and settings.max_k == 3 and settings.alternative == "hot"
        assert settings.upload_limit_bytes == 50 * 1024 * 1024

    @pytest.mark.parametrize(
        ("field", "value", "match"),
        [
            ("permutations", 0, "`permutations` must be a whole number of at least 1"),
            ("seed", -1, "`seed` must be a whole number of at least 0"),
            ("max_k", 9, "`max_k` must be between 1 and 8"),
            ("alternative", "warm", "`alternative` must be one of 'hot', 'cold', 'two-sided'"),
            ("workers", True, "`workers` must be a whole number"),
        ],
    )
    def test_validation(self, field, value, match):
        with pytest.raises(ValueError, match=match):
            DashboardSettings(**{field: value})


class TestDashboardService:
    def test_missing_store_is_an_input_error(self, tmp_path):
        with pytest.raises(InputError, match="store not found"):
            DashboardService(tmp_path / "nothing.duckdb")

    def test_the_server_owns_the_store(self, service):
        # The service holds the file: a second writer in this process is refused, as another process would be.
        with pytest.raises(StoreInUseError):
            Store(service.store_path, read_only=True)

    def test_overview(self, service):
        overview = service.overview()
        assert overview["seasons"] == ["2040-41", "2041-42"]
        assert overview["attempt_types"] == ["field_goal"]
        assert overview["players"] == 24 and len(overview["teams"]) == 10
        assert service.default_attempt_type() == "field_goal"
        assert service.latest_season("field_goal") == "2041-42"

    def test_player_test_is_cached(self, service):
        first = service.player_test("S002", None, "field_goal")
        again = service.player_test("S002", None, "field_goal")
        assert again is first
        other_season = service.player_test("S002", "2040-41", "field_goal")
        assert other_season is not first and other_season.attempts < first.attempts
        assert service.player_test("NOBODY", None, "field_goal") is None

    def test_scan_settings_match_the_command_line(self, service):
        args = argparse.Namespace(player=None, season=["2040-41"], team=None, max_k=3, permutations=300,
                                  min_attempts=100, alternative="hot")
        assert service.scan_settings("2040-41", "field_goal") == scan_settings(args, "field_goal", 5)

    def test_league_scan_runs_in_the_background_and_is_saved(self, service):
        view = service.scan("2040-41", "field_goal")
        assert view.payload is None and view.job is None
        started = service.start_scan("2040-41", "field_goal")
        assert started.job is not None and started.job.total == 24
        assert service.start_scan("2040-41", "field_goal").job is started.job  # joins the running job
        wait_for(started.job)
        assert started.job.state == "done" and started.job.done == 24
        view = service.scan("2040-41", "field_goal")
        assert view.payload is not None and len(view.payload["players"]) == 24
        # saved under the command line's key
        assert service.store.load_result(RESULT_KIND, view.settings) == view.payload
        # the player's own test gives the scan's numbers (same seed, same stream)
        entry = next(p for p in view.payload["players"] if p["player"] == "S003")
        result = service.player_test("S003", "2040-41", "field_goal")
        assert result.test("difference", 2).p_value == pytest.approx(entry["streak"][1]["p_value"])
        assert result.test("difference", 2).corrected == pytest.approx(entry["streak"][1]["corrected"])

    def test_a_scan_can_be_cancelled(self, service):
        slow = DashboardSettings(permutations=20_000, seed=6)  # slow enough for the cancel to land while it runs
        view = service.scan("2041-42", "field_goal")
        sequences = service.league_sequences("2041-42", "field_goal")
        players = [sequences[n] for n in sorted(sequences)]
        jobs = Jobs()
        job = jobs.start("slow", "slow scan", len(players),
                         lambda report, executor: run_league_scan(players, "field_goal", slow, progress=report))
        time.sleep(0.3)
        jobs.cancel("slow")
        wait_for(job)
        assert job.state == "cancelled" and job.done < len(players)
        assert view.payload is None

    def test_run_league_scan_is_the_cli_payload(self, service):
        sequences = service.league_sequences("2041-42", "field_goal")
        players = [sequences[n] for n in sorted(sequences)][:3]
        payload = run_league_scan(players, "field_goal", DashboardSettings(permutations=50, seed=1, min_attempts=1))
        assert payload["attempt_type"] == "field_goal"
        assert {"seed", "permutations", "players", "league"} <= set(payload)


class TestIngestBytes:
    @pytest.fixture
    def fresh(self, tmp_path):
        service = DashboardService(copy_store(tmp_path), SETTINGS)
        yield service
        service.close()

    def test_bad_file_is_refused_row_by_row_with_its_own_name(self, fresh):
        before = fresh.data_version()
        report = fresh.ingest_bytes("my log.csv", BAD_CSV.encode(), None, store=True)
        assert not report.ok and not report.stored
        assert report.problems[0].startswith("my log.csv:3:made: unknown outcome 'maybe'")
        assert "streakwise-upload-" not in "\n".join(report.lines)
        assert fresh.data_version() == before

    def test_keep_going_stores_the_good_rows(self, fresh):
        before = fresh.data_version()
        report = fresh.ingest_bytes("../../etc/log.csv", BAD_CSV.encode(), None, keep_going=True, store=True)
        assert report.ok and report.stored
        assert report.problems == ("log.csv:3:made: unknown outcome 'maybe'; expected 'made', 'make', '1', 'true', 'h', "
                                   "'hit', 'in', 'x', ... for made or 'missed', 'miss', '0', 'false', 'm', 'out', 'o', "
                                   "'no', ... for missed",)
        assert fresh.data_version() != before
        assert "Q1" in set(fresh.players()["player"])
        assert list(fresh.store.sources()["name"])[-1] == "log.csv"
        again = fresh.ingest_bytes("log.csv", BAD_CSV.encode(), None, keep_going=True, store=True)
        assert "already in the store" in "\n".join(again.lines)

    def test_check_only_stores_nothing(self, fresh):
        before = fresh.data_version()
        report = fresh.ingest_bytes("log.csv", BAD_CSV.encode(), None, keep_going=True, store=False)
        assert report.ok and not report.stored and "Checked only" in "\n".join(report.lines)
        assert fresh.data_version() == before

    def test_uploaded_profile_errors_name_the_file(self):
        with pytest.raises(InputError, match="my.toml"):
            DashboardService.parse_uploaded_profile("my.toml", b"layout = 'sideways'\n")


class TestJobs:
    def test_progress_result_and_on_done(self):
        jobs = Jobs()
        seen = []

        def work(report, executor):
            assert executor is None
            for i in range(1, 4):
                report(i)
            return "answer"

        job = wait_for(jobs.start("k", "three steps", 3, work, seen.append))
        assert (job.state, job.done, job.result, job.fraction) == ("done", 3, "answer", 1.0)
        assert seen == ["answer"]

    def test_failure_is_reported(self, capsys):
        jobs = Jobs()
        job = wait_for(jobs.start("bad", "fails", 1, lambda report, executor: 1 / 0))
        assert job.state == "failed" and "ZeroDivisionError" in job.error

    def test_cancel(self):
        jobs = Jobs()
        release = threading.Event()

        def work(report, executor):
            report(0)
            release.wait(5)
            report(1)
            return "never"

        job = jobs.start("c", "waits", 2, work)
        jobs.cancel("c")
        release.set()
        wait_for(job)
        assert job.state == "cancelled" and job.result is None

    def test_process_pool_workers(self, service):
        sequences = service.league_sequences("2041-42", "field_goal")
        players = [sequences[n] for n in sorted(sequences)][:4]
        settings = DashboardSettings(permutations=100, seed=3, min_attempts=1)
        jobs = Jobs(workers=2)
        try:
            job = wait_for(jobs.start("pool", "pool", 4, lambda report, executor: run_league_scan(
                players, "field_goal", settings, progress=report, executor=executor)))
        finally:
            jobs.shutdown()
        serial = run_league_scan(players, "field_goal", settings)
        assert job.state == "done" and job.result == serial

    def test_bad_workers(self):
        with pytest.raises(ValueError, match="`workers` must be a whole number of at least 1"):
            Jobs(workers=0)


class TestUrls:
    def test_parse_and_update(self):
        params = parse_query("?players=P001,P028&k=2")
        assert params == {"players": "P001,P028", "k": "2"}
        assert query_list(params, "players") == ["P001", "P028"]
        assert query_int(params, "k", 1, low=1, high=3) == 2
        assert query_int({"k": "x"}, "k", 1) == 1 and query_int({"k": "9"}, "k", 1, high=3) == 3
        assert update_query("?players=P001,P028&k=2", k=3, season="2040-41") == "?players=P001,P028&k=3&season=2040-41"
        assert update_query("?k=2", k=None) == ""
        assert update_query("", players=["A B", "C&D"]) == "?players=A+B,C%26D"
        assert parse_query(update_query("", players=["A B", "C&D"])) == {"players": "A B,C&D"}


def test_upload_names_cannot_leave_the_temporary_folder(tmp_path):
    service = DashboardService(copy_store(tmp_path), SETTINGS)
    try:
        for name in ("..", ".", "", "a/../../b.csv", "C:\\\\x\\\\log.csv"):
            report = service.ingest_bytes(name, BAD_CSV.encode(), None)
            assert not report.ok and report.problems[0].split(":")[0] in ("upload", "b.csv", "log.csv")
    finally:
        service.close()
