"""Look of the dashboard: the colour-blind-safe palette, figure defaults, page CSS.

Colours come from the Okabe-Ito palette (``streakwise.analysis.OKABE_ITO``),
which stays distinguishable under the common colour-vision deficiencies.
Makes and misses are never coded as red and green, nor as warm and cool: a
make is dark blue, a miss light grey, a highlighted run orange. No court
charts: where distance matters it is shown in plain distance bands.
"""

from __future__ import annotations

import plotly.graph_objects as go

from streakwise.analysis.figures import OKABE_ITO

__all__ = [
    "AFTER_MAKES",
    "AFTER_MISSES",
    "CSS",
    "FLAGGED",
    "MAKE",
    "MISS",
    "NO_ATTEMPT",
    "NULL",
    "OBSERVED",
    "PLAYER_COLOURS",
    "PROBABILITY_SCALE",
    "RUN",
    "apply_figure_style",
    "empty_figure",
]

#: A make in a game strip.
MAKE = OKABE_ITO["blue"]
#: A miss in a game strip.
MISS = "#D0D0D0"
#: No attempt at that place (games are of different lengths).
NO_ATTEMPT = "#FFFFFF"
#: A make that belongs to a highlighted run.
RUN = OKABE_ITO["orange"]
#: Rates after k makes (as in ``streakwise.analysis.figures``).
AFTER_MAKES = OKABE_ITO["bluish_green"]
#: Rates after k misses.
AFTER_MISSES = OKABE_ITO["reddish_purple"]
#: The permutation null (means, bands, quantiles).
NULL = "#7F7F7F"
#: An observed value.
OBSERVED = OKABE_ITO["black"]
#: Players singled out by a small q-value.
FLAGGED = OKABE_ITO["vermillion"]
#: Probabilities from 0 to 1 (one hue, light to dark orange; readable in grey scale).
PROBABILITY_SCALE = [[0.0, "#f4f4f4"], [0.5, OKABE_ITO["orange"]], [1.0, "#7a3f00"]]
#: One colour per player compared (up to four).
PLAYER_COLOURS = (OKABE_ITO["blue"], OKABE_ITO["orange"], OKABE_ITO["black"], OKABE_ITO["sky_blue"])

_FONT = "system-ui, -apple-system, 'Segoe UI', Roboto, 'Helvetica Neue', Arial, sans-serif"


def apply_figure_style(figure: go.Figure, *, height: int = 380, title: str | None = None) -> go.Figure:
    """Common layout for every dashboard figure (white, readable, legend below)."""
    figure.update_layout(
        template="plotly_white",
        height=height,
        margin=dict(l=60, r=20, t=60 if title else 30, b=60),
        font=dict(family=_FONT, size=13),
        legend=dict(orientation="h", yanchor="top", y=-0.18, xanchor="left", x=0),
        hoverlabel=dict(font_size=13),
    )
    if title is not None:
        figure.update_layout(title=dict(text=title, x=0, xanchor="left", font=dict(size=15)))
    return figure


def empty_figure(message: str, *, height: int = 240) -> go.Figure:
    """A blank figure that says why it is blank."""
    figure = go.Figure()
    figure.add_annotation(text=message, showarrow=False, x=0.5, y=0.5, xref="paper", yref="paper",
                          font=dict(size=14, color="#555555"))
    figure.update_xaxes(visible=False)
    figure.update_yaxes(visible=False)
    apply_figure_style(figure, height=height)
    return figure


#: Page CSS, inlined into the page (no files to ship, nothing fetched).
CSS = """
:root { --ink: #1f2328; --muted: #57606a; --line: #d0d7de; --panel: #f6f8fa; --accent: #0072B2; }
* { box-sizing: border-box; }
body { margin: 0; font-family: %(font)s; color: var(--ink); background: #ffffff; font-size: 15px; line-height: 1.45; }
a { color: var(--accent); }
.sw-header { display: flex; flex-wrap: wrap; align-items: baseline; gap: 0.5rem 1.25rem; padding: 0.75rem 1.5rem;
  border-bottom: 1px solid var(--line); background: var(--panel); }
.sw-brand { font-weight: 700; font-size: 1.25rem; letter-spacing: 0.01em; }
.sw-tagline { color: var(--muted); }
.sw-store { margin-left: auto; color: var(--muted); font-size: 0.85rem; }
.sw-nav { display: flex; flex-wrap: wrap; gap: 0.25rem; padding: 0.5rem 1.5rem; border-bottom: 1px solid var(--line); }
.sw-nav a { padding: 0.35rem 0.8rem; border-radius: 6px; text-decoration: none; color: var(--ink); }
.sw-nav a:hover { background: var(--panel); }
.sw-nav a.sw-active { background: var(--accent); color: #ffffff; }
.sw-main { padding: 1rem 1.5rem 2rem; max-width: 1400px; }
.sw-main h1 { font-size: 1.4rem; margin: 0.25rem 0 0.5rem; }
.sw-main h2 { font-size: 1.1rem; margin: 1.25rem 0 0.5rem; }
.sw-lead { color: var(--muted); margin: 0 0 0.75rem; max-width: 60rem; }
.sw-controls { display: flex; flex-wrap: wrap; gap: 0.75rem 1.25rem; align-items: flex-end; padding: 0.75rem;
  border: 1px solid var(--line); border-radius: 8px; background: var(--panel); margin-bottom: 0.75rem; }
.sw-control { display: flex; flex-direction: column; gap: 0.25rem; min-width: 10rem; }
.sw-control.sw-wide { min-width: 26rem; flex: 1 1 26rem; }
.sw-control > label, .sw-label { font-size: 0.8rem; font-weight: 600; color: var(--muted); text-transform: uppercase; letter-spacing: 0.03em; }
.sw-control input[type=text], .sw-control input[type=number] { padding: 0.35rem 0.5rem; border: 1px solid var(--line); border-radius: 6px; font-size: 0.95rem; }
.sw-caution { border: 2px solid #E69F00; background: #fff8e6; border-radius: 8px; padding: 0.6rem 0.9rem; margin: 0 0 1rem; }
.sw-caution strong { display: block; margin-bottom: 0.2rem; }
.sw-caution ul { margin: 0.2rem 0 0; padding-left: 1.2rem; }
.sw-caution li { margin: 0.1rem 0; }
.sw-note { color: var(--muted); font-size: 0.9rem; margin: 0.25rem 0; }
.sw-unavailable { border: 1px dashed var(--line); border-radius: 8px; padding: 0.75rem 1rem; color: var(--muted); background: #fbfbfb; margin: 0.5rem 0; }
.sw-grid { display: grid; grid-template-columns: repeat(auto-fit, minmax(480px, 1fr)); gap: 1rem; }
.sw-card { border: 1px solid var(--line); border-radius: 8px; padding: 0.5rem 0.75rem; background: #ffffff; min-width: 0; }
.sw-button { padding: 0.45rem 1rem; border-radius: 6px; border: 1px solid var(--accent); background: var(--accent); color: #ffffff;
  font-size: 0.95rem; cursor: pointer; }
.sw-button.sw-secondary { background: #ffffff; color: var(--accent); }
.sw-button:disabled { opacity: 0.5; cursor: default; }
.sw-status { display: flex; flex-wrap: wrap; gap: 0.75rem; align-items: center; margin: 0.5rem 0; }
.sw-status progress { width: 18rem; height: 1rem; }
.sw-answer { border: 1px solid var(--line); border-left: 6px solid var(--accent); border-radius: 8px; padding: 0.75rem 1rem; margin-top: 0.75rem; }
.sw-answer .sw-sentence { font-size: 1.1rem; margin: 0.5rem 0; }
.sw-numbers { display: grid; grid-template-columns: repeat(auto-fit, minmax(14rem, 1fr)); gap: 0.5rem 1rem; margin: 0.5rem 0; }
.sw-number { background: var(--panel); border-radius: 6px; padding: 0.4rem 0.6rem; }
.sw-number .sw-value { font-size: 1.3rem; font-weight: 700; }
.sw-number .sw-what { font-size: 0.85rem; color: var(--muted); }
.sw-report { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 0.85rem; white-space: pre-wrap;
  background: var(--panel); border: 1px solid var(--line); border-radius: 6px; padding: 0.5rem 0.75rem; max-height: 24rem; overflow: auto; }
.sw-error { color: #8a3b00; font-weight: 600; }
.sw-ok { color: #005a8c; font-weight: 600; }
.sw-upload { border: 2px dashed var(--line); border-radius: 8px; padding: 1rem; text-align: center; cursor: pointer; background: #ffffff; }
.sw-table { border-collapse: collapse; font-size: 0.9rem; margin: 0.25rem 0; }
.sw-table th, .sw-table td { border-bottom: 1px solid var(--line); padding: 0.3rem 0.6rem; text-align: right; white-space: nowrap; }
.sw-table th { background: var(--panel); font-weight: 600; white-space: normal; vertical-align: bottom; }
.sw-table th:first-child, .sw-table td:first-child, .sw-table th:nth-child(2), .sw-table td:nth-child(2) { text-align: left; }
.sw-scroll { overflow-x: auto; }
.dash-spreadsheet .dash-cell p, .dash-spreadsheet .cell-markdown p { margin: 0; }
.dash-spreadsheet-container .dash-spreadsheet-inner td, .dash-spreadsheet-container .dash-spreadsheet-inner th { font-family: %(font)s !important; }
.sw-footer { color: var(--muted); font-size: 0.8rem; padding: 1rem 1.5rem; border-top: 1px solid var(--line); }
""" % {"font": _FONT}
