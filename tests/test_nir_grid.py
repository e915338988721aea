"""The design grid past the CIE tables (300-1100 nm): illuminants and colour-matching functions."""

import shutil

import colour
import numpy as np
import pytest

from workbench import demo_dir
from workbench.colorimetry.cie import cmfs_on, daylight_M1_M2, illuminant_A, illuminant_on
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import load_design
from workbench.model.spectra import grid


class TestIlluminantAPastTheTable:
    def test_formula_to_1100_nm(self):
        """A at 785-1100 nm equals its defining formula and colour-science's computation of it."""
        wl = grid(785, 1100, 5)
        # CIE 15:2004, Eq. 2.1: S_A(λ) = 100 (560/λ)^5 (e^(c2/(2848·560)) − 1)/(e^(c2/(2848·λ)) − 1)
        c2 = 1.435e7
        by_hand = 100 * (560 / wl) ** 5 * (np.exp(c2 / (2848 * 560)) - 1) / (np.exp(c2 / (2848 * wl)) - 1)
        _, t = illuminant_on(grid(300, 1100, 5), "A")
        np.testing.assert_allclose(t.values[-wl.size:], by_hand, rtol=1e-12)
        # colour-science 0.4.7 sd_CIE_standard_illuminant_A, the same formula
        ref = colour.sd_CIE_standard_illuminant_A(colour.SpectralShape(785, 1100, 5))
        np.testing.assert_allclose(illuminant_A(wl), ref.values, rtol=1e-9)
        assert "formula" in t.note

    def test_rises_into_the_infrared(self):
        """A at 1000 nm is about 2.9 times its value at 560 nm (a 2856 K Planckian)."""
        # CIE 15:2004, Eq. 2.1 at 1000 nm: 100 (0.56)^5 (e^8.9975 − 1)/(e^5.0386 − 1) = 290.43 (by hand)
        assert illuminant_A(np.array([1000.0]))[0] == pytest.approx(290.43, rel=1e-4)


class TestColourMatchingFunctionsPast830:
    @pytest.mark.parametrize("observer", ["2", "10"])
    def test_zero_past_the_table(self, observer):
        """x̄ȳz̄ are exactly zero at 835-1100 nm and tabulated at 830 nm."""
        wl = grid(380, 1100, 5)
        t = cmfs_on(wl, observer)
        assert (t.values[wl > 830] == 0).all()
        # CIE 15:2004, Tables T.4/T.5 end at 830 nm (via colour-science 0.4.7)
        name = {"2": "CIE 1931 2 Degree Standard Observer", "10": "CIE 1964 10 Degree Standard Observer"}
        np.testing.assert_allclose(t.values[wl == 830][0], colour.MSDS_CMFS[name[observer]][830], rtol=1e-12)
        assert "taken as zero outside 360-830 nm" in t.note


class TestDaylightM1M2:
    def test_d65(self):
        """M1, M2 at 6504 K are −0.294, −0.689."""
        # CIE 15:2004, § 3.1, Eqs. 3.3-3.5 (by hand: x_D 0.31272, y_D 0.32903)
        assert daylight_M1_M2(6504) == (-0.294, -0.689)

    def test_out_of_range(self):
        """A temperature outside 4000-25000 K is refused."""
        with pytest.raises(WorkbenchError, match=r"^daylight correlated colour temperature must be "
                           r"4000-25000 K \(got 3000\)$"):
            daylight_M1_M2(3000)


class TestIlluminantOnTheNirGrid:
    def test_d65_to_830_from_basis(self):
        """D65 at 785-830 nm equals colour-science's D series from the daylight basis."""
        _, t = illuminant_on(grid(300, 830, 5), "D65")
        # colour-science 0.4.7 sd_CIE_illuminant_D_series (CIE 15:2004, § 3.1) at 6504 K
        ref = colour.colorimetry.sd_CIE_illuminant_D_series(colour.temperature.CCT_to_xy_CIE_D(6504))
        np.testing.assert_allclose(t.values[-9:], ref.values[-9:], rtol=1e-12)
        assert "from the CIE daylight basis at 6504 K" in t.note

    def test_d65_past_830_refused(self):
        """D65 on a grid to 1000 nm is refused, asking for a file."""
        with pytest.raises(WorkbenchError) as e:
            illuminant_on(grid(380, 1000, 5), "D65")
        assert str(e.value) == (
            "illuminant D65 is defined over 300-830 nm (the CIE daylight basis, CIE 15:2004), but the "
            "grid is 380-1000 nm; give its SPD over the grid as a CSV file (an [[illuminants]] entry "
            "with file = ...)")

    def test_fluorescent_past_830_refused(self):
        """FL2 on a grid to 900 nm is refused."""
        with pytest.raises(WorkbenchError) as e:
            illuminant_on(grid(380, 900, 5), "FL2")
        assert str(e.value) == (
            "illuminant FL2 is tabulated over 380-780 nm (extended with its end values to 360-830 nm "
            "at most), but the grid is 380-900 nm; give its SPD over the grid as a CSV file (an "
            "[[illuminants]] entry with file = ...)")

    def test_equal_energy_anywhere(self):
        """E is 100 at every wavelength of 300-1100 nm."""
        # CIE 15:2004, § 3.1 (illuminant E: equal energy); colour-science's table holds 100
        _, t = illuminant_on(grid(300, 1100, 10), "E")
        assert (t.values == 100).all()


DEMO = demo_dir() / "tern3_design.toml"


def nir_variant(tmp_path, **replace):
    """The demo design with a 380-1000 nm grid and the given text replacements, beside the demo data."""
    text = DEMO.read_text().replace("stop_nm = 780", "stop_nm = 1000")
    for old, new in replace.items():
        assert old in text
        text = text.replace(old, new)
    shutil.copytree(DEMO.parent, tmp_path / "d")
    p = tmp_path / "d" / "nir.toml"
    p.write_text(text)
    return p


class TestChainModelRange:
    def test_element_short_of_the_grid(self, tmp_path):
        """A measured element not covering the grid is named with its file and the key that extends it."""
        (tmp_path / "short.csv").write_text("wavelength_nm,t\n400,0.9\n550,0.9\n700,0.9\n")
        (tmp_path / "d.toml").write_text(
            'schema = 1\nname = "short"\n[grid]\nstart_nm = 380\nstop_nm = 1000\nstep_nm = 10\n'
            '[[chain]]\nname = "nd"\ntype = "neutral-density"\ndensity = 0.3\n'
            '[[chain]]\nname = "ir-cut"\ntype = "measured"\nfile = "short.csv"\n')
        with pytest.raises(WorkbenchError) as e:
            load_design(tmp_path / "d.toml").channel_sensitivities()
        assert str(e.value) == (
            "chain[1] 'ir-cut' (short.csv): data cover 400-700 nm but the design grid is 380-1000 nm; "
            'set extrapolation = "constant" on this element to extend it (CIE 167)')

    def test_demo_chain_reaches_1000_nm(self, tmp_path):
        """The demo's lens, IR cut, glasses and sensor carry their curves to 1000 nm."""
        s = load_design(nir_variant(tmp_path)).channel_sensitivities()
        assert s.wavelengths[-1] == 1000 and np.isfinite(s.values).all()
        assert (s.values[:, s.wavelengths > 700] > 0).any()


class TestDesignEntriesRange:
    def test_daylight_past_830_refused(self, tmp_path):
        """A CIE D65 entry on a 1000 nm grid names the entry and asks for a file."""
        d = load_design(nir_variant(tmp_path))
        with pytest.raises(WorkbenchError) as e:
            d.illuminant_values("daylight")
        assert str(e.value).startswith("illuminants[2] 'daylight': illuminant D65 is defined over 300-830 nm")

    def test_file_illuminant_short_of_the_grid(self, tmp_path):
        """An SPD file not covering the grid names the entry, its file and the extrapolation key."""
        d = load_design(nir_variant(tmp_path))
        with pytest.raises(WorkbenchError) as e:
            d.illuminant_values("stage-led")
        assert str(e.value) == (
            "illuminants[0] 'stage-led' (luminaire_led_export.csv): data cover 380-780 nm but the design "
            'grid is 380-1000 nm; set extrapolation = "constant" on this entry to extend it (CIE 167)')

    def test_sample_set_short_of_the_grid(self, tmp_path):
        """A sample set not covering the grid names the entry and the key; with the key it is extended."""
        p = nir_variant(tmp_path)
        with pytest.raises(WorkbenchError) as e:
            load_design(p).sample_set("ces")
        assert str(e.value) == (
            "samples[1] 'ces' (cie-224): data cover 380-780 nm but the design grid is 380-1000 nm; "
            'set extrapolation = "constant" on this entry to extend it (CIE 167)')
        p = nir_variant(tmp_path / "b", **{'source = "cie-224"': 'source = "cie-224"\nextrapolation = "constant"'})
        s = load_design(p).sample_set("ces")
        assert (s.values[:, -1] == s.values[:, s.wavelengths == 780][:, 0]).all()
        assert any("constant" in n for n in s.notes)


class TestEdgeSampling:
    def test_coarse_grid_warns(self, tmp_path):
        """A 10 nm grid under an 8 nm edge warns once, naming the element, the key and the step to use."""
        import warnings

        from workbench.optics.chain import CoarseGridWarning, check_edge_sampling

        (tmp_path / "d.toml").write_text(
            'schema = 1\nname = "sharp"\n[grid]\nstart_nm = 400\nstop_nm = 700\nstep_nm = 10\n'
            '[[chain]]\nname = "edge"\ntype = "short-pass"\ncenter_nm = 650\n'
            'width_nm = { value = 8.0, min = 4.0, max = 40.0, free = true }\n', encoding="utf-8")
        d = load_design(tmp_path / "d.toml")
        assert check_edge_sampling(d) == (
            "grid.step_nm = 10 nm leaves fewer than 2 grid points across the narrowest edge, chain[0] "
            "'edge'.width_nm = 8 nm (10-90 %); use step_nm ≤ 4 nm for edges this sharp")
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            d.model()
        assert [w.category for w in caught] == [CoarseGridWarning]

    @pytest.mark.slow  # a whole fit with its report, in a process of its own
    def test_command_line_shows_it_once(self, tmp_path):
        """The fit's stages (fit, report) each raise the coarse-grid warning; the command prints it once.

        The demo with its edge widths allowed down to 8 nm (its bounds stop at
        10 nm so that its 5 nm grid keeps 2 points across every edge): the
        fit drives the blue trim's width to 8 nm.
        """
        import shutil
        import subprocess
        import sys

        folder = tmp_path / "demo"
        shutil.copytree(DEMO.parent, folder)
        design = folder / DEMO.name
        text = design.read_text(encoding="utf-8")
        assert text.count("min = 10.0, max = 100.0") == 3
        design.write_text(text.replace("min = 10.0, max = 100.0", "min = 8.0, max = 100.0"), encoding="utf-8")
        run = subprocess.run([sys.executable, "-m", "workbench", "fit", str(design), "--out", str(tmp_path / "o"),
                              "--quiet"], capture_output=True, text=True, timeout=600)
        assert run.returncode == 0, run.stderr[-500:]
        warned = [line for line in run.stderr.splitlines() if line.startswith("warning:")]
        assert warned == ["warning: CoarseGridWarning: grid.step_nm = 5 nm leaves fewer than 2 grid points across "
                          "the narrowest edge, chain[7] 'blue-trim'.width_nm = 8 nm (10-90 %); use step_nm ≤ 4 nm "
                          "for edges this sharp"]

    def test_demo_grid_is_fine(self):
        """The demo's 5 nm grid samples its narrowest edge (18 nm) with 3.6 points: no warning."""
        from workbench.optics.chain import check_edge_sampling

        assert check_edge_sampling(load_design(DEMO)) is None

    def test_fitted_demo_grid_is_fine(self, fitted_demo):
        """The fitted demo keeps 2 grid points across its sharpest edge: its width bounds stop at 10 nm, twice the step."""
        from workbench.optics.chain import check_edge_sampling

        design = load_design(fitted_demo.design_path)
        assert design.grid.step_nm == 5  # the demo's grid
        assert check_edge_sampling(design) is None
