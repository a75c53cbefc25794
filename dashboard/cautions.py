"""The cautions shown on every view whose results inform decisions about people or bets."""

from __future__ import annotations

from dash import html

__all__ = ["CAUTIONS", "caution_box"]

#: Said on every view that informs a decision (short, plain, always visible).
CAUTIONS = (
    "Chance explains many streaks: runs of makes and hot stretches are expected from a shooter "
    "whose attempts are independent. Judge a streak against the within-game permutation null, "
    "not against intuition.",
    "Small samples mislead: rates after streaks rest on few attempts and are biased downward in "
    "short games. Read the corrected effect with its interval; a large p-value is not proof "
    "that there is no effect.",
    "Streakiness is not a cause: a streaky pattern can come from shot selection, defence, "
    "opponents or the game situation. These tests say whether the order of makes and misses is "
    "unusual, not why.",
    "Decisions about an athlete's health or wellbeing belong to licensed practitioners; these "
    "numbers are one input to them, never a diagnosis.",
    "Not betting advice.",
)


def caution_box(*extra: str) -> html.Div:
    """The caution panel: the five cautions, then any view-specific ones."""
    return html.Div(
        [
            html.Strong("Read with care"),
            html.Ul([html.Li(text) for text in (*CAUTIONS, *extra)]),
        ],
        className="sw-caution",
        role="note",
    )
