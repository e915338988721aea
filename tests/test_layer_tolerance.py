"""Layer tolerances of a recipe: Monte Carlo draws, edge spread and the ranking of layers."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.analysis.layer_tolerance import layer_tolerance
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

    def test_variance_matches_first_order_propagation(self, recipe):
        """For small random errors the trials' variance equals Σ σ_j² (∂R/∂d_j)² (first order)."""
        wl = np.arange(440.0, 640.0, 2.0)
        res = layer_tolerance(recipe, wl, thickness_random=0.002, thickness_systematic=0, index_error=0,
                              trials=3000, seed=3)
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
