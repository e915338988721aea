"""Parametric emitter bands and the bounded emitter-set fit."""

import json

import numpy as np
import pytest
from scipy.optimize import brentq

from workbench.colorimetry.coordinates import XYZ_to_xy
from workbench.colorimetry.emitters import (
    Band,
    Emitter,
    EmitterFit,
    MeasuredBand,
    band_values,
    emitter_spectra,
    fit_emitter_set,
)
from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import PRIMARIES, Primaries
from workbench.model.spectra import Spectra, grid
from workbench.colorimetry.tristimulus import emission_weights

WL = grid(380, 780, 1)


def _target_of(emitters):
    """Target primaries and mix luminance of a synthetic emitter set."""
    s = emitter_spectra(emitters, WL)
    XYZ = s.values @ emission_weights(WL).W
    return Primaries(XYZ_to_xy(XYZ), XYZ_to_xy(XYZ.sum(0)), "mix", "synthetic"), float(XYZ.sum(0)[1])


class TestBandShapes:
    @pytest.mark.parametrize("shape", ["gaussian", "gaussian-wavenumber"])
    def test_peak_and_fwhm(self, shape):
        """Maximum = amplitude at the peak; half-maximum points exactly width apart (definition)."""
        f = lambda x: band_values(shape, [x], 540.0, 40.0, 2.0)[0] - 1.0  # noqa: E731
        lo, hi = brentq(f, 450, 540), brentq(f, 540, 650)
        assert hi - lo == pytest.approx(40.0, abs=1e-9)
        assert band_values(shape, [540.0], 540.0, 40.0, 2.0)[0] == pytest.approx(2.0)
        fine = np.linspace(500, 580, 8001)
        assert fine[np.argmax(band_values(shape, fine, 540.0, 40.0))] == pytest.approx(540.0, abs=0.01)

    def test_gaussian_is_normal_density(self):
        """The 'gaussian' band is the normal density shape with σ = FWHM/(2√(2 ln 2)) (scipy.stats)."""
        from scipy.stats import norm

        sigma = 30 / (2 * np.sqrt(2 * np.log(2)))
        ref = norm.pdf(WL, 600, sigma) / norm.pdf(600, 600, sigma)
        np.testing.assert_allclose(band_values("gaussian", WL, 600, 30), ref, atol=1e-12)

    def test_wavenumber_band_has_red_tail(self):
        """The wavenumber Gaussian reaches half maximum farther on the long-wave side."""
        f = lambda x: band_values("gaussian-wavenumber", [x], 540.0, 60.0)[0] - 0.5  # noqa: E731
        lo, hi = brentq(f, 400, 540), brentq(f, 540, 700)
        assert hi - 540 > 540 - lo

    def test_broadcast(self):
        """Parameters broadcast to a leading shape: (2,) peaks → (2, n)."""
        assert band_values("gaussian", WL, [450, 600], 30).shape == (2, WL.size)

    def test_unknown_shape(self):
        """An unknown shape names the choices."""
        with pytest.raises(WorkbenchError, match="band shape must be one of gaussian, gaussian-wavenumber"):
            Band("lorentz", 500, 30)

    def test_start_outside_bounds(self):
        """A starting value outside its bounds is refused, not clamped."""
        with pytest.raises(WorkbenchError, match="peak_nm = 615 must lie within its bounds 580-610"):
            Band("gaussian", 615, 30, peak_bounds=(580, 610))


class TestFit:
    @pytest.mark.slow  # a full emitter fit
    def test_recovers_synthetic_set(self):
        """Fit recovers the parameters of a set generated from known parameters (issue check)."""
        truth = [Emitter("R", (Band("gaussian-wavenumber", 625, 30, 1.0),)),
                 Emitter("G", (Band("gaussian", 530, 40, 0.8),)),
                 Emitter("B", (Band("gaussian", 455, 25, 1.5),))]
        target, Y = _target_of(truth)
        start = [Emitter("R", (Band("gaussian-wavenumber", 612, 42, 1.0),)),
                 Emitter("G", (Band("gaussian", 542, 30, 1.0),)),
                 Emitter("B", (Band("gaussian", 462, 18, 1.0),))]
        fit = fit_emitter_set(start, target, WL, white_Y=Y)
        assert fit.success, fit.message
        for e_fit, e_true in zip(fit.emitters, truth):
            b, t = e_fit.components[0], e_true.components[0]
            assert b.peak_nm == pytest.approx(t.peak_nm, abs=1e-4)
            assert b.width_nm == pytest.approx(t.width_nm, abs=1e-4)
            assert b.amplitude == pytest.approx(t.amplitude, rel=1e-5)
        assert fit.delta_uv_primaries.max() < 1e-8
        np.testing.assert_allclose(fit.spectra.values, emitter_spectra(truth, WL).values, atol=1e-5)
        # amplitudes 0.8-1.5 are far inside the default bounds (0, 1e6): nothing is at a bound
        assert fit.at_bounds == ()

    def test_inputs_not_mutated(self):
        """The starting emitters keep their values (results are new values)."""
        start = [Emitter("R", (Band("gaussian", 610, 30),)), Emitter("G", (Band("gaussian", 540, 40),)),
                 Emitter("B", (Band("gaussian", 460, 25),))]
        fit_emitter_set(start, PRIMARIES["ITU-R BT.709"], WL)
        assert start[0].components[0].peak_nm == 610

    @pytest.mark.slow  # a full emitter fit
    def test_measured_band_weights(self):
        """Weights of measured bands mixed into one emitter are recovered."""
        g1 = band_values("gaussian", WL, 515, 30)
        g2 = band_values("gaussian", WL, 560, 40)
        truth_w = (0.7, 0.4)
        truth = [Emitter("R", (Band("gaussian", 620, 25, 1.0),)),
                 Emitter("G", (MeasuredBand("g1", WL, g1, truth_w[0]), MeasuredBand("g2", WL, g2, truth_w[1]))),
                 Emitter("B", (Band("gaussian", 450, 20, 1.2),))]
        target, Y = _target_of(truth)
        start = [Emitter("R", (Band("gaussian", 615, 30, 1.0),)),
                 Emitter("G", (MeasuredBand("g1", WL, g1, 0.5), MeasuredBand("g2", WL, g2, 0.5))),
                 Emitter("B", (Band("gaussian", 455, 25, 1.0),))]
        fit = fit_emitter_set(start, target, WL, white_Y=Y)
        assert fit.success, fit.message
        w = [c.weight for c in fit.emitters[1].components]
        np.testing.assert_allclose(w, truth_w, rtol=1e-5)

    def test_measured_band_from_spectra(self):
        """A measured band taken from an emission Spectra by name."""
        s = Spectra(WL, band_values("gaussian", WL, 530, 30)[None], ("g",), kind="emission", units="relative")
        assert MeasuredBand.from_spectra(s, "g").spectrum.shape == WL.shape

    def test_measured_band_other_grid(self):
        """A measured band on another grid is refused (never resampled silently)."""
        mb = MeasuredBand("g", grid(380, 780, 5), np.ones(81))
        with pytest.raises(WorkbenchError, match="another wavelength grid"):
            mb.values(WL)

    def test_infeasible_target(self):
        """Red out of reach of the peak bounds ends with success False, a clear message and the closest result."""
        start = [Emitter("R", (Band("gaussian", 600, 30, 1.0, peak_bounds=(580, 610)),)),
                 Emitter("G", (Band("gaussian", 535, 35),)), Emitter("B", (Band("gaussian", 460, 20),))]
        fit = fit_emitter_set(start, PRIMARIES["ITU-R BT.2020"], WL)
        assert isinstance(fit, EmitterFit) and not fit.success
        assert "targets not reached: red primary misses by" in fit.message
        assert "red component 1 peak_nm = 610 (upper bound)" in fit.message
        assert "closest result" in fit.message
        assert fit.delta_uv_primaries[0] > 0.01
        assert fit.emitters[0].components[0].peak_nm == pytest.approx(610)

    def test_to_dict_is_json(self):
        """The result serialises to JSON."""
        start = [Emitter("R", (Band("gaussian", 610, 30),)), Emitter("G", (Band("gaussian", 540, 40),)),
                 Emitter("B", (Band("gaussian", 460, 25),))]
        fit = fit_emitter_set(start, PRIMARIES["ITU-R BT.709"], WL, max_nfev=50)
        d = json.loads(json.dumps(fit.to_dict()))
        assert len(d["delta_uv_primaries"]) == 3 and "message" in d
        assert "Δu′v′" in fit._repr_html_()

    def test_needs_three(self):
        """Two emitters are refused."""
        e = Emitter("R", (Band("gaussian", 610, 30),))
        with pytest.raises(WorkbenchError, match=r"emitters must be 3 Emitter values, R, G, B \(got 2\)"):
            fit_emitter_set([e, e], PRIMARIES["ITU-R BT.709"], WL)

    def test_all_fixed(self):
        """Nothing to fit is an error."""
        fx = ("peak_nm", "width_nm", "amplitude")
        em = [Emitter(n, (Band("gaussian", p, 30, fixed=fx),)) for n, p in (("R", 610), ("G", 540), ("B", 460))]
        with pytest.raises(WorkbenchError, match="no free parameters"):
            fit_emitter_set(em, PRIMARIES["ITU-R BT.709"], WL)
