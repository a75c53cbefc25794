"""Plotly figures of a streak test: rates against the null band, null distributions.

Colours come from the Okabe-Ito palette, which stays distinguishable under the
common colour-vision deficiencies; makes and misses are not coded as warm and
cool colours.
"""

from __future__ import annotations

import numpy as np
import plotly.graph_objects as go

from .results import StreakTestResult
from .streaks import _check_choice, _check_integer, _show

__all__ = ["OKABE_ITO", "null_distribution_figure", "rates_figure"]

#: The Okabe-Ito colour-blind-safe palette.
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
_AFTER_MAKES = OKABE_ITO["bluish_green"]
_AFTER_MISSES = OKABE_ITO["reddish_purple"]
_NULL = "#7F7F7F"
_OBSERVED = OKABE_ITO["black"]

_STATISTICS = ("difference", "after_makes", "after_misses", "runs", "longest_run", "lag1")


def _rates_figure_iv(result):
    if not isinstance(result, StreakTestResult):
        raise ValueError(f"`result` must be a StreakTestResult (got {_show(result)})")
    return result


def rates_figure(result):
    """Observed hit rates after k makes and after k misses against the null band.

    Parameters
    ----------
    result : StreakTestResult
        From :func:`~streakwise.analysis.permutation.permutation_test`.

    Returns
    -------
    plotly.graph_objects.Figure
        For every k: the observed rate after k makes and after k misses
        (filled markers) and, beside each, the permutation null mean with its
        2.5-97.5% band (hollow markers with bars); a dashed line at the
        overall make rate.

    Notes
    -----
    The null band shows where chance alone puts each rate given the player's
    games, including the finite-sample bias of rates after streaks (Miller &
    Sanjurjo 2018); it is not a confidence interval.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.permutation import permutation_test
    >>> from streakwise.analysis.figures import rates_figure
    >>> made = (np.random.default_rng(3).random(300) < 0.5).astype(int)
    >>> res = permutation_test(made, np.arange(0, 301, 15), permutations=500, rng=1)
    >>> fig = rates_figure(res)
    >>> [trace.name for trace in fig.data]
    ['after k makes', 'null after k makes', 'after k misses', 'null after k misses']
    """
    result = _rates_figure_iv(result)
    ks = np.arange(1, result.max_k + 1)
    fig = go.Figure()
    for statistic, label, colour, shift in (("after_makes", "after k makes", _AFTER_MAKES, -0.12),
                                            ("after_misses", "after k misses", _AFTER_MISSES, 0.12)):
        tests = [result.test(statistic, int(k)) for k in ks]
        observed = [t.observed if t.observed is not None else np.nan for t in tests]
        means = [t.null_mean if t.null_mean is not None else np.nan for t in tests]
        low = [m - t.null_band[0] if t.null_band else np.nan for m, t in zip(means, tests)]
        high = [t.null_band[1] - m if t.null_band else np.nan for m, t in zip(means, tests)]
        fig.add_trace(go.Scatter(
            x=ks + shift, y=observed, mode="markers", name=label,
            marker=dict(color=colour, size=11, symbol="circle"),
            hovertemplate="k=%{customdata}<br>observed %{y:.3f}<extra>" + label + "</extra>",
            customdata=ks))
        fig.add_trace(go.Scatter(
            x=ks + shift + 0.06, y=means, mode="markers", name=f"null {label}",
            marker=dict(color=colour, size=9, symbol="circle-open"),
            error_y=dict(type="data", symmetric=False, array=high, arrayminus=low, color=_NULL,
                         thickness=1.5, width=4),
            hovertemplate="k=%{customdata}<br>null mean %{y:.3f}<extra>null band 2.5-97.5%</extra>",
            customdata=ks))
    fig.add_hline(y=result.make_rate, line=dict(color=_NULL, dash="dash", width=1),
                  annotation_text="overall make rate", annotation_position="bottom right")
    name = result.player if result.player is not None else "player"
    fig.update_layout(
        title=f"{name}: hit rate after k makes and after k misses, against the within-game "
              "permutation null (2.5-97.5% band)",
        xaxis=dict(title="k (streak length)", tickmode="array", tickvals=ks.tolist()),
        yaxis=dict(title="hit rate", tickformat=".0%"),
        template="plotly_white", legend=dict(orientation="h", y=-0.2),
    )
    return fig


def _null_distribution_figure_iv(result, statistic, k):
    result = _rates_figure_iv(result)
    statistic = _check_choice("statistic", statistic, _STATISTICS)
    if statistic in ("difference", "after_makes", "after_misses"):
        k = _check_integer("k", k, minimum=1, maximum=result.max_k)
    elif k is not None:
        raise ValueError(f"`k` must be None for statistic {statistic!r} (got {_show(k)})")
    test = result.test(statistic, k)
    if test.null_distribution is None:
        raise ValueError("the result has no null draws: run the test with keep_null=True")
    return test


def null_distribution_figure(result, statistic="difference", k=1, *, bins=60):
    """Histogram of a statistic's permutation null with the observed value.

    Parameters
    ----------
    result : StreakTestResult
        From a test run with ``keep_null=True`` (the default).
    statistic : {'difference', 'after_makes', 'after_misses', 'runs', 'longest_run', 'lag1'}
    k : int or None
        Streak length for the three rate statistics, None otherwise.
    bins : int, optional
        Approximate number of histogram bins (default 60).

    Returns
    -------
    plotly.graph_objects.Figure
        The null draws as a histogram (probability), the null band shaded, the
        null mean dashed and the observed value as a solid line.

    Notes
    -----
    Only the draws on which the statistic is defined are shown (the title
    gives their share). Under the within-game null the observed value is one
    more draw from this histogram; the p-value is the share of draws at least
    as extreme (Phipson & Smyth 2010 for random draws).

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.permutation import permutation_test
    >>> from streakwise.analysis.figures import null_distribution_figure
    >>> made = (np.random.default_rng(3).random(300) < 0.5).astype(int)
    >>> res = permutation_test(made, np.arange(0, 301, 15), permutations=500, rng=1)
    >>> fig = null_distribution_figure(res, "runs", None)
    >>> fig.data[0].type
    'histogram'
    """
    test = _null_distribution_figure_iv(result, statistic, k)
    bins = _check_integer("bins", bins, minimum=1)
    fig = go.Figure()
    fig.add_trace(go.Histogram(
        x=test.null_distribution, histnorm="probability", nbinsx=bins, name="permutation null",
        marker=dict(color=OKABE_ITO["sky_blue"], line=dict(width=0)), opacity=0.85))
    if test.null_band:
        fig.add_vrect(x0=test.null_band[0], x1=test.null_band[1], fillcolor=_NULL, opacity=0.12,
                      line_width=0, annotation_text="null band 2.5-97.5%",
                      annotation_position="top left")
    if test.null_mean is not None:
        fig.add_vline(x=test.null_mean, line=dict(color=_NULL, dash="dash", width=1.5),
                      annotation_text="null mean", annotation_position="bottom left")
    if test.observed is not None:
        p = "-" if test.p_value is None else f"{test.p_value:.4f}"
        fig.add_vline(x=test.observed, line=dict(color=_OBSERVED, width=2.5),
                      annotation_text=f"observed (p = {p}, {result.alternative})",
                      annotation_position="top right")
    name = result.player if result.player is not None else "player"
    fig.update_layout(
        title=f"{name}: {test.label} - permutation null ({result.permutations} draws, "
              f"{test.share_defined:.0%} defined)",
        xaxis_title=test.label, yaxis_title="share of null draws", template="plotly_white",
        showlegend=False, bargap=0.02)
    return fig
