"""Component ids of the dashboard, in one place.

Every id a callback or a test refers to is a constant here, so a renamed id
breaks loudly at import time instead of silently at run time. Ids are
kebab-case strings prefixed with their view.
"""

from __future__ import annotations

__all__ = [
    "COMPARE_DIFFICULTY",
    "COMPARE_EFFECTS_GRAPH",
    "COMPARE_K",
    "COMPARE_NOTE",
    "COMPARE_PLAYERS",
    "COMPARE_RATES_GRAPH",
    "COMPARE_SEASON",
    "COMPARE_TABLE",
    "COMPARE_TYPE",
    "DATA_CHECK",
    "DATA_INGEST",
    "DATA_KEEP_GOING",
    "DATA_PROFILE",
    "DATA_PROFILE_NAME",
    "DATA_PROFILE_UPLOAD",
    "DATA_REJECTS",
    "DATA_REPORT",
    "DATA_SOURCES",
    "DATA_UPLOAD",
    "DATA_UPLOAD_CHECKED",
    "DATA_UPLOAD_NAME",
    "DATA_UPLOAD_TOO_BIG",
    "HEADER_DATA_VERSION",
    "LEAGUE_BRIEFING",
    "LEAGUE_BRIEFING_DOWNLOAD",
    "LEAGUE_CANCEL",
    "LEAGUE_FUNNEL",
    "LEAGUE_K",
    "LEAGUE_MIN_ATTEMPTS",
    "LEAGUE_POLL",
    "LEAGUE_POOLED",
    "LEAGUE_PROGRESS",
    "LEAGUE_PROGRESS_TEXT",
    "LEAGUE_RUN",
    "LEAGUE_SCAN_TOKEN",
    "LEAGUE_SEASON",
    "LEAGUE_STATUS",
    "LEAGUE_TABLE",
    "LEAGUE_TEAM",
    "LEAGUE_TYPE",
    "NAV",
    "ODDS_ACROSS",
    "ODDS_ANSWER",
    "ODDS_ATTEMPTS",
    "ODDS_AT_LEAST",
    "ODDS_CHECK",
    "ODDS_GAMES",
    "ODDS_GAMES_IN_A_ROW",
    "ODDS_KIND",
    "ODDS_LEAGUE_PLAYERS",
    "ODDS_PLAYER",
    "ODDS_RATE",
    "ODDS_RUN",
    "ODDS_SEASON",
    "ODDS_SEASONS",
    "ODDS_SHOOTER",
    "ODDS_TYPE",
    "ODDS_WINDOW",
    "PAGE",
    "PLANNING_ANSWER",
    "PLANNING_ATTEMPTS",
    "PLANNING_ATTEMPTS_GRAPH",
    "PLANNING_BODY",
    "PLANNING_CANCEL",
    "PLANNING_EFFECT",
    "PLANNING_EFFECTS",
    "PLANNING_GAMES",
    "PLANNING_JOB",
    "PLANNING_MODEL",
    "PLANNING_PERMUTATIONS",
    "PLANNING_PERSISTENCE",
    "PLANNING_POLL",
    "PLANNING_POWER_GRAPH",
    "PLANNING_PROGRESS",
    "PLANNING_RATE",
    "PLANNING_RUN",
    "PLANNING_SIMULATIONS",
    "PLANNING_STATUS",
    "PLANNING_TARGET",
    "PLAYER_BRIEFING",
    "PLAYER_BRIEFING_DOWNLOAD",
    "PLAYER_HOT_STATE",
    "PLAYER_LONGEST_GRAPH",
    "PLAYER_PLAYER",
    "PLAYER_RATES_GRAPH",
    "PLAYER_RUN",
    "PLAYER_SEASON",
    "PLAYER_STRIP_GRAPH",
    "PLAYER_SUMMARY",
    "PLAYER_TYPE",
    "URL",
    "nav_link",
]

# -- the frame ---------------------------------------------------------------
URL = "url"
PAGE = "page"
NAV = "nav"
HEADER_DATA_VERSION = "header-data-version"


def nav_link(view: str) -> str:
    """Id of the navigation link to ``view`` (a view's name, e.g. ``"league"``)."""
    return f"nav-{view}"


# -- players side by side ----------------------------------------------------
COMPARE_PLAYERS = "compare-players"
COMPARE_SEASON = "compare-season"
COMPARE_TYPE = "compare-type"
COMPARE_K = "compare-k"
COMPARE_RATES_GRAPH = "compare-rates-graph"
COMPARE_EFFECTS_GRAPH = "compare-effects-graph"
COMPARE_TABLE = "compare-table"
COMPARE_NOTE = "compare-note"
COMPARE_DIFFICULTY = "compare-difficulty"

# -- league ------------------------------------------------------------------
LEAGUE_SEASON = "league-season"
LEAGUE_TYPE = "league-type"
LEAGUE_TEAM = "league-team"
LEAGUE_MIN_ATTEMPTS = "league-min-attempts"
LEAGUE_K = "league-k"
LEAGUE_STATUS = "league-status"
LEAGUE_PROGRESS = "league-progress"
LEAGUE_PROGRESS_TEXT = "league-progress-text"
LEAGUE_RUN = "league-run"
LEAGUE_CANCEL = "league-cancel"
LEAGUE_POLL = "league-poll"
LEAGUE_SCAN_TOKEN = "league-scan-token"
LEAGUE_TABLE = "league-table"
LEAGUE_FUNNEL = "league-funnel"
LEAGUE_POOLED = "league-pooled"
LEAGUE_BRIEFING = "league-briefing"
LEAGUE_BRIEFING_DOWNLOAD = "league-briefing-download"

# -- one player's season -----------------------------------------------------
PLAYER_PLAYER = "player-player"
PLAYER_SEASON = "player-season"
PLAYER_TYPE = "player-type"
PLAYER_RUN = "player-run"
PLAYER_SUMMARY = "player-summary"
PLAYER_STRIP_GRAPH = "player-strip-graph"
PLAYER_HOT_STATE = "player-hot-state"
PLAYER_LONGEST_GRAPH = "player-longest-graph"
PLAYER_RATES_GRAPH = "player-rates-graph"
PLAYER_BRIEFING = "player-briefing"
PLAYER_BRIEFING_DOWNLOAD = "player-briefing-download"

# -- streak odds -------------------------------------------------------------
ODDS_KIND = "odds-kind"
ODDS_RUN = "odds-run"
ODDS_WINDOW = "odds-window"
ODDS_AT_LEAST = "odds-at-least"
ODDS_GAMES_IN_A_ROW = "odds-games-in-a-row"
ODDS_SHOOTER = "odds-shooter"
ODDS_PLAYER = "odds-player"
ODDS_SEASON = "odds-season"
ODDS_TYPE = "odds-type"
ODDS_RATE = "odds-rate"
ODDS_ATTEMPTS = "odds-attempts"
ODDS_GAMES = "odds-games"
ODDS_LEAGUE_PLAYERS = "odds-league-players"
ODDS_SEASONS = "odds-seasons"
ODDS_ACROSS = "odds-across"
ODDS_CHECK = "odds-check"
ODDS_ANSWER = "odds-answer"

# -- planning ----------------------------------------------------------------
PLANNING_BODY = "planning-body"
PLANNING_MODEL = "planning-model"
PLANNING_RATE = "planning-rate"
PLANNING_ATTEMPTS = "planning-attempts"
PLANNING_PERSISTENCE = "planning-persistence"
PLANNING_EFFECTS = "planning-effects"
PLANNING_GAMES = "planning-games"
PLANNING_SIMULATIONS = "planning-simulations"
PLANNING_PERMUTATIONS = "planning-permutations"
PLANNING_TARGET = "planning-target"
PLANNING_EFFECT = "planning-effect"
PLANNING_RUN = "planning-run"
PLANNING_CANCEL = "planning-cancel"
PLANNING_POLL = "planning-poll"
PLANNING_JOB = "planning-job"
PLANNING_STATUS = "planning-status"
PLANNING_PROGRESS = "planning-progress"
PLANNING_POWER_GRAPH = "planning-power-graph"
PLANNING_ATTEMPTS_GRAPH = "planning-attempts-graph"
PLANNING_ANSWER = "planning-answer"

# -- data --------------------------------------------------------------------
DATA_UPLOAD = "data-upload"
DATA_UPLOAD_NAME = "data-upload-name"
DATA_UPLOAD_CHECKED = "data-upload-checked"
DATA_UPLOAD_TOO_BIG = "data-upload-too-big"
DATA_PROFILE = "data-profile"
DATA_PROFILE_UPLOAD = "data-profile-upload"
DATA_PROFILE_NAME = "data-profile-name"
DATA_KEEP_GOING = "data-keep-going"
DATA_CHECK = "data-check"
DATA_INGEST = "data-ingest"
DATA_REPORT = "data-report"
DATA_SOURCES = "data-sources"
DATA_REJECTS = "data-rejects"
