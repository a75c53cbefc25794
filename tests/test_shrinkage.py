"""Tests for streakwise.analysis.shrinkage: normal-normal empirical Bayes.

Reference values: the BCG vaccine trials (13 studies, log relative risks), the
standard example of random-effects meta-analysis. DerSimonian & Laird (1986)
moment estimator: tau^2 = 0.3088, pooled estimate -0.7141 (se 0.1787); REML:
tau^2 = 0.3132, estimate -0.7145 (se 0.1798); Cochran's Q = 152.23 on 12
degrees of freedom (Viechtbauer 2010, J. Statistical Software 36(3), the
metafor package's rma() on dat.bcg).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from streakwise.analysis.shrinkage import ShrinkageResult, shrink_effects

# tpos, tneg, cpos, cneg of the 13 BCG trials (Colditz et al. 1994, JAMA 271(9), 698-702)
BCG = np.array(
    [[4, 119, 11, 128], [6, 300, 29, 274], [3, 228, 11, 209], [62, 13536, 248, 12619], [33, 5036, 47, 5761],
     [180, 1361, 372, 1079], [8, 2537, 10, 619], [505, 87886, 499, 87892], [29, 7470, 45, 7232],
     [17, 1699, 65, 1600], [186, 50448, 141, 27197], [5, 2493, 3, 2338], [27, 16886, 29, 17825]],
    dtype=float,
)


def bcg():
    tpos, tneg, cpos, cneg = BCG.T
    y = np.log((tpos / (tpos + tneg)) / (cpos / (cpos + cneg)))
    v = 1 / tpos - 1 / (tpos + tneg) + 1 / cpos - 1 / (cpos + cneg)
    return y, np.sqrt(v)


class TestShrinkEffects:
    def test_validation(self):
        with pytest.raises(ValueError, match="`standard_errors` must be positive and finite"):
            shrink_effects([0.1, 0.2], [0.1, 0.0])
        with pytest.raises(ValueError, match="must be 1-d and of equal length"):
            shrink_effects([0.1, 0.2], [0.1])
        with pytest.raises(ValueError, match="`method` must be one of 'dersimonian-laird', 'reml' \\(got 'ml'\\)"):
            shrink_effects([0.1, 0.2], [0.1, 0.1], method="ml")
        with pytest.raises(ValueError, match="`players` must name every estimate"):
            shrink_effects([0.1, 0.2], [0.1, 0.1], players=["a"])
        with pytest.raises(ValueError, match="`estimates` must be finite"):
            shrink_effects([0.1, np.nan], [0.1, 0.1])

    def test_against_dersimonian_laird_bcg(self):
        # DerSimonian & Laird (1986) estimator on the BCG trials (metafor: tau^2 = 0.3088)
        y, se = bcg()
        result = shrink_effects(y, se, method="dersimonian-laird")
        assert result.tau2 == pytest.approx(0.3088, abs=5e-5)
        assert result.league_mean == pytest.approx(-0.7141, abs=5e-5)
        assert result.league_mean_se == pytest.approx(0.1787, abs=5e-5)
        assert result.q_statistic == pytest.approx(152.2330, abs=5e-4)

    def test_against_reml_bcg(self):
        # REML on the BCG trials (metafor rma(method="REML"): tau^2 = 0.3132, estimate -0.7145)
        y, se = bcg()
        result = shrink_effects(y, se, method="reml")
        assert result.tau2 == pytest.approx(0.3132, abs=5e-5)
        assert result.league_mean == pytest.approx(-0.7145, abs=5e-5)
        assert result.league_mean_se == pytest.approx(0.1798, abs=5e-5)

    def test_shrinks_noisy_players_more(self):
        y = np.array([0.10, 0.10, -0.05, 0.02, 0.0, 0.04])
        se = np.array([0.02, 0.08, 0.03, 0.03, 0.05, 0.02])
        result = shrink_effects(y, se, players=list("abcdef"))
        assert isinstance(result, ShrinkageResult)
        assert ((result.weight >= 0) & (result.weight <= 1)).all()
        assert result.weight[0] > result.weight[1]  # same estimate, smaller standard error
        assert abs(result.shrunk[0] - result.league_mean) > abs(result.shrunk[1] - result.league_mean)
        assert ((result.interval_low < result.shrunk) & (result.shrunk < result.interval_high)).all()
        frame = result.to_frame()
        assert list(frame.columns) == ["player", "estimate", "se", "shrunk", "interval_low", "interval_high", "weight"]
        assert result.to_dict()["players"][0]["player"] == "a"
        assert "Caveats:" in result.summary()

    def test_no_spread_beyond_chance_pulls_everyone_to_the_mean(self):
        result = shrink_effects([0.01, -0.01, 0.0, 0.005], [0.05, 0.05, 0.05, 0.05], method="dersimonian-laird")
        assert result.tau2 == 0.0
        np.testing.assert_allclose(result.shrunk, result.league_mean)
        assert (result.weight == 0).all()

    def test_empty(self):
        result = shrink_effects([], [])
        assert result.players == () and len(result.shrunk) == 0

    @pytest.mark.parametrize("method", ["reml", "dersimonian-laird"])
    def test_interval_coverage(self, method):
        # true effects from the league's distribution: about 95% of intervals cover them.
        # Trials are independent; intervals within one share the estimated mean and spread,
        # so the standard error comes from the spread of the trials' coverage. The intervals
        # ignore the uncertainty in tau^2, which costs them a little coverage (0.01 allowed).
        rng = np.random.default_rng(1)
        n, trials = 150, 40
        shares = []
        for _ in range(trials):
            theta = rng.normal(0.01, 0.02, n)
            se = rng.uniform(0.01, 0.04, n)
            result = shrink_effects(theta + rng.normal(0, se), se, method=method)
            shares.append(((result.interval_low <= theta) & (theta <= result.interval_high)).mean())
        shares = np.array(shares)
        se_mean = shares.std(ddof=1) / math.sqrt(trials)
        assert -4 * se_mean - 0.01 < shares.mean() - 0.95 < 4 * se_mean, shares.mean()


class TestShrinkScanEffects:
    def test_reads_scan_and_matches_shrink_effects(self):
        from scipy import stats as st

        from streakwise.analysis.shrinkage import shrink_effects, shrink_scan_effects

        scan = {"players": [
            {"player": p, "streak": [{"corrected": e, "interval": [e - w, e + w]}]}
            for p, e, w in (("a", 0.05, 0.04), ("b", -0.01, 0.02), ("c", 0.02, 0.03), ("d", 0.0, 0.0))
        ]}
        result = shrink_scan_effects(scan, 1)
        z = st.norm.ppf(0.975)
        expected = shrink_effects([0.05, -0.01, 0.02], [0.04 / z, 0.02 / z, 0.03 / z], ["a", "b", "c"])
        assert list(result.players) == ["a", "b", "c"]  # "d" has no interval width: left out
        np.testing.assert_allclose(result.shrunk, expected.shrunk)
        assert shrink_scan_effects(scan, 2) is None
