"""The ΔE00-minimising matrix: the analytic gradient it uses, and its optimum against the previous solver."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import least_squares

from workbench.analysis.camera import DELTA_E_MATRIX_GTOL, ColourBench
from workbench.analysis.evaluator import DesignEvaluator
from workbench.fileio.design_toml import load_design
from workbench.colorimetry.coordinates import (
    XYZ_to_Lab,
    XYZ_to_Lab_jacobian,
    delta_E_CIE2000,
    delta_E_CIE2000_gradient,
)

SHARMA = np.loadtxt(Path(__file__).parent / "data" / "sharma2005_ciede2000.csv", delimiter=",", skiprows=2)
WHITE = np.array([95.047, 100.0, 108.883])


def central(f, x, h):
    """Central differences of f (..., ) with respect to the last axis of x (..., 3 or 9)."""
    n = x.shape[-1]
    return np.stack([(f(x + h * np.eye(n)[i]) - f(x - h * np.eye(n)[i])) / (2 * h) for i in range(n)], axis=-1)


def random_pairs(n=500, seed=3):
    rng = np.random.default_rng(seed)
    lab1 = np.column_stack([rng.uniform(5, 95, n), rng.uniform(-80, 80, n), rng.uniform(-80, 80, n)])
    return lab1, lab1 + rng.normal(0, 4, lab1.shape)


class TestDeltaECIE2000Gradient:
    def test_value_is_delta_e_exactly(self):
        """The value equals delta_E_CIE2000 bit for bit on Sharma's 34 pairs and on random pairs."""
        # Sharma, Wu & Dalal (2005), Table 1 (tests/data/sharma2005_ciede2000.csv)
        for lab1, lab2 in ((SHARMA[:, 1:4], SHARMA[:, 4:7]), random_pairs()):
            E, _ = delta_E_CIE2000_gradient(lab1, lab2)
            assert np.array_equal(E, delta_E_CIE2000(lab1, lab2))

    def test_sharma_values(self):
        """Sharma's published ΔE00 to their 4 decimals."""
        # Sharma, Wu & Dalal (2005), Table 1
        E, _ = delta_E_CIE2000_gradient(SHARMA[:, 1:4], SHARMA[:, 4:7])
        np.testing.assert_allclose(E, SHARMA[:, 7], atol=5e-5)

    def test_gradient_matches_central_differences(self):
        """∂ΔE00/∂Lab₁ equals central differences (h = 1e-5) to 1e-7 on random pairs and Sharma's smooth pairs."""
        # computed: central differences of delta_E_CIE2000, truncation + rounding error ~1e-9
        smooth = SHARMA[16:, :]     # pairs 17-34: no zero chroma, no hue difference near ±180°
        for lab1, lab2 in (random_pairs(), (smooth[:, 1:4], smooth[:, 4:7])):
            _, g = delta_E_CIE2000_gradient(lab1, lab2)
            num = central(lambda x: delta_E_CIE2000(x, lab2), lab1, 1e-5)
            np.testing.assert_allclose(g, num, atol=1e-7, rtol=0)

    def test_zero_chroma_and_zero_difference_finite(self):
        """A neutral first colour (hue undefined) and identical colours give a finite gradient; 0 at ΔE00 = 0."""
        lab1 = np.array([[50.0, 0.0, 0.0], [50.0, 2.5, 0.0]])
        lab2 = np.array([[50.0, -1.0, 2.0], [50.0, 2.5, 0.0]])
        E, g = delta_E_CIE2000_gradient(lab1, lab2)
        assert np.all(np.isfinite(g))
        assert E[1] == 0 and np.array_equal(g[1], np.zeros(3))

    def test_broadcasts(self):
        """A batch of first colours against one fixed second colour broadcasts like delta_E_CIE2000."""
        lab1, lab2 = random_pairs(20)
        E, g = delta_E_CIE2000_gradient(lab1.reshape(4, 5, 3), lab2[0])
        assert E.shape == (4, 5) and g.shape == (4, 5, 3)
        assert np.array_equal(E, delta_E_CIE2000(lab1.reshape(4, 5, 3), lab2[0]))


class TestXYZToLabJacobian:
    def test_lab_is_xyz_to_lab_exactly(self):
        """The L*a*b* equal XYZ_to_Lab's bit for bit."""
        XYZ = np.random.default_rng(4).uniform(0.01, 110, (200, 3))
        lab, _ = XYZ_to_Lab_jacobian(XYZ, WHITE)
        assert np.array_equal(lab, XYZ_to_Lab(XYZ, WHITE))

    def test_jacobian_matches_central_differences(self):
        """∂Lab/∂XYZ equals central differences on the cube-root part and on the linear part near black."""
        # CIE 15:2004 § 8.2.1 (f and its two parts); computed: central differences
        rng = np.random.default_rng(5)
        XYZ = np.concatenate([rng.uniform(5, 110, (100, 3)), rng.uniform(0.0, 0.5, (20, 3))])  # t < ε = 0.00886
        _, jac = XYZ_to_Lab_jacobian(XYZ, WHITE)
        num = central(lambda x: XYZ_to_Lab(x, WHITE), XYZ, 1e-6)          # (..., 3 Lab, 3 XYZ)
        np.testing.assert_allclose(jac, num, atol=1e-6, rtol=1e-7)


@pytest.fixture(scope="module")
def demo_bench():
    """The demo design's bench and its balanced RGB at the design's values."""
    ev = DesignEvaluator(load_design(Path(__file__).resolve().parents[1] / "spectra-demo" / "tern3_design.toml"))
    C, _ = ev.bench.balanced(ev.sensitivities())
    return ev.bench, C


def previous_delta_e_matrix(bench: ColourBench, C, M0, scope):
    """The previous solver: Levenberg-Marquardt on forward-difference Jacobians, xtol = ftol = 1e-10 (kept as the reference)."""
    sw = np.sqrt(bench.weights)
    eps = float(np.finfo(float).eps) ** 0.5
    out = M0.copy()
    for g in ([list(range(C.shape[0]))] if scope == "shared" else [[j] for j in range(C.shape[0])]):
        Cg, Tg = C[g], bench.true_Lab[g]

        def resid(m, Cg=Cg, Tg=Tg):
            m = np.asarray(m)
            display = np.einsum("...ab,jkb->...jka", m.reshape(m.shape[:-1] + (3, 3)), Cg)
            r = delta_E_CIE2000(XYZ_to_Lab(100 * display @ bench.N.T, bench.white_Lab_ref), Tg) * sw
            return r.reshape(r.shape[:-2] + (-1,))

        def jac(m, resid=resid):
            h = eps * np.where(m >= 0, 1.0, -1.0) * np.maximum(1.0, np.abs(m))
            x = m + np.diag(h)
            f = resid(np.vstack([m, x]))
            return ((f[1:] - f[0]) / (np.diag(x) - m)[:, None]).T

        out[g] = least_squares(resid, out[g[0]].ravel(), jac=jac, method="lm", xtol=1e-10, ftol=1e-10).x.reshape(3, 3)
    return out


class TestDeltaECost:
    def test_cost_is_weighted_sum_of_squares(self, demo_bench):
        """The cost equals Σ w ΔE00² of the bench's own ΔE00 through the same matrix."""
        b, C = demo_bench
        M = b.fit_matrices(C, "least-squares", "shared")
        cost, _ = b.delta_e_cost(M[0].ravel(), C)
        assert cost == pytest.approx(float(np.sum(b.delta_e(C, M) ** 2 * b.weights)), rel=1e-12)

    def test_gradient_matches_central_differences(self, demo_bench):
        """The analytic gradient of the cost in the nine entries equals central differences (h = 1e-6)."""
        # computed: central differences of the cost
        b, C = demo_bench
        m = b.fit_matrices(C, "least-squares", "shared")[0].ravel()
        _, g = b.delta_e_cost(m, C)
        num = central(lambda x: b.delta_e_cost(x, C)[0], m[None], 1e-6)[0]
        np.testing.assert_allclose(g, num, rtol=1e-6, atol=1e-6 * np.max(np.abs(g)))

    def test_one_illuminant(self, demo_bench):
        """With illuminants=[j] the cost is that illuminant's alone."""
        b, C = demo_bench
        M = b.fit_matrices(C, "least-squares", "shared")
        cost, _ = b.delta_e_cost(M[0].ravel(), C[[1]], [1])
        assert cost == pytest.approx(float(np.sum(b.delta_e(C, M)[1] ** 2 * b.weights)), rel=1e-12)


class TestFitMatricesDeltaE:
    # the previous solver takes ~220 iterations per matrix: per illuminant (three matrices) is the slow case
    @pytest.mark.parametrize("scope", ["shared", pytest.param("per-illuminant", marks=pytest.mark.slow)])
    def test_same_optimum_as_previous_solver(self, demo_bench, scope):
        """On the demo the Newton matrix reaches the previous solver's optimum: mean ΔE00 within 1e-6, entries within 1e-4, cost no higher."""
        b, C = demo_bench
        M0 = b.fit_matrices(C, "least-squares", scope)
        new = b.fit_matrices(C, "delta-e00", scope)
        old = previous_delta_e_matrix(b, C, M0, scope)
        d_new, d_old = b.delta_e(C, new), b.delta_e(C, old)
        assert abs(float(d_new.mean()) - float(d_old.mean())) < 1e-6
        np.testing.assert_allclose(new, old, atol=1e-4)
        w = b.weights
        assert np.sum(d_new ** 2 * w) <= np.sum(d_old ** 2 * w) * (1 + 1e-12)
        assert float(d_new.mean()) < float(b.delta_e(C, M0).mean())        # better than least squares

    def test_converged(self, demo_bench):
        """At the result no gradient entry exceeds DELTA_E_MATRIX_GTOL × the cost."""
        b, C = demo_bench
        M = b.fit_matrices(C, "delta-e00", "shared")
        cost, g = b.delta_e_cost(M[0].ravel(), C)
        assert np.max(np.abs(g)) <= DELTA_E_MATRIX_GTOL * cost * 1.0001
