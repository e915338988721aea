"""The noise floor of the tolerance ranking's variance contribution (docs/methods.md §16)."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.analysis.tolerance_stats import correlation_ratio, correlation_ratio_floor


class TestCorrelationRatioFloor:
    def test_matches_simulated_null(self):
        """The floor is the 95 % quantile of the largest corrected η² of P parameters without effect (simulated)."""
        rng = np.random.default_rng(11)
        N, P = 400, 30
        largest = [correlation_ratio(rng.standard_normal((N, P)), rng.standard_normal(N), corrected=True).max()
                   for _ in range(400)]
        # Kelley (1935) ε² with the F distribution of the between/within ratio (from memory); Šidák (1967)
        assert correlation_ratio_floor(N, P) == pytest.approx(np.quantile(largest, 0.95), rel=0.15)

    def test_one_parameter_quantile(self):
        """For one parameter the floor is the single ε² quantile: 95 % of null draws stay below it."""
        rng = np.random.default_rng(12)
        N = 300
        eps = np.array([correlation_ratio(rng.standard_normal((N, 1)), rng.standard_normal(N), corrected=True)[0]
                        for _ in range(2000)])
        assert np.mean(eps < correlation_ratio_floor(N, 1)) == pytest.approx(0.95, abs=0.015)

    def test_shrinks_with_trials(self):
        """More trials, a lower floor; more parameters, a higher one; too few trials for the bins gives NaN."""
        assert correlation_ratio_floor(2000, 100) < correlation_ratio_floor(500, 100) < correlation_ratio_floor(500, 1000)
        assert np.isnan(correlation_ratio_floor(4, 3, bins=5))

    def test_ranking_marks_parameters_above_floor(self, demo_design):
        """The tolerance ranking carries the floor and marks which parameters stand above it."""
        from workbench.analysis.tolerance import run_tolerance

        result = run_tolerance(demo_design, trials=200, seed=1)
        rk = result.ranking()
        assert rk["noise_floor"] == pytest.approx(correlation_ratio_floor(200, len(rk["parameters"])))
        for row in rk["parameters"]:
            assert row["above_noise_floor"] == (row["variance_contribution"] > rk["noise_floor"])
        assert rk["parameters"][0]["above_noise_floor"] and "noise_floor" in rk["methods"]
