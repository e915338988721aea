"""Layer tolerances of a recipe: Monte Carlo draws, edge spread and the ranking of layers."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.analysis.layer_tolerance import layer_tolerance, variance_shares
from workbench.analysis.recipe import starting_stack
from workbench.errors import WorkbenchError


@pytest.fixture(scope="module")
def recipe():
    return starting_stack(520.0, reflects="short", periods=6, high="2.35", low="1.46", substrate="1.52")


class TestLayerTolerance:
    def test_no_errors_no_spread(self, recipe):
        """With every tolerance zero, every trial is the nominal curve."""
        wl = np.arange(440.0, 640.0, 2.0)
        res = layer_tolerance(recipe, wl, thickness_random=0, thickness_systematic=0, index_error=0, trials=5)
        np.testing.assert_allclose(res.R_trials, np.broadcast_to(res.R_nominal, res.R_trials.shape), atol=1e-14)
        # every trial is the nominal curve: its monotone flags too (docs/methods.md §15)
        from workbench.analysis.transition import edge_transition

        nominal = edge_transition(wl, res.R_nominal, reflects="short").monotone
        assert res.non_monotone_counts()["long_wave"] == (0 if nominal else 5)

    def test_variance_matches_first_order_propagation(self, recipe):
        """For small random errors the trials' variance equals Σ σ_j² (∂R/∂d_j)² (first order)."""
        wl = np.arange(440.0, 640.0, 2.0)
        res = layer_tolerance(recipe, wl, thickness_random=0.002, thickness_systematic=0, index_error=0,
                              trials=3000, seed=3, bootstrap=0)
        var_mc = res.R_trials.var(axis=0).sum()
        from workbench.optics.stacks import cone_response

        _, _, dR, _ = cone_response(recipe.indices(wl), recipe.thicknesses_nm, wl, aoi_deg=0.0,
                                    incident=1.0, substrate=1.52, derivatives=True)
        var_lin = ((0.002 * recipe.thicknesses_nm[:, None]) ** 2 * dR**2).sum()
        # common practice: first-order (delta-method) propagation of independent errors
        assert var_mc == pytest.approx(var_lin, rel=0.1)
        assert sum(r["share"] for r in res.ranking) == pytest.approx(1.0)
        assert res.ranking[0]["share"] >= res.ranking[-1]["share"]

    def test_systematic_error_moves_edge(self, recipe):
        """A 1 % systematic thickness error spreads the long-wave edge by about 1 % of its position."""
        wl = np.arange(440.0, 640.0, 0.5)
        res = layer_tolerance(recipe, wl, thickness_random=0, thickness_systematic=0.01, index_error=0,
                              trials=400, seed=1)
        spread = np.nanstd(res.edges_trials[:, 1] - res.edges_nominal[1])
        # common practice: a non-dispersive stack scaled by (1 + e) moves its edges by (1 + e);
        # H and L drawn independently, so the spread lies between 1/√2 and 1 of 1 % of the edge
        assert 0.6 * 5.2 < spread < 1.1 * 5.2
        assert set(res.edge_shift_percentiles()) == {"short_wave", "long_wave"}

    def test_rejects_large_tolerance(self, recipe):
        """A tolerance of 50 % or more is refused."""
        with pytest.raises(WorkbenchError) as err:
            layer_tolerance(recipe, [500.0, 510.0], thickness_random=0.6)
        assert str(err.value) == "'thickness_random' must be a fraction in [0, 0.5) (got 0.6)"

    def test_trial_shares_and_floor(self, recipe):
        """Each layer gets a share from the trials with an interval; the floor and the seed are reported."""
        wl = np.arange(440.0, 640.0, 2.0)
        a = layer_tolerance(recipe, wl, trials=300, seed=5, bootstrap=50)
        b = layer_tolerance(recipe, wl, trials=300, seed=5, bootstrap=50)
        assert a.ranking == b.ranking and a.trial_shares.floor == b.trial_shares.floor   # same seed, same result
        for row in a.ranking:
            lo, hi = row["trial_interval"]
            assert 0 <= lo <= hi and row["above_floor"] == (row["trial_share"] > a.trial_shares.floor)
        # the largest analytic share is also resolved by the trials
        assert a.ranking[0]["above_floor"]
        assert a.settings["bootstrap"] == 50


class TestVarianceShares:
    N, P = 200, 20

    def _data(self, seed, effects=(1.0, 0.3), noise=0.5, columns=1):
        rng = np.random.default_rng(seed)
        X = rng.standard_normal((self.N, self.P))
        B = np.zeros((self.P, columns))
        B[: len(effects)] = np.asarray(effects)[:, None]
        return X, X @ B + noise * rng.standard_normal((self.N, columns))

    def test_linear_shares(self):
        """For y = X b + e the share of X_j is b_j² / (Σ b² + σ²) (common practice: linear variance decomposition)."""
        X, Y = self._data(0, effects=(1.0, 0.5), noise=0.5, columns=30)
        est = variance_shares(X, Y, bootstrap=100, permutations=100)
        total = 1.0 + 0.25 + 0.25
        assert est.shares[0] == pytest.approx(1.0 / total, abs=0.05)
        assert est.shares[1] == pytest.approx(0.25 / total, abs=0.05)
        assert list(np.nonzero(est.distinguishable)[0]) == [0, 1]

    def test_null_share_known_distribution(self):
        """Shuffled, a share has mean 1/(n − 1) and the floor is the Beta(1/2, (n − 2)/2) quantile of the largest of P."""
        from scipy.stats import beta

        X, Y = self._data(1, effects=(), noise=1.0)
        est = variance_shares(X, Y, bootstrap=20, permutations=2000, level=0.95, seed=2)
        # the squared sample correlation of independent normals is Beta(1/2, (n − 2)/2) (from memory;
        # e.g. Kendall & Stuart, The Advanced Theory of Statistics, vol. 2)
        assert est.null_mean == pytest.approx(1.0 / (self.N - 1), rel=0.05)
        assert est.floor == pytest.approx(beta.ppf(0.95 ** (1.0 / self.P), 0.5, (self.N - 2) / 2), rel=0.1)

    def test_zero_effect_parameter_stays_under_floor(self):
        """Over 200 independent data sets a parameter without effect has mean share 1/(n − 1) and rarely tops the floor."""
        null, above, floors = [], 0, []
        for k in range(200):
            X, Y = self._data(100 + k)
            est = variance_shares(X, Y, bootstrap=10, permutations=100, level=0.95, seed=k)
            null.append(est.shares[5])
            above += bool(est.distinguishable[5])
            floors.append(est.floor)
        assert np.mean(null) == pytest.approx(1.0 / (self.N - 1), rel=0.2)
        # the floor bounds the largest of P null shares 95 % of the time, so one given parameter tops it far less often
        assert above <= 4
        assert np.mean(np.array(null) > np.median(floors)) <= 0.02

    def test_bootstrap_spread_matches_repeats(self):
        """The bootstrap standard error of a share equals its spread over independent repeats of the trials."""
        repeats = np.array([variance_shares(*self._data(300 + k), bootstrap=10, permutations=10).shares[1]
                            for k in range(150)])
        est = variance_shares(*self._data(299), bootstrap=1000, permutations=10)
        # Efron & Tibshirani (1993), ch. 6: the bootstrap estimate of a standard error
        assert est.standard_error[1] == pytest.approx(repeats.std(ddof=1), rel=0.3)

    def test_seed_reproducible(self):
        """The same seed gives the same intervals and floor; another seed other ones."""
        X, Y = self._data(7)
        a, b, c = (variance_shares(X, Y, bootstrap=50, permutations=50, seed=s) for s in (3, 3, 4))
        np.testing.assert_array_equal(a.interval, b.interval)
        assert a.floor == b.floor and not np.array_equal(a.interval, c.interval)
        np.testing.assert_array_equal(a.shares, c.shares)          # the shares themselves do not depend on it

    def test_rejects_mismatched_rows(self):
        """X and Y with different numbers of trials are refused."""
        with pytest.raises(WorkbenchError) as err:
            variance_shares(np.zeros((5, 2)), np.zeros(4))
        assert str(err.value) == "'X' and 'Y' must have one row per trial, at least 3 (got (5, 2) and (4, 1))"
