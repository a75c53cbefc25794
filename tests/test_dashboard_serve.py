"""``streakwise serve``: waitress on loopback, the address printed, the store held, a clean stop."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
import urllib.request

import pytest
from dashboard_support import copy_store

from streakwise.cli.main import build_parser, main
from streakwise.dashboard.serve import ServerThread, is_loopback


def test_options_and_defaults():
    args = build_parser().parse_args(["serve"])
    assert (args.host, args.port, args.debug, args.permutations, args.upload_limit_mb) == ("127.0.0.1", 8050, False, 2000, 50)


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--port", "70000"], "--port: must be between 0 and 65535"),
        (["--permutations", "0"], "--permutations: must be at least 1"),
        (["--seed", "-2"], "--seed: must be a non-negative whole number"),
    ],
)
def test_bad_options(argv, message, capsys, tmp_path):
    assert main(["serve", "--store", str(tmp_path / "x.duckdb"), *argv]) == 2
    assert message in capsys.readouterr().err


def test_missing_store(tmp_path, capsys):
    assert main(["serve", "--store", str(tmp_path / "none.duckdb"), "--port", "0"]) == 2
    assert "store not found" in capsys.readouterr().err
    assert not (tmp_path / "none.duckdb").exists()


def test_is_loopback():
    assert is_loopback("127.0.0.1") and is_loopback("::1") and is_loopback("localhost")
    assert not is_loopback("0.0.0.0") and not is_loopback("192.168.1.5") and not is_loopback("example.org")


def test_server_thread(tmp_path):
    from streakwise.dashboard.app import create_app

    app = create_app(copy_store(tmp_path))
    try:
        with ServerThread(app) as server:
            assert server.url.startswith("http://127.0.0.1:")
            with urllib.request.urlopen(server.url + "/league", timeout=10) as response:
                assert response.status == 200 and b"streakwise" in response.read()
    finally:
        app.streakwise.close()


def _read_address(process: subprocess.Popen, timeout: float = 60.0) -> str:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        line = process.stdout.readline()
        if not line:
            if process.poll() is not None:
                raise AssertionError(f"serve exited early: {process.stderr.read()}")
            continue
        if line.startswith("streakwise dashboard on "):
            return line.split(" on ", 1)[1].strip()
    raise AssertionError("serve printed no address")


def test_serve_end_to_end(tmp_path):
    store = copy_store(tmp_path)
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    process = subprocess.Popen(
        [sys.executable, "-m", "streakwise.cli", "serve", "--store", str(store), "--port", "0"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
    )
    try:
        address = _read_address(process)
        assert address.startswith("http://127.0.0.1:") and address.endswith("/")
        with urllib.request.urlopen(address + "compare?players=S001,S002", timeout=20) as response:
            assert response.status == 200
            assert response.headers["Server"] == "streakwise"
        # the server holds the store: another process is told it is in use
        other = subprocess.run([sys.executable, "-m", "streakwise.cli", "players", "--store", str(store)],
                               capture_output=True, text=True, timeout=60)
        assert other.returncode == 2 and "store in use by another streakwise process" in other.stderr
        process.send_signal(signal.SIGINT)
        out, err = process.communicate(timeout=30)
        assert process.returncode == 0, err
        assert "stopped" in out
    finally:
        if process.poll() is None:
            process.kill()
            process.communicate()
    # released: the store opens again
    again = subprocess.run([sys.executable, "-m", "streakwise.cli", "players", "--store", str(store)],
                           capture_output=True, text=True, timeout=60)
    assert again.returncode == 0, again.stderr
