"""Shared test setup.

With ``STREAKWISE_REQUIRE_ALL_TESTS=1`` (set by ``.ci/run``) a skipped test
fails the run: every test is required.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DATA = REPO / "tests" / "data"


def pytest_sessionfinish(session: pytest.Session, exitstatus: int) -> None:
    if os.environ.get("STREAKWISE_REQUIRE_ALL_TESTS") != "1":
        return
    reporter = session.config.pluginmanager.get_plugin("terminalreporter")
    skipped = len(reporter.stats.get("skipped", [])) if reporter else 0
    if skipped and session.exitstatus == 0:
        reporter.write_line(f"FAILED: {skipped} required test(s) skipped (STREAKWISE_REQUIRE_ALL_TESTS=1)", red=True)
        session.exitstatus = 1


@pytest.fixture
def data_dir() -> Path:
    return DATA
