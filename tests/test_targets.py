"""Target colour-matching functions: inverse RP 177 matrix applied to the CIE functions."""

import colour
import numpy as np
import pytest

from workbench.colorimetry.emitters import Band, Emitter, emitter_spectra
from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import PRIMARIES, drive_levels_for_white, primaries_from_emitters
from workbench.model.spectra import grid
from workbench.colorimetry.targets import RGB_of_emission, primaries_XYZ, target_cmfs

CMFS = {"2": "CIE 1931 2 Degree Standard Observer", "10": "CIE 1964 10 Degree Standard Observer"}


def _colour_cmfs(wl, observer):
    cm = colour.MSDS_CMFS[CMFS[observer]]
    return np.array([cm[w] for w in wl])


class TestTargetCMFs:
    def test_kind_and_shape(self):
        """Three sensitivity curves r̄ ḡ b̄ on the asked grid."""
        t = target_cmfs(PRIMARIES["ITU-R BT.709"], grid(380, 780, 5))
        assert t.kind == "sensitivity" and t.names == ("r_bar", "g_bar", "b_bar")
        assert t.values.shape == (3, 81)

    @pytest.mark.parametrize("observer", ["2", "10"])
    def test_against_colour_matrix(self, observer):
        """r̄ḡb̄ = colour's BT.709 XYZ→RGB matrix applied to colour's x̄ȳz̄ (reference library)."""
        wl = grid(380, 780, 10)
        t = target_cmfs(PRIMARIES["ITU-R BT.709"], wl, observer)
        cs = colour.RGB_COLOURSPACES["ITU-R BT.709"]
        M = np.linalg.inv(colour.normalised_primary_matrix(cs.primaries, cs.whitepoint))
        np.testing.assert_allclose(t.values, M @ _colour_cmfs(wl, observer).T, atol=1e-12)

    def test_negative_lobes(self):
        """r̄ of BT.709 has its negative lobe in the blue-green, about 465-540 nm (common practice)."""
        wl = grid(380, 780, 5)
        r = target_cmfs(PRIMARIES["ITU-R BT.709"], wl)["r_bar"]
        assert r[(wl >= 465) & (wl <= 540)].max() < 0
        assert r[(wl > 580) & (wl < 640)].min() > 0

    @pytest.mark.parametrize("observer", ["2", "10"])
    def test_xyz_primaries_give_cie_functions(self, observer):
        """The CIE XYZ "primaries" (white E) give back x̄ȳz̄ (CIE 15:2004 § 7; colour tables)."""
        wl = grid(360, 830, 1)
        t = target_cmfs(primaries_XYZ(), wl, observer)
        np.testing.assert_allclose(t.values.T, _colour_cmfs(wl, observer), atol=1e-12)

    def test_observers_differ(self):
        """The 10° targets are not the 2° ones."""
        wl = grid(400, 700, 10)
        p = PRIMARIES["ITU-R BT.2020"]
        assert np.abs(target_cmfs(p, wl, "10").values - target_cmfs(p, wl, "2").values).max() > 0.05

    def test_not_primaries(self):
        """A plain array is refused."""
        with pytest.raises(WorkbenchError, match="primaries must be a Primaries"):
            target_cmfs(np.eye(3), grid(400, 700, 10))


class TestUnitResponses:
    def test_each_emitter_gives_its_unit_vector(self):
        """Each primary's own spectrum (driven for a white of Y = 1) integrates to a unit vector.

        Definition of the target functions (Luther condition for the display): RGB of
        emitter i at its white drive is e_i.
        """
        wl = grid(380, 780, 5)
        em = [Emitter("R", (Band("gaussian-wavenumber", 630, 25, 1.0),)),
              Emitter("G", (Band("gaussian", 530, 35, 1.0),)),
              Emitter("B", (Band("gaussian", 450, 20, 1.0),))]
        s = emitter_spectra(em, wl)
        p = primaries_from_emitters(s, white="D65")
        d = drive_levels_for_white(s, "D65", 1.0)
        rgb = RGB_of_emission(d.drive[:, None] * s.values, target_cmfs(p, wl))
        np.testing.assert_allclose(rgb, np.eye(3), atol=1e-12)

    def test_d65_spectrum_gives_white(self):
        """CIE D65 scaled to Y = 1 gives RGB ≈ (1, 1, 1) for BT.709 (its white is D65, BT.709-6).

        Tolerance 1e-3: the standard's white is D65 rounded to four digits.
        """
        wl = grid(380, 780, 5)
        d65 = colour.SDS_ILLUMINANTS["D65"]
        S = np.array([d65[w] for w in wl])
        t = target_cmfs(PRIMARIES["ITU-R BT.709"], wl)
        cm = _colour_cmfs(wl, "2")
        S = S / (S @ cm[:, 1] * 5)
        np.testing.assert_allclose(RGB_of_emission(S, t), [1, 1, 1], atol=1e-3)

    def test_grid_mismatch(self):
        """Values on another grid are refused."""
        t = target_cmfs(PRIMARIES["ITU-R BT.709"], grid(380, 780, 5))
        with pytest.raises(WorkbenchError, match="values have 41 wavelengths but the targets 81"):
            RGB_of_emission(np.ones(41), t)


class TestPlot:
    def test_plot(self):
        """Targets and CIE functions drawn on one axes, six curves, labelled axes."""
        from workbench.plots.chromaticity import plot_target_cmfs

        t = target_cmfs(PRIMARIES["ITU-R BT.709"], grid(380, 780, 5))
        ax = plot_target_cmfs(t)
        assert len(ax.get_lines()) == 7  # 3 targets, 3 CIE functions, the zero line
        assert "nm" in ax.get_xlabel()
