"""Primaries: named sets, the SMPTE RP 177 matrix, luminance coefficients, drive levels."""

import colour
import numpy as np
import pytest

from workbench.colorimetry.coordinates import XYZ_to_xy, xy_to_XYZ
from workbench.colorimetry.emitters import Band, Emitter, emitter_spectra
from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import (
    PRIMARIES,
    drive_levels_for_white,
    luminance_coefficients,
    matrix_RGB_to_XYZ_RP177,
    matrix_XYZ_to_RGB_RP177,
    primaries_from_emitters,
    primaries_from_xy,
    primaries_named,
    white_chromaticity,
)
from workbench.model.spectra import Spectra, grid

# colour-science's entry for each named set (the reference library).


COLOUR_NAMES = {
    "ITU-R BT.709": "ITU-R BT.709",
    "ITU-R BT.2020": "ITU-R BT.2020",
    "EBU Tech 3213": "EBU Tech. 3213-E",
    "NTSC 1953": "NTSC (1953)",
    "SMPTE RP 431-2": "DCI-P3",
    "SMPTE C": "SMPTE C",
}


def _emitters(wl, units="relative"):
    """A synthetic open emitter set: three Gaussian bands (not any product's data)."""
    em = [Emitter("R", (Band("gaussian", 620, 30, 1.0),)),
          Emitter("G", (Band("gaussian", 535, 40, 0.9),)),
          Emitter("B", (Band("gaussian", 455, 25, 1.3),))]
    s = emitter_spectra(em, wl)
    return Spectra(s.wavelengths, s.values, s.names, kind="emission", units=units)


class TestMatrixRP177:
    @pytest.mark.parametrize("name", list(PRIMARIES))
    def test_against_colour_science(self, name):
        """NPM equals colour.normalised_primary_matrix for every named set (reference library)."""
        p = PRIMARIES[name]
        ref = colour.normalised_primary_matrix(p.xy, p.white_xy)
        np.testing.assert_allclose(matrix_RGB_to_XYZ_RP177(p.xy, p.white_xy), ref, atol=1e-12)

    def test_bt709_npm(self):
        """BT.709 NPM against colour's BT.709 colourspace matrix (SMPTE RP 177-1993; colour-science 0.4.7; docs/methods.md §5)."""
        ref = colour.RGB_COLOURSPACES["ITU-R BT.709"].matrix_RGB_to_XYZ
        np.testing.assert_allclose(PRIMARIES["ITU-R BT.709"].matrix_RGB_to_XYZ, ref, atol=1e-4)

    def test_white_maps_to_white(self):
        """RGB (1, 1, 1) → the white's chromaticity with Y = 1 (SMPTE RP 177 normalisation)."""
        for p in PRIMARIES.values():
            XYZ = p.matrix_RGB_to_XYZ @ np.ones(3)
            assert XYZ[1] == pytest.approx(1.0, abs=1e-12)
            np.testing.assert_allclose(XYZ_to_xy(XYZ), p.white_xy, atol=1e-12)

    def test_inverse_round_trip(self):
        """XYZ → RGB is the inverse of RGB → XYZ."""
        p = PRIMARIES["ITU-R BT.2020"]
        np.testing.assert_allclose(
            matrix_XYZ_to_RGB_RP177(p.xy, p.white_xy) @ p.matrix_RGB_to_XYZ, np.eye(3), atol=1e-12)

    def test_primaries_map_to_their_chromaticity(self):
        """Each unit RGB vector has its primary's chromaticity."""
        p = PRIMARIES["SMPTE RP 431-2"]
        np.testing.assert_allclose(XYZ_to_xy(p.matrix_RGB_to_XYZ.T), p.xy, atol=1e-12)

    def test_collinear_primaries(self):
        """Primaries on one line are refused with a message."""
        with pytest.raises(WorkbenchError, match="must not lie on one line"):
            matrix_RGB_to_XYZ_RP177([[0.1, 0.1], [0.2, 0.2], [0.3, 0.3]], [0.3127, 0.329])

    def test_bad_shape(self):
        """Wrong shape names what was expected and what came."""
        with pytest.raises(WorkbenchError, match=r"shaped \(3, 2\) or 6 numbers \(got shape \(4,\)\)"):
            matrix_RGB_to_XYZ_RP177([0.1, 0.2, 0.3, 0.4], [0.3127, 0.329])

    def test_bad_white(self):
        """A white with y = 0 is refused."""
        with pytest.raises(WorkbenchError, match=r"white must have x >= 0, y > 0"):
            matrix_RGB_to_XYZ_RP177(PRIMARIES["ITU-R BT.709"].xy, [0.3, 0.0])

    def test_outside_diagram(self):
        """x + y > 1 is not a chromaticity."""
        with pytest.raises(WorkbenchError, match=r"x \+ y <= 1 \(got x=0.8, y=0.3\)"):
            matrix_RGB_to_XYZ_RP177([[0.8, 0.3], [0.3, 0.6], [0.15, 0.06]], [0.3127, 0.329])


class TestLuminanceCoefficients:
    def test_ntsc_illuminant_c(self):
        """NTSC 1953 + C → 0.299/0.587/0.114 to three decimals (ITU-R BT.601-7 § 2.5.1)."""
        p = PRIMARIES["NTSC 1953"]
        np.testing.assert_array_equal(p.luminance_coefficients.round(3), [0.299, 0.587, 0.114])

    def test_ntsc_with_tabulated_c(self):
        """The same with --white C from colour's table (ITU-R BT.601-7 § 2.5.1)."""
        p = primaries_from_xy(PRIMARIES["NTSC 1953"].xy, "C")
        np.testing.assert_array_equal(p.luminance_coefficients.round(3), [0.299, 0.587, 0.114])

    def test_rule_of_thumb(self):
        """Y ≈ 0.30 R + 0.59 G + 0.11 B for NTSC primaries (common practice)."""
        np.testing.assert_allclose(PRIMARIES["NTSC 1953"].luminance_coefficients, [0.30, 0.59, 0.11], atol=5e-3)

    def test_bt709(self):
        """BT.709 → 0.2126/0.7152/0.0722 (ITU-R BT.709-6, Part 2, item 3.2)."""
        np.testing.assert_allclose(PRIMARIES["ITU-R BT.709"].luminance_coefficients,
                                   [0.2126, 0.7152, 0.0722], atol=5e-5)

    def test_bt2020(self):
        """BT.2020 → 0.2627/0.6780/0.0593 (ITU-R BT.2020-2, Table 4)."""
        np.testing.assert_allclose(PRIMARIES["ITU-R BT.2020"].luminance_coefficients,
                                   [0.2627, 0.6780, 0.0593], atol=5e-5)

    def test_against_colour_luminance_equation(self):
        """EBU set against colour.RGB_luminance_equation's coefficients (reference library)."""
        p = PRIMARIES["EBU Tech 3213"]
        cs = colour.RGB_COLOURSPACES["EBU Tech. 3213-E"]
        ref = colour.normalised_primary_matrix(cs.primaries, cs.whitepoint)[1]
        np.testing.assert_allclose(luminance_coefficients(p.xy, p.white_xy), ref, atol=1e-12)

    def test_sum_to_one(self):
        """K_R + K_G + K_B = 1 for every set (Y of the white = 1)."""
        for p in PRIMARIES.values():
            assert p.luminance_coefficients.sum() == pytest.approx(1.0, abs=1e-12)


class TestNamedSets:
    @pytest.mark.parametrize("name", list(PRIMARIES))
    def test_chromaticities_match_colour(self, name):
        """Transcribed chromaticities equal colour-science's (reference library)."""
        np.testing.assert_allclose(PRIMARIES[name].xy, colour.RGB_COLOURSPACES[COLOUR_NAMES[name]].primaries,
                                   atol=1e-12)

    def test_whites(self):
        """Whites: D65 0.3127/0.3290 (BT.709-6), C 0.310/0.316 rounded (FCC 1953), DCI 0.314/0.351 (RP 431-2)."""
        np.testing.assert_allclose(PRIMARIES["ITU-R BT.709"].white_xy, [0.3127, 0.3290])
        np.testing.assert_array_equal(PRIMARIES["NTSC 1953"].white_xy.round(3), [0.310, 0.316])
        np.testing.assert_allclose(PRIMARIES["SMPTE RP 431-2"].white_xy, [0.314, 0.351])

    @pytest.mark.parametrize("alias,name", [("ITU-R-BT.709", "ITU-R BT.709"), ("bt2020", "ITU-R BT.2020"),
                                             ("DCI-P3", "SMPTE RP 431-2"), ("smpte-c", "SMPTE C"),
                                             ("EBU Tech. 3213", "EBU Tech 3213"), ("ntsc-1953", "NTSC 1953")])
    def test_aliases(self, alias, name):
        """Loose spellings find the set."""
        assert primaries_named(alias) is PRIMARIES[name]

    def test_unknown(self):
        """An unknown name lists the known ones."""
        with pytest.raises(WorkbenchError, match=r"unknown primaries set 'P9'; expected one of ITU-R BT.709"):
            primaries_named("P9")

    def test_frozen(self):
        """A Primaries value cannot be changed."""
        p = PRIMARIES["ITU-R BT.709"]
        with pytest.raises(ValueError):
            p.xy[0, 0] = 0.7


class TestAdditiveMixing:
    def test_equal_drive_gives_white(self):
        """Equal drive of R, G, B gives the white point (common practice)."""
        for p in PRIMARIES.values():
            np.testing.assert_allclose(XYZ_to_xy(p.matrix_RGB_to_XYZ @ [0.6, 0.6, 0.6]), p.white_xy, atol=1e-12)

    @pytest.mark.parametrize("rgb,edge", [((1, 1, 0), (0, 1)), ((1, 0, 1), (0, 2)), ((0, 1, 1), (1, 2))])
    def test_secondaries_on_edges(self, rgb, edge):
        """Yellow lies on the R-G edge, magenta on R-B, cyan on G-B (common practice)."""
        p = PRIMARIES["ITU-R BT.709"]
        xy = XYZ_to_xy(p.matrix_RGB_to_XYZ @ np.array(rgb, float))
        a, b = p.xy[edge[0]], p.xy[edge[1]]
        cross = (b - a)[0] * (xy - a)[1] - (b - a)[1] * (xy - a)[0]
        assert abs(cross) < 1e-12
        t = np.dot(xy - a, b - a) / np.dot(b - a, b - a)
        assert 0 < t < 1


class TestWhite:
    def test_named(self):
        """D65 and C from colour's CIE table (CIE 15:2004 Table T.3 via colour)."""
        tab = colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]
        np.testing.assert_allclose(white_chromaticity("D65")[1], tab["D65"])
        np.testing.assert_allclose(white_chromaticity("c")[1], tab["C"])

    def test_ten_degree(self):
        """10° observer whites differ (colour's CIE 1964 table)."""
        tab = colour.CCS_ILLUMINANTS["CIE 1964 10 Degree Standard Observer"]
        np.testing.assert_allclose(white_chromaticity("D65", observer="10")[1], tab["D65"])

    def test_text_pair(self):
        """'x,y' text is read as a chromaticity."""
        assert white_chromaticity("0.31,0.32")[1].tolist() == [0.31, 0.32]

    def test_unknown(self):
        """An unknown white says what is expected."""
        with pytest.raises(WorkbenchError, match="unknown white 'D99'"):
            white_chromaticity("D99")


class TestEmitters:
    def test_chromaticities_against_colour(self):
        """Emitter xy equals colour.sd_to_XYZ's chromaticity of each spectrum (reference library)."""
        wl = grid(380, 780, 5)
        s = _emitters(wl)
        p = primaries_from_emitters(s)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
        for i, v in enumerate(s.values):
            sd = colour.SpectralDistribution(dict(zip(wl, v)))
            ref = colour.XYZ_to_xy(colour.sd_to_XYZ(sd, cmfs=cmfs, method="Integration"))
            np.testing.assert_allclose(p.xy[i], ref, atol=1e-6)

    def test_drive_levels_reach_white(self):
        """Driven emitters give the white at the asked luminance (additive mixing, common practice)."""
        wl = grid(380, 780, 5)
        s = _emitters(wl, units="W·sr⁻¹·m⁻²·nm⁻¹")
        d = drive_levels_for_white(s, "D65", 0.05)
        mix = d.drive @ s.values
        sd = colour.SpectralDistribution(dict(zip(wl, mix)))
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
        # Absolute: Y = 683 Σ S ȳ Δλ (CIE 15:2004); colour with k = 683.
        XYZ = colour.sd_to_XYZ(sd, cmfs=cmfs, method="Integration", k=683)
        np.testing.assert_allclose(XYZ, xy_to_XYZ(white_chromaticity("D65")[1], 0.05), rtol=2e-5)
        assert d.reachable and "cd/m²" in d.units

    def test_too_bright(self):
        """A luminance above what full drive gives is reported, not clipped."""
        s = _emitters(grid(380, 780, 5))
        d = drive_levels_for_white(s, "D65", 1e6)
        assert not d.reachable
        assert "needs more than the measured drive" in d.message

    def test_white_outside(self):
        """A white outside the emitters' triangle gives a negative level and says so."""
        s = _emitters(grid(380, 780, 5))
        d = drive_levels_for_white(s, "0.20,0.60", 1.0)
        assert not d.reachable and "outside the emitters' triangle" in d.message

    def test_needs_three(self):
        """Two spectra are refused with their names."""
        s = _emitters(grid(380, 780, 5))
        two = Spectra(s.wavelengths, s.values[:2], s.names[:2], kind="emission", units="relative")
        with pytest.raises(WorkbenchError, match=r"must hold 3 spectra, R, G, B in that order \(got 2: R, G\)"):
            primaries_from_emitters(two)

    def test_needs_emission(self):
        """Reflectance data are not emitters."""
        s = _emitters(grid(380, 780, 5))
        with pytest.raises(WorkbenchError, match="kind emission"):
            primaries_from_emitters(Spectra(s.wavelengths, s.values / 2, kind="reflectance"))

    def test_repr_and_dict(self):
        """Readable repr and a JSON-ready dict."""
        p = PRIMARIES["ITU-R BT.709"]
        assert "R (0.6400, 0.3300)" in repr(p)
        assert p.to_dict()["primaries_xy"]["G"] == [0.3, 0.6]
