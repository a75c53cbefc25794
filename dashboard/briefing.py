"""Briefings: one self-contained HTML file per player or for a league.

A briefing is what an analyst hands to a coach or a sport psychologist: the
figures, the numbers, a reading in plain words and the cautions, with where the
numbers came from. The file needs no network and no server: plotly.js is
inlined once per document, the styles are inline, the fonts are the reader's
own, and it prints on A4 or Letter.

This module does no statistics of its own: it calls :mod:`streakwise.analysis`
and lays the results out. It does not import Dash, so the command line
(``streakwise report``) uses it without a server, and the dashboard's export
buttons call the same two functions:

- :func:`player_briefing_html` (runs one player's permutation test);
- :func:`league_briefing_html` (lays out a saved or fresh league scan, the
  ``LeagueScanResult.to_dict()`` payload).

Every piece of text that comes from the data (player ids and names, teams,
seasons, file names, titles) is escaped with :func:`html.escape`, also inside
the figures (plotly renders entities as the characters they stand for).
Numbers in the tables carry their unrounded value in ``data-value`` so a
program (or a test) can read them back exactly.
"""

from __future__ import annotations

import html
import json
import math
import numbers
from collections.abc import Mapping, Sequence
from datetime import UTC, datetime

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from streakwise.analysis import (
    CAVEATS,
    check_run_claim,
    null_distribution_figure,
    permutation_test,
    player_sequences,
    rates_figure,
)
from streakwise.analysis.figures import OKABE_ITO

__all__ = [
    "BRIEFING_CAUTIONS",
    "LEAGUE_CAUTION",
    "league_briefing_html",
    "league_funnel_figure",
    "player_briefing_html",
]

#: The cautions every briefing shows, in this order: chance explains many
#: streaks; small samples mislead; streakiness is not a cause (the analysis
#: caveats), then who decides about an athlete, and no betting.
BRIEFING_CAUTIONS = (
    *CAVEATS,
    "Decisions about an athlete's wellbeing, confidence, workload or mental health belong to "
    "licensed practitioners who know the athlete. This briefing describes a pattern in "
    "makes and misses; it is not an assessment of a person.",
    "This is not betting advice. Past streaks do not set the odds of the next attempt, "
    "and nothing here should be used to place or price a bet.",
)

#: Added to a league briefing: many players tested at once.
LEAGUE_CAUTION = (
    "Many players were tested at once, so some small p-values are expected by chance alone. "
    "Pick players out by their q-values (Benjamini-Hochberg), not their p-values, and treat "
    "even those as a reason to look closer, not as a verdict."
)

#: Fewer attempts than this get an explicit small-sample note in the reading.
SMALL_SAMPLE = 100
#: q-values below this count as "standing out" in the readings.
Q_THRESHOLD = 0.10

_FONT = ("system-ui, -apple-system, 'Segoe UI', Roboto, 'Helvetica Neue', Arial, "
         "'Noto Sans', 'Liberation Sans', sans-serif")
_NUMBER_WORDS = {1: "one", 2: "two", 3: "three", 4: "four", 5: "five", 6: "six", 7: "seven",
                 8: "eight"}
_STATISTIC_ROWS = ("runs", "longest_run", "lag1")
_PLOT_CONFIG = {"displaylogo": False, "responsive": True,
                "modeBarButtonsToRemove": ["select2d", "lasso2d", "autoScale2d"]}


# ---------------------------------------------------------------------------
# Words and numbers
# ---------------------------------------------------------------------------


def _esc(value) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _finite(value) -> float | None:
    if value is None or isinstance(value, (bool, np.bool_)):
        return None
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return value if math.isfinite(value) else None


def _percent(rate, digits=1) -> str:
    rate = _finite(rate)
    return "-" if rate is None else f"{100 * rate:.{digits}f}%"


def _points(value, *, sign=True) -> str:
    """A difference of rates as percentage points, e.g. ``+4.4``; minus as U+2212."""
    value = _finite(value)
    if value is None:
        return "-"
    text = f"{100 * value:+.1f}" if sign else f"{100 * abs(value):.1f}"
    return text.replace("-", "\u2212")


def _number(value, digits=3) -> str:
    value = _finite(value)
    if value is None:
        return "-"
    return f"{value:.{digits}f}".replace("-", "\u2212")


def _p_text(value) -> str:
    value = _finite(value)
    if value is None:
        return "-"
    if value < 1e-4:
        return "<0.0001"
    return f"{value:.4f}" if value < 0.01 else f"{value:.3f}"


def _chance_words(p) -> str:
    """``0.031`` -> ``about 3 times in 100``."""
    p = _finite(p)
    if p is None:
        return "(cannot be said)"
    if p >= 0.95:
        return "almost every time"
    for scale, text in ((10, "10"), (100, "100"), (1000, "1,000")):
        if p >= 0.95 / scale:
            count = round(scale * p)
            return f"about {'once' if count == 1 else f'{count} times'} in {text}"
    return "less than once in 1,000"


def _after(k: int, kind: str) -> str:
    """``_after(1, "makes")`` -> ``a make``; ``_after(3, "misses")`` -> ``three misses in a row``."""
    if k == 1:
        return {"makes": "a make", "misses": "a miss"}[kind]
    return f"{_NUMBER_WORDS.get(k, str(k))} {kind} in a row"


def _count(value) -> str:
    return f"{int(value):,}"


def _data_value(value) -> str:
    value = _finite(value)
    return "" if value is None else repr(value)


def _cell(text, value=None, *, field=None, k=None, numeric=True, title=None, classes="", **values) -> str:
    """A table cell showing ``text``; ``data-value`` (and ``data-<name>`` for ``values``) unrounded."""
    attributes = []
    if field is not None:
        attributes.append(f'data-field="{_esc(field)}"')
        attributes.append(f'data-value="{_esc(_data_value(value))}"')
    if k is not None:
        attributes.append(f'data-k="{int(k)}"')
    for name, extra in values.items():
        attributes.append(f'data-{name}="{_esc(_data_value(extra))}"')
    names = " ".join(x for x in ("num" if numeric else "", classes) if x)
    if names:
        attributes.append(f'class="{names}"')
    if title:
        attributes.append(f'title="{_esc(title)}"')
    return f"<td {' '.join(attributes)}>{_esc(text)}</td>"


def _generated_text(generated) -> str:
    moment = generated or datetime.now(UTC)
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).strftime("%Y-%m-%d %H:%M UTC")


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("streakwise")
    except PackageNotFoundError:
        return "unknown"


# ---------------------------------------------------------------------------
# The document
# ---------------------------------------------------------------------------

_CSS = """
:root { --ink: #1a1a1a; --muted: #555; --rule: #d0d0d0; --band: #f4f4f4;
        --accent: #0072B2; --flag: #D55E00; }
* { box-sizing: border-box; }
html { font-family: FONT; color: var(--ink); background: #fff; }
body { margin: 0 auto; max-width: 1040px; padding: 28px 32px 48px; line-height: 1.5; font-size: 15px; }
header { border-bottom: 3px solid var(--accent); padding-bottom: 12px; margin-bottom: 18px; }
.kind { margin: 0; font-size: 13px; letter-spacing: .06em; text-transform: uppercase; color: var(--muted); }
h1 { margin: 4px 0 6px; font-size: 28px; line-height: 1.2; }
h2 { font-size: 19px; margin: 28px 0 8px; border-bottom: 1px solid var(--rule); padding-bottom: 4px; }
h3 { font-size: 16px; margin: 18px 0 6px; }
.meta { margin: 0; color: var(--muted); }
.cautions { border: 2px solid var(--ink); border-left: 8px solid var(--flag); background: #fff8f2;
            padding: 10px 18px 8px; margin: 18px 0; }
.cautions h2 { border: 0; margin: 4px 0 4px; }
.cautions ol { margin: 4px 0 6px; padding-left: 22px; }
.cautions li { margin: 3px 0; }
.reading p { margin: 8px 0; }
.reading .verdict { font-weight: 600; }
.note { color: var(--muted); font-size: 13px; }
.warning { border-left: 4px solid var(--flag); padding: 4px 10px; background: var(--band); }
table { border-collapse: collapse; width: 100%; font-size: 13px; margin: 8px 0 4px; }
th, td { padding: 4px 6px; border-bottom: 1px solid var(--rule); text-align: left; vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.stands-out td { font-weight: 600; }
th.group { text-align: center; border-bottom: 1px solid var(--ink); }
.group-start { border-left: 1px solid var(--rule); }
td.who { min-width: 11em; }
td.who .detail { display: block; font-weight: 400; font-size: 12px; color: var(--muted); }
.figure { margin: 14px 0 6px; break-inside: avoid; page-break-inside: avoid; }
.figure .caption { font-size: 13px; color: var(--muted); margin: 2px 0 0; }
dl.provenance { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; font-size: 13px; }
dl.provenance dt { color: var(--muted); }
dl.provenance dd { margin: 0; overflow-wrap: anywhere; }
footer { margin-top: 30px; border-top: 1px solid var(--rule); padding-top: 8px; font-size: 12px; color: var(--muted); }
@page { margin: 14mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 11pt; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  table, .cautions, dl.provenance { break-inside: avoid; page-break-inside: avoid; }
  .modebar-container { display: none !important; }
}
""".replace("FONT", _FONT)

# Re-lay the figures out at the paper's width before printing.
_PRINT_SCRIPT = """
(function () {
  function fit() {
    if (!window.Plotly) { return; }
    document.querySelectorAll('.js-plotly-plot').forEach(function (el) { window.Plotly.Plots.resize(el); });
  }
  window.addEventListener('beforeprint', fit);
  window.addEventListener('afterprint', fit);
})();
"""


class _Figures:
    """Turns figures into HTML: plotly.js goes into the first one only."""

    def __init__(self):
        self.count = 0

    def html(self, figure: go.Figure, caption: str, *, name: str, height: int = 420) -> str:
        figure.update_layout(height=height, font=dict(family=_FONT, size=13),
                             margin=dict(l=60, r=30, t=60, b=60), autosize=True)
        body = figure.to_html(full_html=False, include_plotlyjs=self.count == 0, config=_PLOT_CONFIG,
                              div_id=f"figure-{name}", default_width="100%",
                              default_height=f"{height}px")
        self.count += 1
        return (f'<div class="figure" data-figure="{_esc(name)}">{body}'
                f'<p class="caption">{caption}</p></div>')


def _json_script(data) -> str:
    text = json.dumps(_jsonable(data), ensure_ascii=False, allow_nan=False, indent=None)
    # keep the block inside its <script> element whatever the strings hold
    text = text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
    return f'<script type="application/json" id="briefing-data">{text}</script>'


def _jsonable(value):
    if isinstance(value, Mapping):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, numbers.Real):
        return _finite(value)
    if value is None or isinstance(value, str):
        return value
    return str(value)


def _page(*, title: str, kind: str, meta: str, sections: Sequence[str], data: dict, generated: str) -> str:
    cautions = "".join(f"<li>{_esc(text)}</li>" for text in data["cautions"])
    return "\n".join([
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f'<meta name="generator" content="streakwise {_esc(_version())}">',
        f"<title>{_esc(title)}</title>",
        f"<style>{_CSS}</style>",
        "</head>",
        "<body>",
        "<header>",
        f'<p class="kind">{_esc(kind)}</p>',
        f"<h1>{_esc(title)}</h1>",
        f'<p class="meta">{meta}</p>',
        "</header>",
        '<section class="cautions" id="cautions"><h2>Read this first</h2>'
        f"<ol>{cautions}</ol></section>",
        *sections,
        f'<footer>Made with streakwise {_esc(_version())} on {_esc(generated)}. The figures are '
        "interactive on screen (hover for values) and print as shown.</footer>",
        _json_script(data),
        f"<script>{_PRINT_SCRIPT}</script>",
        "</body>",
        "</html>",
        "",
    ])


def _provenance(items: Sequence[tuple[str, str]]) -> str:
    rows = "".join(f"<dt>{_esc(label)}</dt><dd>{_esc(value)}</dd>" for label, value in items)
    return ('<section id="provenance"><h2>Where these numbers come from</h2>'
            f'<dl class="provenance">{rows}</dl></section>')


# ---------------------------------------------------------------------------
# One player
# ---------------------------------------------------------------------------


def _player_briefing_html_iv(attempts, player, attempt_type, title, scan, data_version):
    if not isinstance(attempts, pd.DataFrame):
        raise ValueError(f"`attempts` must be a pandas DataFrame of canonical attempts "
                         f"(got {type(attempts).__name__})")
    missing = [c for c in ("player", "session", "seq", "made") if c not in attempts.columns]
    if missing:
        raise ValueError(f"`attempts` needs the columns player, session, seq, made "
                         f"(missing {', '.join(missing)})")
    if not isinstance(player, str) or not player:
        raise ValueError(f"`player` must be a non-empty player id (got {player!r})")
    if attempt_type is not None and not isinstance(attempt_type, str):
        raise ValueError(f"`attempt_type` must be a string or None (got {attempt_type!r})")
    if title is not None and not isinstance(title, str):
        raise ValueError(f"`title` must be a string or None (got {title!r})")
    if scan is not None and not (isinstance(scan, Mapping) and isinstance(scan.get("players"), list)):
        raise ValueError("`scan` must be a LeagueScanResult.to_dict() payload (a dict with 'players') or None")
    if data_version is not None and not isinstance(data_version, str):
        raise ValueError(f"`data_version` must be a string or None (got {data_version!r})")
    rows = attempts[attempts["player"].astype(str) == player]
    if rows.empty:
        raise ValueError(f"player {player!r} has no attempts in `attempts`")
    if attempt_type is not None:
        if "attempt_type" not in rows.columns:
            raise ValueError("`attempt_type` was given but `attempts` has no 'attempt_type' column")
        rows = rows[rows["attempt_type"] == attempt_type]
        if rows.empty:
            raise ValueError(f"player {player!r} has no attempts of type {attempt_type!r}")
    return rows


def _mode(rows: pd.DataFrame, column: str) -> str | None:
    if column not in rows.columns:
        return None
    values = rows[column].dropna().astype(str)
    return None if values.empty else str(values.value_counts().index[0])


def _distinct(rows: pd.DataFrame, column: str) -> list[str]:
    if column not in rows.columns:
        return []
    return sorted(str(v) for v in rows[column].dropna().unique())


def _scan_entry(scan, player):
    if scan is None:
        return None
    for entry in scan["players"]:
        if str(entry.get("player")) == player:
            return entry
    return None


def _q_value(entry, k):
    if entry is None:
        return None
    for item in entry.get("streak", ()):
        if item.get("k") == k:
            return _finite(item.get("q_value"))
    return None


def _streak_paragraph(result, k, who, q, scanned, *, explain=True):
    d = result.test("difference", k)
    i = k - 1
    rates = result.rates
    made_m, tried_m = int(rates.makes_after_makes[i]), int(rates.attempts_after_makes[i])
    made_x, tried_x = int(rates.makes_after_misses[i]), int(rates.attempts_after_misses[i])
    after_makes, after_misses = _after(k, "makes"), _after(k, "misses")
    if d.observed is None or d.null_mean is None:
        reason = d.reason or "too few attempts followed these streaks"
        return (f"<p>After {_esc(after_makes)} and after {_esc(after_misses)}: no comparison is "
                f"possible ({_esc(reason)}).</p>")
    text = [
        f"After {_esc(after_makes)}, {who} made <b>{_percent(made_m / tried_m)}</b> of the next "
        f"attempts ({_count(made_m)} of {_count(tried_m)}); after {_esc(after_misses)}, "
        f"<b>{_percent(made_x / tried_x)}</b> ({_count(made_x)} of {_count(tried_x)}): a gap of "
        f"{_points(d.observed)} points.",
        f"Shuffling {who}'s makes within each game, which is what a steady shooter with exactly "
        f"the same games would produce, gives a gap of about {_points(d.null_mean)} points on "
        f"average{_why_not_zero(d.null_mean)}." if explain else
        f"Shuffled within games, the gap would be about {_points(d.null_mean)} points on average.",
    ]
    corrected = d.corrected
    if corrected is not None:
        direction = "larger" if corrected >= 0 else "smaller"
        sentence = (f"Measured against that, {who}'s gap is {direction} by about "
                    f"{_points(corrected, sign=False)} points")
        if d.interval is not None:
            sentence += (f" (95% interval from resampling games: {_points(d.interval[0])} to "
                         f"{_points(d.interval[1])} points)")
        text.append(sentence + ".")
    if d.p_value is not None and corrected is not None and corrected <= 0:
        text.append(f"That gives no sign of streaky shooting (p = {_p_text(d.p_value)}).")
    elif d.p_value is not None:
        text.append(f"A gap at least this much in favour of shooting better after makes comes up "
                    f"by chance {_chance_words(d.p_value)} (p = {_p_text(d.p_value)}).")
    if q is not None:
        text.append(f"Allowing for the {_count(scanned)} players tested in the league scan, its "
                    f"q-value is {_p_text(q)}" + (", low enough to single out." if q < Q_THRESHOLD
                                                  else ", not low enough to single out."))
    return "<p>" + " ".join(text) + "</p>"


def _notable(result, entry, k):
    p = result.test("difference", k).p_value
    q = _q_value(entry, k)
    return (p is not None and p < 0.05) or (q is not None and q < Q_THRESHOLD)


def _why_not_zero(null_mean):
    """Why the chance gap is not zero: its two sources pull opposite ways."""
    if abs(null_mean) < 0.0005:
        return ""
    if null_mean < 0:
        return (", below zero because within a game with a fixed number of makes, every make "
                "leaves fewer makes for the attempts after it")
    return (", above zero because, pooled over the season, the games in which the player shot "
            "well supply more of the attempts that follow makes (form that varies from game to "
            "game, not streaks within a game)")


def _verdict(result, ks, entry):
    tests = [result.test("difference", k) for k in ks]
    ps = [t.p_value for t in tests if t.p_value is not None]
    if not ps:
        return ("<p class=\"verdict\">These data cannot say whether the player shoots "
                "differently after streaks.</p>")
    qs = [q for q in (_q_value(entry, k) for k in ks) if q is not None]
    if min(ps) >= 0.05:
        return ('<p class="verdict">In short: the gaps are within what chance alone commonly '
                "produces. That is not proof of steady shooting: a season of attempts can only "
                "show large effects, so small real streak effects may go unseen.</p>")
    if qs and min(qs) >= Q_THRESHOLD:
        return ('<p class="verdict">In short: a gap is unusual on its own, but after allowing for '
                "the many players tested it does not stand out. Treat it as a reason to keep "
                "watching, not as a finding.</p>")
    if not qs:
        return ('<p class="verdict">In short: a gap is unusual for a steady shooter (p below 0.05). '
                "Several streak lengths were tested, and a league has many players, so one small "
                "p-value can still be chance: check the league scan's q-values before singling the "
                "player out. Even then, the pattern says nothing about why: shot selection, "
                "opponents, defence or game situation can all make a shooter look streaky.</p>")
    return ('<p class="verdict">In short: the order of makes and misses is more streaky than a '
            "steady shooter usually produces. This says the pattern is unusual, not why: shot "
            "selection, opponents, defence or game situation can all make a shooter look "
            "streaky.</p>")


def _longest_run_paragraph(result, sequences, who):
    test = result.test("longest_run")
    observed = _finite(test.observed)
    if observed is None or observed < 1:
        return ""
    run = int(round(observed))
    text = [f"{who}'s longest run of makes was <b>{run} in a row</b>."]
    if test.p_value is not None:
        text.append(f"With the makes shuffled within each game, a longest run at least this long "
                    f"came up {_chance_words(test.p_value)} (p = {_p_text(test.p_value)}).")
    try:
        claim = check_run_claim(run, result.make_rate, [int(n) for n in sequences.lengths])
    except ValueError:
        claim = None
    if claim is not None:
        sentence = claim.sentence[:1].lower() + claim.sentence[1:]
        text.append(f"For comparison, in the odds of a steady shooter: {_esc(sentence)}")
    return "<p>" + " ".join(text) + "</p>"


def _player_numbers_table(result, entry):
    header = (
        "<tr><th>k</th><th class=\"num\">after k makes</th><th class=\"num\">after k misses</th>"
        "<th class=\"num\">gap D<sub>k</sub></th><th class=\"num\">chance gap (null mean)</th>"
        "<th class=\"num\">corrected</th><th class=\"num\">95% interval</th>"
        "<th class=\"num\">null band 2.5&ndash;97.5%</th><th class=\"num\">p</th>"
        "<th class=\"num\">q</th></tr>"
    )
    rows = []
    rates = result.rates
    for k in range(1, result.max_k + 1):
        d = result.test("difference", k)
        i = k - 1
        made_m, tried_m = int(rates.makes_after_makes[i]), int(rates.attempts_after_makes[i])
        made_x, tried_x = int(rates.makes_after_misses[i]), int(rates.attempts_after_misses[i])
        rate_m = made_m / tried_m if tried_m else None
        rate_x = made_x / tried_x if tried_x else None
        interval = d.interval or (None, None)
        band = d.null_band or (None, None)
        q = _q_value(entry, k)
        cells = [
            f"<td>{k}</td>",
            _cell(f"{_percent(rate_m)} ({made_m}/{tried_m})", rate_m, field="after_makes"),
            _cell(f"{_percent(rate_x)} ({made_x}/{tried_x})", rate_x, field="after_misses"),
            _cell(_points(d.observed), d.observed, field="observed"),
            _cell(_points(d.null_mean), d.null_mean, field="null_mean"),
            _cell(_points(d.corrected), d.corrected, field="corrected"),
            _cell(f"{_points(interval[0])} to {_points(interval[1])}" if d.interval else "-",
                  field="interval", low=interval[0], high=interval[1]),
            _cell(f"{_points(band[0])} to {_points(band[1])}" if d.null_band else "-",
                  field="null_band", low=band[0], high=band[1]),
            _cell(_p_text(d.p_value), d.p_value, field="p_value"),
            _cell(_p_text(q), q, field="q_value"),
        ]
        rows.append(f'<tr data-statistic="difference" data-k="{k}">{"".join(cells)}</tr>')
    gaps = ("<table id=\"streak-table\"><thead>" + header + "</thead><tbody>" + "".join(rows)
            + "</tbody></table>"
            + '<p class="note">Rates and gaps in percentage points. The chance gap is the average '
              "gap over the within-game shuffles; corrected = gap minus chance gap. The null band "
              "is where chance alone puts the gap (not a confidence interval); the interval comes "
              "from resampling whole games. p: one-sided, toward shooting better after makes. "
              "q: Benjamini-Hochberg across the players of a league scan (- when no scan was "
              "given).</p>")
    other_rows = []
    for statistic in _STATISTIC_ROWS:
        t = result.test(statistic)
        digits = 3 if statistic == "lag1" else 1
        whole = 3 if statistic == "lag1" else 0  # counts are whole numbers; their null mean is not
        band = t.null_band or (None, None)
        cells = [
            f"<td>{_esc(t.label)}</td>",
            _cell(_number(t.observed, whole), t.observed, field="observed"),
            _cell(_number(t.null_mean, digits), t.null_mean, field="null_mean"),
            _cell(_number(t.corrected, digits), t.corrected, field="corrected"),
            _cell(f"{_number(band[0], whole)} to {_number(band[1], whole)}" if t.null_band else "-",
                  field="null_band", low=band[0], high=band[1]),
            _cell(_p_text(t.p_value), t.p_value, field="p_value"),
        ]
        other_rows.append(f'<tr data-statistic="{statistic}">{"".join(cells)}</tr>')
    runs = result.runs_test
    other_rows.append(
        '<tr data-statistic="wald_wolfowitz"><td>Wald&ndash;Wolfowitz runs test (z)</td>'
        + _cell(_number(runs.z, 2), runs.z, field="observed")
        + "<td class=\"num\">0</td><td class=\"num\">-</td><td class=\"num\">-</td>"
        + _cell(_p_text(runs.p_value), runs.p_value, field="p_value") + "</tr>")
    others = (
        '<h3>Runs, longest run and correlation</h3><table id="other-table"><thead><tr>'
        '<th>statistic</th><th class="num">observed</th><th class="num">chance (null mean)</th>'
        '<th class="num">corrected</th><th class="num">null band 2.5&ndash;97.5%</th>'
        '<th class="num">p</th></tr></thead><tbody>' + "".join(other_rows) + "</tbody></table>"
        '<p class="note">Streaky shooting shows as fewer runs (unbroken stretches of makes or of '
        "misses), a longer longest run and a positive correlation between one attempt and the "
        "next; p is one-sided in that direction.</p>")
    return gaps + others


def _player_figures(result, who, figures: _Figures):
    parts = []
    fig = rates_figure(result)
    fig.update_layout(title=f"{who}: hit rate after k makes and after k misses")
    parts.append(figures.html(
        fig, "Filled markers: what the player did. Hollow markers with bars: the average and the "
        "2.5&ndash;97.5% range over within-game shuffles of the same makes. The dashed line is "
        "the overall make rate.", name="rates", height=440))
    for k in sorted({1, result.max_k}):
        test = result.test("difference", k)
        if test.observed is None or test.null_distribution is None or not len(test.null_distribution):
            continue
        fig = null_distribution_figure(result, "difference", k)
        streak = "a make vs after a miss" if k == 1 else f"{k} makes vs after {k} misses in a row"
        fig.update_layout(title=f"{who}: gap after {streak} (D_{k}), {result.permutations:,} shuffles",
                          xaxis_title=f"D_{k} (hit-rate gap)", xaxis_tickformat="+.0%")
        parts.append(figures.html(
            fig, f"Bars: the gap D<sub>{k}</sub> in each within-game shuffle. Shaded: the middle 95% "
            "of shuffles. Dashed: their average. Solid line: the player's gap.",
            name=f"null-d{k}", height=360))
    test = result.test("longest_run")
    if test.observed is not None and test.null_distribution is not None and len(test.null_distribution):
        low, high = np.min(test.null_distribution), max(np.max(test.null_distribution), test.observed)
        fig = null_distribution_figure(result, "longest_run", None, bins=max(1, int(high - low) + 1))
        fig.update_traces(xbins=dict(start=float(low) - 0.5, end=float(high) + 0.5, size=1),
                          selector=dict(type="histogram"))
        fig.update_layout(title=f"{who}: longest run of makes, against {result.permutations:,} shuffles",
                          xaxis_title="longest run of makes in the season", xaxis_dtick=1)
        parts.append(figures.html(
            fig, "Bars: the season's longest run of makes in each within-game shuffle. Solid "
            "line: the run the player had.", name="longest-run", height=360))
    return "".join(parts)


def player_briefing_html(attempts: pd.DataFrame, player: str, *, attempt_type: str | None = "field_goal",
                         permutations: int = 10_000, seed: int | None = None, max_k: int = 3,
                         title: str | None = None, scan: dict | None = None,
                         data_version: str | None = None, generated: datetime | None = None) -> str:
    """A self-contained HTML briefing on one player's streaks.

    Parameters
    ----------
    attempts : pandas.DataFrame
        Canonical attempts (at least ``player, session, seq, made``); other
        players' rows are ignored. ``player_name``, ``team``, ``season`` and
        ``source`` are shown when present.
    player : str
        The player id.
    attempt_type : str or None, optional
        Attempt type to analyse (default ``"field_goal"``); None pools every
        attempt in ``attempts``.
    permutations : int, optional
        Within-game permutations (default 10,000).
    seed : int, optional
        Seed of the test (the player's stream is derived from it and the
        player id). None draws a fresh seed; the briefing records it.
    max_k : int, optional
        Streak lengths k = 1..max_k (1 to 8, default 3).
    title : str, optional
        Heading and document title (default: the player's name and id).
    scan : dict, optional
        A ``LeagueScanResult.to_dict()`` payload holding this player: its
        q-values are shown beside the p-values.
    data_version : str, optional
        The store's data version, shown under provenance.
    generated : datetime, optional
        The time stamp shown (default now).

    Returns
    -------
    str
        The whole HTML document (UTF-8 text): header, cautions, a reading in
        plain words, the numbers, figures (rates against the null band; null
        distributions of D_1 and D_max_k with the observed gap; the longest
        run against its null) and provenance. A ``<script
        type="application/json" id="briefing-data">`` block holds the result's
        ``to_dict()`` with the settings.

    Raises
    ------
    ValueError
        Malformed arguments, or no attempts for the player (and type).

    Notes
    -----
    The numbers are those of
    :func:`~streakwise.analysis.permutation.permutation_test` with
    ``rng=seed`` and ``permutations``: the same seed gives the same numbers
    as ``streakwise analyse --player`` and as a league scan of that seed.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> rng = np.random.default_rng(4)
    >>> frame = pd.DataFrame({"player": "p1", "session": np.repeat(np.arange(20), 12).astype(str),
    ...                       "seq": np.tile(np.arange(12), 20), "made": rng.random(240) < 0.45})
    >>> page = player_briefing_html(frame, "p1", attempt_type=None, permutations=200, seed=1)
    >>> page.startswith("<!DOCTYPE html>"), "Read this first" in page
    (True, True)
    """
    rows = _player_briefing_html_iv(attempts, player, attempt_type, title, scan, data_version)
    sequences = player_sequences(rows)[player]
    result = permutation_test(sequences, player=player, max_k=max_k, permutations=permutations, rng=seed)
    name = _mode(rows, "player_name")
    who = _esc(name or player)
    heading = title or (f"{name} ({player})" if name and name != player else player)
    entry = _scan_entry(scan, player)
    scanned = len(scan["players"]) if scan is not None else 0
    teams, seasons, sources = _distinct(rows, "team"), _distinct(rows, "season"), _distinct(rows, "source")
    type_text = {"field_goal": "field goals", "free_throw": "free throws", None: "all attempts"}.get(
        attempt_type, attempt_type)
    meta_parts = [" / ".join(teams), ("season " if len(seasons) == 1 else "seasons ") + ", ".join(seasons)
                  if seasons else "", type_text,
                  f"{_count(result.attempts)} attempts in {_count(result.sessions)} games",
                  f"make rate {_percent(result.make_rate)}"]
    meta = " &middot; ".join(_esc(part) for part in meta_parts if part)

    reading = ['<section class="reading" id="reading"><h2>In plain words</h2>']
    if result.attempts < SMALL_SAMPLE:
        reading.append(f'<p class="warning">Only {_count(result.attempts)} attempts: rates after '
                       "streaks rest on very few attempts here, and only very large effects could "
                       "show. Read every number below with that in mind.</p>")
    every_k = range(1, result.max_k + 1)
    # k = 1 and the longest k always; any other k whose gap is unusual too
    ks = [k for k in every_k if k in (1, result.max_k) or _notable(result, entry, k)]
    for k in ks:
        reading.append(_streak_paragraph(result, k, who, _q_value(entry, k), scanned, explain=k == ks[0]))
    reading.append(_longest_run_paragraph(result, sequences, who))
    reading.append(_verdict(result, every_k, entry))
    reading.append("</section>")

    numbers_html = ('<section id="numbers"><h2>The numbers</h2>'
                    + _player_numbers_table(result, entry) + "</section>")
    figures = _Figures()
    figures_html = '<section id="figures"><h2>Figures</h2>' + _player_figures(result, who, figures) + "</section>"

    generated_text = _generated_text(generated)
    provenance = [
        ("player", f"{name} ({player})" if name else player),
        ("data version", data_version or "not given (attempts passed in directly)"),
        ("attempt type", attempt_type or "all attempts pooled"),
        ("seasons", ", ".join(seasons) or "-"),
        ("source files", ", ".join(sources[:12]) + (f" and {len(sources) - 12} more" if len(sources) > 12 else "")
         if sources else "-"),
        ("test", f"within-game permutation test ({result.method}), alternative '{result.alternative}'"),
        ("permutations", f"{result.permutations:,}"),
        ("seed", str(result.seed)),
        ("intervals", f"{result.confidence_level:.0%} from {result.resamples:,} resamples of games"),
        ("streak lengths", f"k = 1 to {result.max_k}"),
        ("q-values", f"from a league scan of {scanned:,} players (seed {scan.get('seed')}, "
                     f"{scan.get('permutations')} permutations)" if entry is not None
         else "none: no league scan holding this player was given"),
        ("generated", generated_text),
        ("software", f"streakwise {_version()}"),
    ]
    data = {
        "kind": "player_briefing",
        "player": player,
        "player_name": name,
        "attempt_type": attempt_type,
        "data_version": data_version,
        "seed": result.seed,
        "permutations": result.permutations,
        "generated": generated_text,
        "result": result.to_dict({k: _q_value(entry, k) for k in range(1, result.max_k + 1)}),
        "cautions": list(BRIEFING_CAUTIONS),
    }
    return _page(title=heading, kind="Streak briefing: one player", meta=meta,
                 sections=["".join(reading), numbers_html, figures_html, _provenance(provenance)],
                 data=data, generated=generated_text)


# ---------------------------------------------------------------------------
# The league
# ---------------------------------------------------------------------------


def _league_briefing_html_iv(scan, players_table, title, data_version, settings):
    if not isinstance(scan, Mapping) or not isinstance(scan.get("players"), list):
        raise ValueError("`scan` must be a LeagueScanResult.to_dict() payload (a dict with 'players')")
    for entry in scan["players"]:
        if not isinstance(entry, Mapping) or "player" not in entry or "streak" not in entry:
            raise ValueError("every entry of scan['players'] needs 'player' and 'streak' "
                             f"(got {sorted(entry) if isinstance(entry, Mapping) else entry!r})")
    if players_table is None:
        players_table = pd.DataFrame({"player": pd.Series(dtype=str)})
    if not isinstance(players_table, pd.DataFrame) or "player" not in players_table.columns:
        raise ValueError("`players_table` must be a DataFrame with a 'player' column "
                         "(as Store.players() returns)")
    if title is not None and not isinstance(title, str):
        raise ValueError(f"`title` must be a string or None (got {title!r})")
    if data_version is not None and not isinstance(data_version, str):
        raise ValueError(f"`data_version` must be a string or None (got {data_version!r})")
    if settings is not None and not isinstance(settings, Mapping):
        raise ValueError(f"`settings` must be a dict or None (got {type(settings).__name__})")
    return players_table


def _max_k(scan) -> int:
    return max((len(entry["streak"]) for entry in scan["players"]), default=0)


def _streak_item(entry, k):
    for item in entry["streak"]:
        if item.get("k") == k:
            return item
    return {}


def _names(players_table):
    lookup = {}
    for row in players_table.to_dict("records"):
        lookup[str(row["player"])] = row
    return lookup


def _display_name(player, info):
    name = info.get("player_name") if info else None
    if name is None or (isinstance(name, float) and math.isnan(name)) or name is pd.NA:
        return player
    return f"{name} ({player})" if str(name) != player else player


def _text_value(info, column):
    value = info.get(column) if info else None
    if value is None or value is pd.NA or (isinstance(value, float) and math.isnan(value)):
        return ""
    return str(value)


def league_funnel_figure(scan: dict, k: int = 1, players_table: pd.DataFrame | None = None) -> go.Figure:
    """Effect against attempts for every scanned player, with each one's null band.

    Parameters
    ----------
    scan : dict
        A ``LeagueScanResult.to_dict()`` payload.
    k : int, optional
        Streak length (default 1).
    players_table : DataFrame, optional
        ``player`` and ``player_name`` for the hover labels.

    Returns
    -------
    plotly.graph_objects.Figure
        One marker per player at (attempts, corrected D_k), with a grey bar
        from the player's null band (centred on the null mean, so it shows
        where chance alone puts the corrected effect). Players with a q-value
        below 0.10 are vermillion diamonds, the rest blue circles (Okabe-Ito;
        the shapes differ too, for print). The bands narrow as attempts grow:
        small samples scatter widely by chance.
    """
    names = _names(players_table) if players_table is not None else {}
    rows = []
    for entry in scan["players"]:
        item = _streak_item(entry, k)
        corrected, null_mean = _finite(item.get("corrected")), _finite(item.get("null_mean"))
        if corrected is None or null_mean is None:
            continue
        band = item.get("null_band") or (None, None)
        low, high = _finite(band[0]), _finite(band[1])
        player = str(entry["player"])
        rows.append(dict(
            label=_esc(_display_name(player, names.get(player))), attempts=int(entry.get("attempts") or 0),
            corrected=corrected, low=None if low is None else low - null_mean,
            high=None if high is None else high - null_mean, p=_finite(item.get("p_value")),
            q=_finite(item.get("q_value"))))
    fig = go.Figure()
    for standout, label, colour, symbol in ((False, f"q \u2265 {Q_THRESHOLD:.2f}", OKABE_ITO["blue"], "circle"),
                                            (True, f"q &lt; {Q_THRESHOLD:.2f}", OKABE_ITO["vermillion"], "diamond")):
        chosen = [r for r in rows if (r["q"] is not None and r["q"] < Q_THRESHOLD) == standout]
        if not chosen and standout:
            continue
        fig.add_trace(go.Scatter(
            x=[r["attempts"] for r in chosen], y=[r["corrected"] for r in chosen], mode="markers",
            name=label,
            marker=dict(color=colour, symbol=symbol, size=9 if standout else 7,
                        line=dict(color=OKABE_ITO["black"], width=0.5)),
            error_y=dict(type="data", symmetric=False, color="#9a9a9a", thickness=1, width=0,
                         array=[(r["high"] - r["corrected"]) if r["high"] is not None else 0 for r in chosen],
                         arrayminus=[(r["corrected"] - r["low"]) if r["low"] is not None else 0 for r in chosen]),
            customdata=[[r["label"], _p_text(r["p"]), _p_text(r["q"])] for r in chosen],
            hovertemplate="%{customdata[0]}<br>attempts %{x}<br>corrected %{y:+.1%}"
                          "<br>p %{customdata[1]}, q %{customdata[2]}<extra></extra>"))
    fig.add_hline(y=0, line=dict(color=OKABE_ITO["black"], width=1, dash="dot"))
    fig.update_layout(
        title=f"Corrected gap after {_after(k, 'makes')} vs {_after(k, 'misses')}, by attempts",
        xaxis_title="attempts", yaxis=dict(title=f"corrected D_{k}", tickformat="+.0%"),
        template="simple_white", showlegend=True, legend=dict(orientation="h", y=-0.2))
    return fig


def _league_reading(scan, k_max, scanned, skipped, min_attempts):
    parts = ['<section class="reading" id="reading"><h2>In plain words</h2>']
    lead = f"<p>{_count(scanned)} players were tested"
    if min_attempts:
        lead += f" (each with at least {_count(min_attempts)} attempts)"
    if skipped:
        lead += f"; {_count(skipped)} more in the table had too few attempts or were left out of the scan"
    lead += (". For each one, the hit rate after streaks of makes was compared with the rate after "
             "streaks of misses, against shuffles of the same makes within each game.</p>")
    parts.append(lead)
    flagged_p = sum(1 for entry in scan["players"] for k in range(1, k_max + 1)
                    if (_finite(_streak_item(entry, k).get("p_value")) or 1.0) < 0.05)
    tests = sum(1 for entry in scan["players"] for k in range(1, k_max + 1)
                if _finite(_streak_item(entry, k).get("p_value")) is not None)
    parts.append(
        f"<p>Even if nobody were streaky, about 5 in 100 tests would give p below 0.05 by chance: "
        f"with {_count(tests)} tests ({_count(scanned)} players, streak lengths 1 to {k_max}) that is "
        f"about {_count(round(0.05 * tests))} expected; this scan had {_count(flagged_p)}.</p>")
    standouts = []
    for entry in scan["players"]:
        qs = [_finite(_streak_item(entry, k).get("q_value")) for k in range(1, k_max + 1)]
        qs = [q for q in qs if q is not None]
        if qs and min(qs) < Q_THRESHOLD:
            standouts.append(entry)
    if standouts:
        parts.append(f"<p class=\"verdict\">After allowing for the number of players tested "
                     f"(q below {Q_THRESHOLD:.2f} for some streak length), {_count(len(standouts))} "
                     f"player{'s stand' if len(standouts) != 1 else ' stands'} out; they are at the "
                     "top of the table below. Standing out means the order of makes and misses is "
                     "unusual, not why: look at shot selection and game situations before drawing "
                     "conclusions.</p>")
    else:
        parts.append(f"<p class=\"verdict\">After allowing for the number of players tested, no "
                     f"player stands out (no q below {Q_THRESHOLD:.2f}). That does not show that "
                     "nobody is streaky: small effects need far more attempts than a season "
                     "gives.</p>")
    for test in scan.get("league", ()):
        k = test.get("k")
        mean, p = _finite(test.get("corrected_mean")), _finite(test.get("p_value"))
        if k is None or mean is None:
            continue
        chance = (f"; an average at least this large comes up by chance {_chance_words(p)}" if mean > 0
                  else ", which gives no sign of streaky shooting across the league")
        parts.append(
            f"<p>Across the league, the average corrected gap after {_esc(_after(int(k), 'makes'))} "
            f"versus after {_esc(_after(int(k), 'misses'))} is {_points(mean)} points over "
            f"{_count(test.get('players') or 0)} players{chance} (p = {_p_text(p)}).</p>")
    parts.append("</section>")
    return "".join(parts)


def _league_table(scan, names, k_max, top):
    def order(entry):
        qs = [_finite(_streak_item(entry, k).get("q_value")) for k in range(1, k_max + 1)]
        ps = [_finite(_streak_item(entry, k).get("p_value")) for k in range(1, k_max + 1)]
        qs = [q for q in qs if q is not None] or [math.inf]
        ps = [p for p in ps if p is not None] or [math.inf]
        return (min(qs), min(ps), str(entry["player"]))

    ranked = sorted(scan["players"], key=order)[:top]
    groups = ['<th colspan="4"></th>'] + [
        f'<th colspan="3" class="group">k = {k}</th>'
        for k in range(1, k_max + 1)]
    head = ['<th class="num">#</th><th>player</th><th class="num">attempts</th>'
            '<th class="num">make rate</th>']
    for k in range(1, k_max + 1):
        head.append(f'<th class="num group-start">corrected</th><th class="num">p</th>'
                    f'<th class="num">q</th>')
    rows = []
    for rank, entry in enumerate(ranked, start=1):
        player = str(entry["player"])
        info = names.get(player)
        qs = []
        name = _text_value(info, "player_name")
        detail = " \u00b7 ".join(x for x in (player if name and name != player else "",
                                             _text_value(info, "team")) if x)
        cells = [f'<td class="num">{rank}</td><td class="who">{_esc(name or player)}'
                 + (f'<span class="detail">{_esc(detail)}</span>' if detail else "") + "</td>",
                 _cell(_count(entry.get("attempts") or 0), entry.get("attempts"), field="attempts"),
                 _cell(_percent(entry.get("make_rate")), entry.get("make_rate"), field="make_rate")]
        for k in range(1, k_max + 1):
            item = _streak_item(entry, k)
            q = _finite(item.get("q_value"))
            qs.append(q)
            interval = item.get("interval")
            tip = (f"95% interval {_points(interval[0])} to {_points(interval[1])} points"
                   if interval else None)
            cells += [_cell(_points(item.get("corrected")), item.get("corrected"), field="corrected", k=k,
                            title=tip, classes="group-start"),
                      _cell(_p_text(item.get("p_value")), item.get("p_value"), field="p_value", k=k),
                      _cell(_p_text(q), q, field="q_value", k=k)]
        flag = any(q is not None and q < Q_THRESHOLD for q in qs)
        marked = ' class="stands-out"' if flag else ""
        rows.append(f'<tr data-player="{_esc(player)}"{marked}>' + "".join(cells) + "</tr>")
    return ('<table id="league-table"><thead><tr>' + "".join(groups) + "</tr><tr>" + "".join(head)
            + "</tr></thead><tbody>"
            + "".join(rows) + "</tbody></table>"
            + '<p class="note">Ranked by the smallest q-value over the streak lengths. Corrected: '
              "the hit-rate gap after k makes in a row versus after k misses in a row (D<sub>k</sub>), minus the gap "
              "shuffling within games gives, in percentage points (hover for the 95% interval). "
              f"Bold rows: q below {Q_THRESHOLD:.2f}.</p>")


def league_briefing_html(scan: dict, players_table: pd.DataFrame, *, title: str | None = None,
                         data_version: str | None = None, settings: dict | None = None, top: int = 20,
                         generated: datetime | None = None) -> str:
    """A self-contained HTML briefing on a league scan.

    Parameters
    ----------
    scan : dict
        A ``LeagueScanResult.to_dict()`` payload (as ``streakwise analyse
        --json`` prints and ``Store.load_result`` returns), optionally with
        ``attempt_type``.
    players_table : pandas.DataFrame
        One row per player with at least ``player``; ``player_name``,
        ``team`` and ``attempts`` are used when present (``Store.players()``).
    title : str, optional
        Heading and document title (default "League streak briefing").
    data_version : str, optional
        The store's data version, shown under provenance.
    settings : dict, optional
        The scan's settings (``cli.analyse_commands.scan_settings``): seasons,
        teams, attempt type, minimum attempts, alternative; shown under
        provenance.
    top : int, optional
        Players in the table (default 20), ranked by their smallest q-value.
    generated : datetime, optional
        The time stamp shown (default now).

    Returns
    -------
    str
        The whole HTML document: header, cautions, a reading in plain words
        (expected false alarms, who stands out, the pooled league test), the
        top players with corrected effects, p and q per k, one funnel figure
        per k (effect against attempts with each player's null band) and
        provenance.

    Raises
    ------
    ValueError
        Malformed arguments.
    """
    players_table = _league_briefing_html_iv(scan, players_table, title, data_version, settings)
    if isinstance(top, (bool, np.bool_)) or not isinstance(top, numbers.Integral) or top < 1:
        raise ValueError(f"`top` must be a positive integer (got {top!r})")
    settings = dict(settings or {})
    k_max = _max_k(scan)
    names = _names(players_table)
    scanned = len(scan["players"])
    in_scan = {str(entry["player"]) for entry in scan["players"]}
    skipped = len(set(names) - in_scan)
    min_attempts = settings.get("min_attempts")
    attempt_type = scan.get("attempt_type", settings.get("attempt_type"))
    heading = title or "League streak briefing"
    seasons = settings.get("seasons") or []
    teams = settings.get("teams") or []
    type_text = {"field_goal": "field goals", "free_throw": "free throws", None: "all attempts"}.get(
        attempt_type, attempt_type)
    meta_parts = [("season " if len(seasons) == 1 else "seasons ") + ", ".join(map(str, seasons)) if seasons
                  else "", ("team " if len(teams) == 1 else "teams ") + ", ".join(map(str, teams)) if teams
                  else "", type_text, f"{_count(scanned)} players tested"]
    meta = " &middot; ".join(_esc(part) for part in meta_parts if part)

    reading = _league_reading(scan, k_max, scanned, skipped, min_attempts)
    table = ('<section id="players"><h2>Players who stand out most</h2>'
             + (_league_table(scan, names, k_max, top) if scanned else "<p>No player was tested.</p>")
             + "</section>")
    figures = _Figures()
    figure_parts = []
    for k in range(1, k_max + 1):
        fig = league_funnel_figure(scan, k, players_table)
        figure_parts.append(figures.html(
            fig, f"Each marker is a player: attempts across, corrected gap D<sub>{k}</sub> up. The grey "
            "bar shows where the middle 95% of within-game shuffles put that player's corrected gap, "
            "so chance alone spreads small samples (left) much more widely than large ones.",
            name=f"funnel-k{k}", height=420))
    figures_html = '<section id="figures"><h2>Figures</h2>' + "".join(figure_parts) + "</section>"

    generated_text = _generated_text(generated)
    provenance = [
        ("data version", data_version or "not given"),
        ("attempt type", attempt_type or "all attempts pooled"),
        ("seasons", ", ".join(map(str, seasons)) or "all"),
        ("teams", ", ".join(map(str, teams)) or "all"),
        ("players tested", f"{scanned:,}" + (f" (at least {min_attempts:,} attempts each)" if min_attempts else "")),
        ("test", "within-game permutation test per player, Benjamini-Hochberg q-values per streak "
                 "length, pooled league test" + (f", alternative '{settings['alternative']}'"
                                                  if settings.get("alternative") else "")),
        ("permutations", f"{int(scan.get('permutations') or 0):,} per player"),
        ("seed", str(scan.get("seed"))),
        ("streak lengths", f"k = 1 to {k_max}"),
        ("generated", generated_text),
        ("software", f"streakwise {_version()}"),
    ]
    data = {
        "kind": "league_briefing",
        "data_version": data_version,
        "seed": scan.get("seed"),
        "permutations": scan.get("permutations"),
        "settings": settings,
        "generated": generated_text,
        "scan": scan,
        "cautions": [*BRIEFING_CAUTIONS, LEAGUE_CAUTION],
    }
    return _page(title=heading, kind="Streak briefing: league", meta=meta,
                 sections=[reading, table, figures_html, _provenance(provenance)],
                 data=data, generated=generated_text)
