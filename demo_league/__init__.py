"""The demo league: an invented league with known truth, written in every source layout.

:func:`build_demo` draws the league (``scenario``: teams, players and their
true types; ``games``: the seasons played through the simulators of
``streakwise.analysis``), writes it as an event log, an attempt table and
drill sheets (``write``) and ingests them through the shipped profiles into a
fresh store. The league, its teams and its players are invented.
"""

from .build import DEFAULT_SEED, DemoSource, DemoSummary, build_demo, demo_files, write_demo_files
from .scenario import KINDS, Game, Player, PracticeStudy, Scenario, Team, build_scenario

__all__ = [
    "DEFAULT_SEED",
    "DemoSource",
    "DemoSummary",
    "Game",
    "KINDS",
    "Player",
    "PracticeStudy",
    "Scenario",
    "Team",
    "build_demo",
    "build_scenario",
    "demo_files",
    "write_demo_files",
]
