"""Tests of workbench.optics.elements: angle shift, absorbing glass, edges, the dichroic splitter."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.optics import elements as optics
from workbench.optics import splitter
from workbench.errors import WorkbenchError

WL = np.arange(380.0, 781.0, 1.0)


class TestAngleShift:
    def test_normal_incidence_no_shift(self):
        """At 0° the wavelength is unchanged (Smith, Modern Optical Engineering, 4th ed., Ch. 11)."""
        assert optics.angle_shifted_wavelength(550.0, 0.0, 1.8) == 550.0

    def test_textbook_values(self):
        """λ₀ 550 nm, n_eff 1.8 in air: 547.4 / 540.0 / 505.8 nm at 10/20/45°."""
        # Smith, Modern Optical Engineering, 4th ed., Ch. 11 (the formula); values computed from it (docs/methods.md §14)
        got = optics.angle_shifted_wavelength(550.0, np.array([10.0, 20.0, 45.0]), 1.8)
        np.testing.assert_allclose(np.round(got, 1), [547.4, 540.0, 505.8])
        # n_eff 2.0 -> 514.5, 1.6 -> 493.4 at 45°: Smith, Ch. 11, computed (docs/methods.md §14)
        got = optics.angle_shifted_wavelength(550.0, 45.0, np.array([2.0, 1.6]))
        np.testing.assert_allclose(np.round(got, 1), [514.5, 493.4])

    def test_inside_glass(self):
        """In glass n₀ = 1.52 at 25°, n_eff 1.8: 513.8 nm (Smith, Ch. 11; docs/methods.md §14)."""
        assert round(float(optics.angle_shifted_wavelength(550.0, 25.0, 1.8, 1.52)), 1) == 513.8

    @pytest.mark.parametrize("shape", [(), (6,), (2, 3)])
    def test_shape_ladder(self, shape):
        """Scalar, (6,) and (2, 3) angles give results of the same shape."""
        theta = np.full(shape, 20.0)
        out = optics.angle_shifted_wavelength(550.0, theta, 1.8)
        assert np.shape(out) == shape

    def test_no_real_solution(self):
        """n₀ sinθ ≥ n_eff is an error, not NaN."""
        with pytest.raises(WorkbenchError, match="n0·sin"):
            optics.angle_shift_factor(80.0, 1.2, 1.52)


class TestAbsorbingGlass:
    def test_published_example(self):
        """T(1 mm) 59.8 % with P_d 0.911 -> 36.1 % at 2.2 mm."""
        # Smith, Modern Optical Engineering, Eqs. 10.2-10.6; SCHOTT TIE-35 worked example (docs/methods.md §14)
        n = 1.55
        assert round(float(optics.reflection_factor(n)), 3) == 0.911
        tau1 = 0.598 / optics.reflection_factor(n)
        assert round(float(tau1), 3) == 0.656
        tau22 = optics.internal_transmittance_at([tau1], 1.0, 2.2)
        assert round(float(tau22[0]), 3) == 0.396
        T = optics.glass_transmittance([0.598], 1.0, 2.2, n)
        assert round(float(T[0]) * 100, 1) == 36.1

    def test_reflection_factor_from_fresnel(self):
        """P_d = (1−R)/(1+R) with R = ((n−1)/(n+1))² (Smith Eq. 10.2 with τ = 1)."""
        n = np.array([1.45, 1.52, 1.9])
        R = ((n - 1) / (n + 1)) ** 2
        np.testing.assert_allclose(optics.reflection_factor(n), (1 - R) / (1 + R), rtol=1e-14)

    def test_exact_is_sum_of_multiple_reflections(self):
        """Exact T = (1−R)²τ Σ (R²τ²)^k, the incoherent sum of the plate's reflections."""
        n, tau = 1.6, np.linspace(0.05, 1.0, 20)
        R = ((n - 1) / (n + 1)) ** 2
        series = sum((1 - R) ** 2 * tau * (R * R * tau * tau) ** k for k in range(60))
        T_exact = optics.glass_transmittance(series, 1.0, 1.0, n, reflection="exact")
        np.testing.assert_allclose(T_exact, series, rtol=1e-12)
        T2 = optics.glass_transmittance(series, 1.0, 3.0, n, reflection="exact")
        expected = sum((1 - R) ** 2 * tau ** 3 * (R * R * tau ** 6) ** k for k in range(60))
        np.testing.assert_allclose(T2, expected, rtol=1e-12)

    def test_models_agree_roughly(self):
        """The P_d shortcut is within 0.5 % (absolute) of the exact form for n 1.52."""
        T = np.linspace(0.05, 0.9, 30)
        a = optics.glass_transmittance(T, 1.0, 2.5, 1.52, reflection="approx")
        e = optics.glass_transmittance(T, 1.0, 2.5, 1.52, reflection="exact")
        assert np.max(np.abs(a - e)) < 0.005

    def test_batch_thickness(self):
        """Thicknesses (2, 3) give curves (2, 3, n); each row is the one-thickness curve."""
        T = np.linspace(0.1, 0.9, WL.size)
        d = np.array([[0.5, 1.0, 2.0], [3.0, 4.0, 5.0]])
        out = optics.glass_transmittance(T, 1.0, d, 1.52)
        assert out.shape == (2, 3, WL.size)
        np.testing.assert_allclose(out[1, 2], optics.glass_transmittance(T, 1.0, 5.0, 1.52))
        np.testing.assert_allclose(out[0, 1], T, rtol=1e-14)

    def test_bad_inputs(self):
        """Out-of-range curves, thicknesses and impossible transmittances are errors."""
        with pytest.raises(WorkbenchError, match="0-1"):
            optics.glass_transmittance([1.2], 1.0, 2.0)
        with pytest.raises(WorkbenchError, match="> 0 mm"):
            optics.glass_transmittance([0.5], 1.0, 0.0)
        with pytest.raises(WorkbenchError, match="internal transmittance"):
            optics.glass_transmittance([0.99], 1.0, 2.0, 1.52)


class TestEdges:
    @pytest.mark.parametrize("shape", optics.EDGE_SHAPES)
    def test_ten_ninety_width(self, shape):
        """The 10 % and 90 % points lie width/2 either side of the centre; 50 % at the centre."""
        x = np.array([590.0, 600.0, 610.0])
        T = optics.edge(x, 600.0, 20.0, shape=shape)
        np.testing.assert_allclose(T, [0.1, 0.5, 0.9], atol=1e-12)
        S = optics.edge(x, 600.0, 20.0, kind="short-pass", shape=shape)
        np.testing.assert_allclose(S, [0.9, 0.5, 0.1], atol=1e-12)

    def test_levels(self):
        """In-band and blocking levels are reached far from the edge."""
        T = optics.edge(WL, 550.0, 10.0, pass_level=0.95, block_level=0.01)
        assert abs(T[0] - 0.01) < 1e-9 and abs(T[-1] - 0.95) < 1e-9

    def test_band_pass_and_batch(self):
        """A band-pass peaks between its edges; parameters (2,) give curves (2, n)."""
        B = optics.band_pass(WL, np.array([480.0, 500.0]), 600.0, 10.0)
        assert B.shape == (2, WL.size)
        assert B[0, WL == 540][0] > 0.999 and B[0, WL == 400][0] < 1e-6
        assert abs(B[1, WL == 500][0] - 0.5) < 1e-6

    def test_nd_and_colour_correction(self):
        """ND: 10^-D. Mired shift: a Wien-law source at T₁ becomes one at T₂ (CIE 15:2004 c₂)."""
        np.testing.assert_allclose(optics.neutral_density(WL, 0.3), 10 ** -0.3)
        c2 = 1.4388e7
        T1, T2 = 3200.0, 5600.0
        mired = 1e6 * (1 / T2 - 1 / T1)
        wien = lambda T: WL ** -5 * np.exp(-c2 / (WL * T))  # noqa: E731
        out = wien(T1) * optics.colour_correction(WL, mired, peak_level=0.8)
        ratio = out / wien(T2)
        np.testing.assert_allclose(ratio / ratio[0], 1.0, rtol=1e-12)
        assert np.isclose(optics.colour_correction(WL, mired, peak_level=0.8).max(), 0.8)


class TestSplitter:
    @pytest.mark.parametrize("order", splitter.SPLITTER_ORDERS)
    @pytest.mark.parametrize("aoi", [0.0, 10.0, 25.0, 45.0])
    @pytest.mark.parametrize("f_number", [None, 1.4, 4.0])
    @pytest.mark.parametrize("loss", [0.0, 0.03])
    def test_energy_conservation(self, order, aoi, f_number, loss):
        """The three paths plus the stated loss equal the input at every wavelength and angle."""
        # common practice: a lossless dielectric splitter conserves energy
        paths, lost = splitter.dichroic_splitter(
            WL, blue_green_nm=np.array([500.0, 520.0]), green_red_nm=590.0,
            blue_green_aoi_deg=aoi, green_red_aoi_deg=aoi / 2, n_eff_s=1.9, n_eff_p=1.6,
            medium_index=1.52 if aoi < 40 else 1.0, f_number=f_number, loss=loss, order=order)
        assert paths.shape == (2, 3, WL.size) and lost.shape == (2, WL.size)
        np.testing.assert_allclose(paths.sum(axis=-2) + lost, 1.0, atol=1e-13)
        if loss == 0:
            np.testing.assert_array_equal(lost, 0.0)
        else:
            assert np.all(lost >= loss - 1e-15) and np.all(lost <= 2 * loss)
        assert np.all(paths >= 0)

    def test_paths_alone(self):
        """with_lost=False gives the same paths bit for bit and None for the loss."""
        kw = dict(blue_green_nm=np.array([500.0, 520.0]), green_red_nm=590.0, blue_green_aoi_deg=25.0,
                  green_red_aoi_deg=12.0, n_eff_s=1.9, n_eff_p=1.6, medium_index=1.52, f_number=2.0, loss=0.01)
        paths, lost = splitter.dichroic_splitter(WL, **kw)
        alone, none = splitter.dichroic_splitter(WL, **kw, with_lost=False)
        assert none is None and np.array_equal(alone, paths)

    def test_chief_ray_shift(self):
        """Without a cone the blue path is 50 % at the shifted edge λ₀√(1 − (n₀ sinθ/n_eff)²)."""
        lam = float(optics.angle_shifted_wavelength(520.0, 25.0, 1.8, 1.52))
        paths, _ = splitter.dichroic_splitter(
            np.array([lam - 1, lam, lam + 1]), blue_green_nm=520.0, green_red_nm=640.0,
            blue_green_aoi_deg=25.0, medium_index=1.52, n_eff_s=1.8)
        assert abs(paths[2, 1] - 0.5) < 1e-6  # B path
        assert paths[2, 0] > 0.5 > paths[2, 2]

    def test_cone_average_tends_to_chief_ray(self):
        """A slow lens (f/64) gives almost the chief-ray split; a fast one moves the edge further."""
        kw = dict(blue_green_nm=520.0, green_red_nm=600.0, blue_green_aoi_deg=0.0,
                  green_red_aoi_deg=0.0, n_eff_s=1.8)
        chief, _ = splitter.dichroic_splitter(WL, **kw)
        slow, _ = splitter.dichroic_splitter(WL, **kw, f_number=64.0)
        fast, _ = splitter.dichroic_splitter(WL, **kw, f_number=1.0)
        assert np.max(np.abs(slow - chief)) < 1e-3
        # at normal incidence every cone ray is tilted: the edge moves to the blue
        i = np.argmin(np.abs(WL - 520.0))
        assert fast[2, i] < chief[2, i]

    def test_quadrature(self):
        """Pupil-area weights: Σw = 1, Σw r² = 1/2, Σw r⁴ = 1/3 (uniform disc moments)."""
        r, phi, w = splitter.cone_quadrature(4, 8)
        assert np.isclose(w.sum(), 1.0)
        assert np.isclose((w * r ** 2).sum(), 0.5)
        assert np.isclose((w * r ** 4).sum(), 1 / 3)
        assert np.isclose((w * np.cos(phi)).sum(), 0.0, atol=1e-15)

    def test_equal_s_and_p_is_unpolarised(self):
        """n_eff_p equal to n_eff_s gives the same split as n_eff alone."""
        kw = dict(blue_green_nm=520.0, green_red_nm=600.0, blue_green_aoi_deg=20.0,
                  n_eff_s=1.7, f_number=2.0)
        a, _ = splitter.dichroic_splitter(WL, **kw)
        b, _ = splitter.dichroic_splitter(WL, **kw, n_eff_p=1.7)
        np.testing.assert_allclose(a, b, rtol=1e-14)

    def test_order(self):
        """Blue first and red first give the same bands for sharp, separated edges at 0°."""
        kw = dict(blue_green_nm=500.0, green_red_nm=600.0, blue_green_width_nm=2.0,
                  green_red_width_nm=2.0)
        a, _ = splitter.dichroic_splitter(WL, **kw, order="blue-first")
        b, _ = splitter.dichroic_splitter(WL, **kw, order="red-first")
        np.testing.assert_allclose(a, b, atol=1e-9)
        with pytest.raises(WorkbenchError, match="order"):
            splitter.dichroic_splitter(WL, **kw, order="green-first")
