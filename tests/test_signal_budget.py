"""The signal budget: photo-electrons per pixel from a scene by the camera equation, against a hand computation."""

import math

import numpy as np
import pytest

from workbench.analysis.signal_budget import scene_irradiance_scale, signal_budget
from workbench.errors import WorkbenchError
from workbench.model.spectra import grid


class TestSignalBudget:
    def test_hand_computation_555nm(self):
        """1000 lx of 555 nm light on an 18 % grey, f/2.8, 1/100 s, 5 µm pixels, lens 0.9, QE 0.5: 2641.6 e⁻."""
        wl = grid(550, 560, 1)
        S = (wl == 555).astype(float)                  # monochromatic light in the 555 nm band
        s = np.full((3, wl.size), 0.5)                 # QE 0.5 electrons per photon
        b = signal_budget(s, wl, S, lux=1000, f_number=2.8, exposure_s=0.01, pixel_pitch_um=5.0,
                          reflectance=0.18, lens_transmittance=0.9, full_well_e=20000, read_noise_e=0.0)
        # By hand. Scene: V(555 nm) = 1.0000 (CIE 15:2004 Table T.4), so E_e = 1000 / 683 = 1.464129 W/m² in the band.
        E_scene = 1000 / 683 / 1.0
        # Lambertian card: L = ρ E / π; camera equation on axis (ISO 12232, q = π T v cos⁴θ / 4, v = 1, θ = 0):
        # E_image = π L T / (4 N²) = ρ E T / (4 N²) = 0.18 · 1.464129 · 0.9 / (4 · 2.8²) = 0.00756403 W/m²
        E_image = math.pi * (0.18 * E_scene / math.pi) * 0.9 / (4 * 2.8 ** 2)
        energy = E_image * (5e-6) ** 2 * 0.01          # J on one 5 µm pixel in 0.01 s: 1.89101e-15 J
        photons = energy / (6.62607015e-34 * 299792458.0 / 555e-9)   # hc/λ = 3.57926e-19 J: 5283.2 photons
        electrons = 0.5 * photons                      # 2641.6 e⁻
        assert electrons == pytest.approx(2641.6, rel=1e-4)
        np.testing.assert_allclose(b.electrons, electrons, rtol=1e-9)
        np.testing.assert_allclose(b.snr_shot, math.sqrt(electrons), rtol=1e-9)   # Poisson: SNR = √N = 51.4
        assert not b.clipped.any()

    def test_scale_to_lux(self):
        """k·S integrates to the stated illuminance with 683 lm/W and V = ȳ."""
        from workbench.colorimetry.cie import cmfs_on

        wl = grid(380, 780, 5)
        S = np.linspace(1, 2, wl.size)
        k = scene_irradiance_scale(S, wl, 500)
        # CIE 15:2004: E_v = 683 Σ E_e(λ) V(λ) Δλ
        assert 683 * np.sum(k * S * cmfs_on(wl, "2").values[:, 1]) * 5 == pytest.approx(500, rel=1e-12)

    def test_read_noise_and_clipping(self):
        """Read noise lowers the SNR as N/√(N + σ²); electrons above the full well are flagged."""
        wl = grid(550, 560, 1)
        S = (wl == 555).astype(float)
        b = signal_budget(np.full((3, wl.size), 0.5), wl, S, lux=1000, f_number=2.8, exposure_s=0.01,
                          pixel_pitch_um=5.0, full_well_e=1000, read_noise_e=10)
        n = b.electrons[0]
        assert b.snr[0] == pytest.approx(n / math.sqrt(n + 100), rel=1e-12)
        assert b.clipped.all()

    @pytest.mark.parametrize("key, value, message", [
        ("f_number", 0.1, "f_number must be a number in (0.5, 1000] (got 0.1)"),
        ("lux", -5.0, "lux must be a number in (0, inf] (got -5.0)"),
        ("reflectance", 1.5, "reflectance must be a fraction in (0, 1] (got 1.5)"),
    ])
    def test_bad_inputs(self, key, value, message):
        """Bad inputs are refused in one line naming the key."""
        wl = grid(550, 560, 1)
        kw = dict(lux=1000.0, f_number=2.8, exposure_s=0.01, pixel_pitch_um=5.0, reflectance=0.18)
        kw[key] = value
        with pytest.raises(WorkbenchError) as e:
            signal_budget(np.ones((3, wl.size)), wl, np.ones(wl.size), **kw)
        assert str(e.value) == message


class TestNoiseReportUsesTheBudget:
    def _design(self, tmp_path, extra):
        import shutil

        from workbench import demo_dir

        shutil.copytree(demo_dir(), tmp_path / "d")
        p = tmp_path / "d" / "tern3_design.toml"
        p.write_text(p.read_text().replace("grey = 0.18", "grey = 0.18\n" + extra))
        return p

    def test_grey_electrons_from_the_budget(self, tmp_path):
        """With [noise] scene_lux etc. the noise report's grey electrons are the budget's, per illuminant."""
        from workbench.analysis.evaluator import DesignEvaluator
        from workbench.fileio.design_toml import load_design

        p = self._design(tmp_path, "scene_lux = 1000.0\nf_number = 2.8\nexposure_s = 0.02\npixel_pitch_um = 5.0\n"
                                   "qe_percent = 60.0")
        m = DesignEvaluator(load_design(p)).measures()
        for ill, b in m.signal.items():
            np.testing.assert_allclose(m.noise[ill]["signal_e"], b.electrons, rtol=1e-12)
        assert "signal budget" in m.methods["noise"]
        assert set(m.summary()["signal_budget"]) == set(m.illuminants)

    def test_relative_sensor_needs_qe(self, tmp_path):
        """A relative sensor curve without qe_percent: one line naming the key."""
        from workbench.analysis.evaluator import DesignEvaluator
        from workbench.fileio.design_toml import load_design

        p = self._design(tmp_path, "scene_lux = 1000.0\nf_number = 2.8\nexposure_s = 0.02\npixel_pitch_um = 5.0")
        with pytest.raises(WorkbenchError) as e:
            DesignEvaluator(load_design(p)).measures()
        assert str(e.value) == ("noise.qe_percent: the sensor curve is 'relative', not quantum efficiency 0-1; give "
                                "its peak quantum efficiency in percent for the signal budget")

    def test_all_four_or_none(self, tmp_path):
        """Part of the budget's keys is one design-file problem naming the missing ones."""
        from workbench.fileio.design_toml import load_design

        p = self._design(tmp_path, "scene_lux = 1000.0\nf_number = 2.8")
        with pytest.raises(WorkbenchError) as e:
            load_design(p)
        assert str(e.value).endswith("noise: expected all of scene_lux, f_number, exposure_s, pixel_pitch_um for "
                                     "the signal budget (missing exposure_s, pixel_pitch_um)")
