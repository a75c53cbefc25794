"""League scans on any executor: identical results in-process, on a local pool, on Dask.

A real ``distributed.LocalCluster`` (two worker processes, everything bound to
127.0.0.1, its files in a temporary folder) runs the same scans as this process
and a local process pool; the JSON must match byte for byte. Faults: a Dask
worker killed mid-scan, a local worker process that dies, a scan interrupted
by the user and resumed from the store.
"""

from __future__ import annotations

import json
import os
import signal
import time

import numpy as np
import pytest

from streakwise.analysis import league as league_module
from streakwise.analysis.executors import (
    ExecutorSpec,
    WorkerLostError,
    decode_task_output,
    encode_task_output,
    map_tasks,
)
from streakwise.analysis.league import league_scan
from streakwise.analysis.sequences import player_sequences
from streakwise.analysis.simulate import simulate_markov, simulate_session_lengths
from streakwise.cli import analyse_commands, main
from streakwise.ingest.load import load_file
from streakwise.ingest.store import Store

SEED = 9
MIN_ATTEMPTS = 120
SHORT = ("z-short-1", "z-short-2", "z-short-3")  # under MIN_ATTEMPTS: skipped


def write_league(path, n_players=30, seed=2030):
    """A canonical file: a few dozen players, some streaky, three with too few attempts."""
    rng = np.random.default_rng(seed)
    lines = ["player,session,seq,made,game,attempt_type,season"]
    names = [f"p{i:02d}" for i in range(n_players)] + list(SHORT)
    for name in names:
        games = 3 if name in SHORT else int(rng.integers(20, 36))
        lengths = simulate_session_lengths(games, mean=14, low=5, high=25, rng=rng)
        streaky = name in ("p03", "p11")
        after_make, after_miss = (0.65, 0.35) if streaky else (0.47, 0.47)
        for g, length in enumerate(lengths):
            made = simulate_markov(int(length), rate_after_make=after_make, rate_after_miss=after_miss,
                                   rng=rng).made.ravel()
            lines += [f"{name},g{g:02d},{s},{int(m)},g{g:02d},field_goal,2030" for s, m in enumerate(made)]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture(scope="module")
def league_file(tmp_path_factory):
    return write_league(tmp_path_factory.mktemp("league") / "league.csv")


@pytest.fixture(scope="module")
def players(league_file):
    sequences = player_sequences(load_file(str(league_file)).attempts)
    return [sequences[name] for name in sorted(sequences)]


@pytest.fixture
def store(league_file, tmp_path):
    path = tmp_path / "league.duckdb"
    assert main(["ingest", str(league_file), "--store", str(path)]) == 0
    return path


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    from distributed import LocalCluster  # imported here: worker processes import this module too

    local = LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
        dashboard_address="127.0.0.1:0", local_directory=str(tmp_path_factory.mktemp("dask")))
    try:
        yield local
    finally:
        local.close()


@pytest.fixture(scope="module")
def client(cluster):
    from distributed import Client

    connected = Client(cluster.scheduler_address, set_as_default=False)
    try:
        yield connected
    finally:
        connected.close()


@pytest.fixture
def one_player_per_task(monkeypatch):
    """Every player its own task, so that a scan has many tasks in flight."""
    monkeypatch.setattr(league_module, "TASK_WEIGHT", 0)


def analyse(capsys, *argv):
    code = main(["analyse", *argv])
    out, err = capsys.readouterr()
    return code, out, err


def scan_args(store, *extra):
    return ("--store", str(store), "--permutations", "300", "--seed", str(SEED),
            "--min-attempts", str(MIN_ATTEMPTS), "--json", *extra)


# ---------------------------------------------------------------------------
# Identical results
# ---------------------------------------------------------------------------


class TestIdenticalResults:
    def test_cluster_binds_only_to_loopback(self, cluster, client):
        import psutil
        assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
        pids = {os.getpid(), *client.run(os.getpid).values()}
        listening = [conn.laddr for pid in pids for conn in psutil.Process(pid).net_connections(kind="inet")
                     if conn.status == psutil.CONN_LISTEN]
        assert listening and {address.ip for address in listening} == {"127.0.0.1"}

    def test_cli_json_identical_in_process_on_the_pool_and_on_the_cluster(self, store, cluster, capsys):
        outputs = {}
        for name, extra in [("in-process", ("--workers", "1")), ("pool", ("--workers", "2")),
                            ("cluster", ("--cluster", cluster.scheduler_address))]:
            code, out, err = analyse(capsys, *scan_args(store, *extra))
            assert code == 0, err
            outputs[name] = out
        assert outputs["pool"] == outputs["in-process"]
        assert outputs["cluster"] == outputs["in-process"]
        payload = json.loads(outputs["in-process"])
        tested = [p["player"] for p in payload["players"]]
        assert tested == [f"p{i:02d}" for i in range(30)]  # the short players were skipped

    def test_python_api_identical_for_any_executor_and_task_size(self, players, client, monkeypatch):
        settings = dict(permutations=400, rng=SEED, min_attempts=MIN_ATTEMPTS, max_k=2, resamples=100)
        serial = league_scan(players, **settings)
        pooled = league_scan(players, workers=2, **settings)
        on_dask = league_scan(players, cluster=client, **settings)
        monkeypatch.setattr(league_module, "TASK_WEIGHT", 0)
        per_player = league_scan(players, workers=2, **settings)
        expected = json.dumps(serial.to_dict())
        for other in (pooled, on_dask, per_player):
            assert json.dumps(other.to_dict()) == expected
            for a, b in zip(other.league, serial.league):
                np.testing.assert_array_equal(a.null_distribution, b.null_distribution)

    def test_progress_follows_completed_players(self, players, client, one_player_per_task):
        done = []
        scan = league_scan(players, permutations=100, resamples=0, rng=1, min_attempts=MIN_ATTEMPTS,
                           cluster=client, progress=done.append)
        assert done[0] == len(SHORT) and done[-1] == len(players) == len(done) + len(SHORT) - 1
        assert done == sorted(done) and len(scan.players) == len(players) - len(SHORT)


# ---------------------------------------------------------------------------
# Faults
# ---------------------------------------------------------------------------


def square_or_die(item):
    """Squares ``value``; the item marked to die kills its worker process (once, or always)."""
    marker, value, die = item
    if die == "always" or (die == "once" and not os.path.exists(marker)):
        open(marker, "w").close()
        os._exit(1)
    return value * value


class TestFaults:
    def test_dask_worker_killed_mid_scan_loses_no_player(self, players, client, one_player_per_task):
        settings = dict(permutations=4000, resamples=200, rng=SEED, min_attempts=MIN_ATTEMPTS, max_k=2)
        expected = league_scan(players, **settings)
        before = client.run(os.getpid)
        victim = sorted(before)[0]
        killed = []

        def kill_after_the_first_result(done):
            if done > len(SHORT) and not killed:
                os.kill(before[victim], signal.SIGKILL)
                killed.append(done)

        scan = league_scan(players, cluster=client, progress=kill_after_the_first_result, **settings)
        assert killed and killed[0] < len(players)  # killed while players were still running
        assert json.dumps(scan.to_dict()) == json.dumps(expected.to_dict())
        assert before[victim] not in client.run(os.getpid).values()

    def test_pool_worker_that_dies_once_is_retried(self, tmp_path):
        marker = str(tmp_path / "died")
        items = [(marker, i, "once" if i == 5 else None) for i in range(12)]
        done = []
        out = map_tasks(square_or_die, items, executor_spec=ExecutorSpec(workers=2, retries=1),
                        progress=done.append)
        assert out == [i * i for i in range(12)]
        assert os.path.exists(marker)  # it did die once
        assert done[-1] == 12 and done == sorted(done)

    def test_pool_worker_that_always_dies_stops_after_the_retries(self, tmp_path):
        items = [(str(tmp_path / "died"), i, "always" if i == 1 else None) for i in range(4)]
        with pytest.raises(WorkerLostError, match=r"lost with its worker 2 times on 2 local worker processes"):
            map_tasks(square_or_die, items, executor_spec=ExecutorSpec(workers=2, retries=1))

    def test_interrupted_scan_resumes_to_the_same_json(self, store, capsys, monkeypatch, one_player_per_task):
        code, uninterrupted, err = analyse(capsys, *scan_args(store, "--workers", "2"))
        assert code == 0, err

        class InterruptingBar:
            """Stands in for the progress bar; Ctrl-C once eight players are done."""

            n = 0

            def update(self, count):
                self.n += count
                if self.n >= len(SHORT) + 8:
                    raise KeyboardInterrupt

            def close(self):
                pass

        monkeypatch.setattr(analyse_commands, "_progress_bar", lambda total: InterruptingBar())
        code, out, err = analyse(capsys, *scan_args(store, "--workers", "2", "--save"))
        assert (code, out) == (130, "")
        assert "run the same command with --resume" in err
        monkeypatch.setattr(analyse_commands, "_progress_bar", lambda total: None)

        settings = {"players": None, "seasons": None, "teams": None, "attempt_type": "field_goal", "max_k": 3,
                    "permutations": 300, "seed": SEED, "min_attempts": MIN_ATTEMPTS, "alternative": "hot"}
        with Store(store, read_only=True) as s:
            kept = [name for name in (f"p{i:02d}" for i in range(30))
                    if s.load_result(analyse_commands.PARTIAL_KIND,
                                     analyse_commands._partial_settings(settings, name)) is not None]
        assert 8 <= len(kept) < 30

        # resume without --seed: the seed of the interrupted scan is found in the store
        args = [a for a in scan_args(store, "--workers", "1", "--resume") if a not in ("--seed", str(SEED))]
        code, resumed, err = analyse(capsys, *args)
        assert code == 0, err
        assert f"seed {SEED}" in err and f"resuming: {len(kept)} player(s) already tested, {30 - len(kept)} to go" in err
        assert resumed == uninterrupted
        with Store(store, read_only=True) as s:
            assert s.load_result(analyse_commands.RESULT_KIND, settings) == json.loads(uninterrupted)
            pointer = s.load_result(analyse_commands.PARTIAL_KIND, analyse_commands._partial_settings(settings, kept[0]))
        assert "part" not in pointer and "scan" in pointer  # the kept null draws were released

    def test_ctrl_c_waits_for_the_store_write_in_progress(self):
        written = []
        with pytest.raises(KeyboardInterrupt):
            with analyse_commands._uninterrupted():
                os.kill(os.getpid(), signal.SIGINT)
                time.sleep(0.05)  # the signal arrives here: held, not raised
                written.append("whole")
        assert written == ["whole"]
        assert signal.getsignal(signal.SIGINT) is signal.default_int_handler

    def test_resume_with_nothing_kept_runs_every_player(self, store, capsys):
        code, plain, _ = analyse(capsys, *scan_args(store, "--workers", "1"))
        code, resumed, err = analyse(capsys, *scan_args(store, "--resume"))
        assert code == 0, err
        assert "resuming: 0 player(s) already tested, 30 to go" in err
        assert resumed == plain


# ---------------------------------------------------------------------------
# Units: the executor and the saved form of a finished player
# ---------------------------------------------------------------------------


class TestMapTasks:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`workers` must be an integer >= 1 \(got 0\)"):
            ExecutorSpec(workers=0)
        with pytest.raises(ValueError, match=r"`cluster` must be a Dask scheduler address like 'tcp://HOST:PORT' \(got 'localhost'\)"):
            ExecutorSpec(cluster="localhost")
        with pytest.raises(ValueError, match=r"`retries` must be an integer >= 0 \(got -1\)"):
            ExecutorSpec(retries=-1)
        with pytest.raises(ValueError, match=r"`weights` must hold one finite non-negative number per item"):
            map_tasks(abs, [1, 2], weights=[1])
        with pytest.raises(ValueError, match=r"`progress` must be callable or None \(got 'bar'\)"):
            map_tasks(abs, [1], progress="bar")

    def test_order_kept_and_small_items_grouped(self):
        calls = []
        out = map_tasks(abs, [-1, -2, -3, -4, -5], weights=[1, 1, 5, 1, 1], task_weight=2,
                        on_result=lambda i, v: calls.append((i, v)), progress=calls.append)
        assert out == [1, 2, 3, 4, 5]
        # tasks: [-1, -2], [-3], [-4, -5]: results, then progress, per task
        assert calls == [(0, 1), (1, 2), 2, (2, 3), 3, (3, 4), (4, 5), 5]

    def test_unreachable_scheduler(self, monkeypatch, capsys, store):
        from streakwise.analysis import executors

        monkeypatch.setattr(executors, "CONNECT_TIMEOUT", 1)
        with pytest.raises(ConnectionError, match="cannot reach the Dask scheduler at tcp://127.0.0.1:9"):
            map_tasks(abs, [1, 2], executor_spec="tcp://127.0.0.1:9")
        code, _, err = analyse(capsys, *scan_args(store, "--cluster", "tcp://127.0.0.1:9"))
        assert code == 2 and "cannot reach the Dask scheduler" in err

    @pytest.mark.parametrize(
        ("extra", "message"),
        [
            (("--cluster", "127.0.0.1:8786"), "--cluster must be a Dask scheduler address like tcp://HOST:PORT"),
            (("--cluster", "tcp://127.0.0.1:8786", "--workers", "2"), "with --cluster the cluster's workers run"),
            (("--workers", "0"), "--workers must be at least 1"),
        ],
    )
    def test_bad_cli_options_exit_2(self, store, capsys, extra, message):
        code, _, err = analyse(capsys, *scan_args(store, *extra))
        assert code == 2 and message in err

    def test_resume_needs_the_store(self, league_file, capsys):
        code, _, err = analyse(capsys, "--input", str(league_file), "--resume")
        assert code == 2 and "--resume continues a scan saved in the store" in err


class TestSavedPlayers:
    def test_round_trip_is_exact(self, players):
        kept = []
        scan = league_scan(players[:3], permutations=200, resamples=50, rng=4, min_attempts=1,
                           on_player=lambda name, part: kept.append((name, part)))
        for name, part in kept:
            text = json.dumps(encode_task_output(part), allow_nan=False)
            result, null = decode_task_output(json.loads(text))
            original, original_null = part
            assert result.to_dict() == original.to_dict() and result.summary() == original.summary()
            assert result.to_frame().equals(original.to_frame())
            assert null.dtype == original_null.dtype
            np.testing.assert_array_equal(null, original_null)
        again = league_scan(players[:3], permutations=200, resamples=50, rng=4, min_attempts=1,
                            completed={name: decode_task_output(json.loads(json.dumps(encode_task_output(part))))
                                       for name, part in kept[:2]})
        assert json.dumps(again.to_dict()) == json.dumps(scan.to_dict())

    def test_completed_from_another_scan_is_refused(self, players):
        kept = {}
        league_scan(players[:1], permutations=100, resamples=0, rng=4, min_attempts=1,
                    on_player=kept.__setitem__)
        with pytest.raises(ValueError, match="holds a result for player 'p00' from another scan"):
            league_scan(players[:1], permutations=100, resamples=0, rng=5, min_attempts=1, completed=kept)

    def test_only_streakwise_classes_are_rebuilt(self):
        with pytest.raises(ValueError, match="refusing to rebuild 'os:system'"):
            decode_task_output({"$dataclass": "os:system", "fields": {}})
        with pytest.raises(ValueError, match="cannot encode an array of dtype object"):
            encode_task_output(np.array([None]))
