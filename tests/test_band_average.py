"""Band averaging when coarsening: a triangular band-pass over each output step."""

import numpy as np
import pytest

from workbench.errors import WorkbenchError
from workbench.model.spectra import Spectra, band_matrix, coarsening_method, grid, resampling_matrix


class TestBandMatrix:
    def test_triangular_line_closed_form(self):
        """A triangular line (half-width 2 nm) under a 5 nm band at its peak: 0.346667."""
        wl = grid(500, 600, 0.5)
        line = np.maximum(0.0, 1 - np.abs(wl - 550) / 2)
        out = band_matrix(wl, grid(520, 580, 5)) @ line
        # closed form: 2∫0^2 (1 − u/2)(1 − u/5) du / ∫T = 2(2 − 1 − 0.4 + 8/30)/5 = 0.3466667 (by hand)
        assert out[6] == pytest.approx(2 * (2 - 1 - 0.4 + 8 / 30) / 5, rel=1e-12)
        # the neighbours at 545 and 555 nm see the line through the band's flanks
        # (by hand: ∫0^2 (1 − u/2)(u/5) du / 5 = (2/5 − 8/30)/5 = 0.0266667)
        assert out[5] == pytest.approx((2 / 5 - 8 / 30) / 5, rel=1e-12)

    def test_sine_against_its_transform(self):
        """A sine of period 40 nm at 0.5 nm, averaged to 5 nm, is damped by sinc²(5/40)."""
        wl = grid(380, 780, 0.5)
        P = 40.0
        k = 2 * np.pi / P
        target = grid(400, 760, 5)
        out = band_matrix(wl, target) @ (np.sin(k * wl) + 2)
        # closed form: the triangle (FWHM w) is the Fourier pair of sinc²: average = sin(kλ)·sinc²(w/P) + 2
        exact = np.sin(k * target) * np.sinc(5 / P) ** 2 + 2
        # bounded by the linear interpolant's error h²k²/8 (common practice, interpolation error bound)
        np.testing.assert_allclose(out, exact, atol=0.5 ** 2 * k ** 2 / 8)

    def test_constant_kept(self):
        """Rows sum to 1: a constant stays itself, even at the ends."""
        M = band_matrix(grid(380, 780, 0.5), grid(380, 780, 5))
        np.testing.assert_allclose(M.sum(axis=1), 1.0, rtol=1e-13)


class TestResampleBand:
    def test_note_and_refusal(self):
        """The note names the method; refining by band averaging is refused."""
        s = Spectra(grid(380, 780, 1), np.ones((1, 401)), ("x",), kind="emission")
        r = s.resample(grid(380, 780, 5), method="band")
        assert "triangular band-pass" in r.notes[-1]
        with pytest.raises(WorkbenchError) as e:
            resampling_matrix(grid(380, 780, 5), grid(380, 780, 1), method="band")
        assert str(e.value) == ("band averaging is for coarsening: the output step (1 nm) must be at least "
                                "the data's (5 nm); use interpolation (method='auto')")

    def test_coarsening_method(self):
        """Band only when asked and the data are at least as fine as the grid."""
        assert coarsening_method(grid(380, 780, 0.5), grid(380, 780, 5), "band") == "band"
        assert coarsening_method(grid(380, 780, 10), grid(380, 780, 5), "band") == "auto"
        assert coarsening_method(grid(380, 780, 0.5), grid(380, 780, 5)) == "auto"


class TestDesignGridResampling:
    def test_band_on_the_design_grid(self, tmp_path):
        """[grid] resampling = "band" averages a 0.5 nm curve over each 5 nm step."""
        from workbench.fileio.design_toml import load_design

        wl = grid(380, 780, 0.5)
        t = 0.5 + 0.4 * np.sin(2 * np.pi * wl / 30)
        (tmp_path / "fine.csv").write_text(
            "wavelength_nm,fine T\n" + "".join(f"{w:g},{v:.12f}\n" for w, v in zip(wl, t)), encoding="utf-8")
        (tmp_path / "d.toml").write_text(
            'schema = 1\nname = "fine"\n[grid]\nstart_nm = 400\nstop_nm = 700\nstep_nm = 5\n'
            'resampling = "band"\n[[chain]]\nname = "filter"\ntype = "measured"\nfile = "fine.csv"\n',
            encoding="utf-8")
        s = load_design(tmp_path / "d.toml").channel_sensitivities()
        ref = band_matrix(wl, grid(400, 700, 5)) @ np.round(t, 12)
        np.testing.assert_allclose(s.values[0], ref, rtol=1e-12)
        assert any("triangular band-pass" in n for n in s.notes)


class TestLightBand:
    def test_band_average_keeps_the_energy(self):
        """A 0.5 nm SPD averaged to 5 nm keeps its integral (Σ E Δλ) to the interpolant's accuracy."""
        from workbench.cli.commands.light import band_average

        wl = grid(360, 830, 0.5)
        v = np.exp(-0.5 * ((wl - 450) / 8) ** 2)
        s = band_average(Spectra(wl, v[None], ("lamp",), kind="emission", units="W/(m2 nm)"), 5.0)
        assert s.wavelengths[1] - s.wavelengths[0] == 5
        # a normalised triangle kernel preserves ∫E dλ away from the ends: 8·√(2π) (closed form of the Gaussian)
        assert float(s.values.sum() * 5) == pytest.approx(8 * np.sqrt(2 * np.pi), rel=1e-4)

    def test_band_on_coarser_data_is_refused_naming_the_file(self, tmp_path, capsys):
        """--band 1 on a 5 nm SPD is refused in one line naming the file and the steps (band averaging only coarsens, CIE 167)."""
        from workbench.cli.main import main

        p = tmp_path / "lamp.csv"
        p.write_text("wavelength_nm,lamp\n" + "".join(f"{w},1\n" for w in range(380, 785, 5)), encoding="utf-8")
        assert main(["light", str(p), "--band", "1"]) == 2
        out = capsys.readouterr()
        assert out.out == ""
        assert out.err.splitlines()[-1] == (f"error: {p}: --band 1 averages a finer export onto a 1 nm grid; expected "
                                            "steps of at most 1 nm (got steps up to 5 nm) — leave out --band")
        assert out.err.count("error:") == 1 and "Traceback" not in out.err
