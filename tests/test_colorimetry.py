"""Chromaticity, CIELAB and CIEDE2000 against published values and colour-science."""

from pathlib import Path

import colour
import numpy as np
import pytest

from workbench.colorimetry.coordinates import (
    Lab_to_LCh,
    Lab_to_XYZ,
    XYZ_to_Lab,
    XYZ_to_uv_prime,
    XYZ_to_xy,
    delta_E_CIE2000,
    delta_uv_prime,
    uv_prime_to_xy,
    xy_to_uv_prime,
    xy_to_XYZ,
)
from workbench.errors import WorkbenchError

SHARMA = np.loadtxt(Path(__file__).parent / "data" / "sharma2005_ciede2000.csv", delimiter=",", skiprows=2)
D65 = np.array([95.047, 100.0, 108.883])


class TestDeltaE2000:
    def test_sharma_pairs(self):
        """All 34 pairs of Sharma, Wu & Dalal (2005), Table 1, to the printed 4 decimals."""
        # Sharma, Wu & Dalal (2005), Color Res. Appl. 30(1):21-30, Table 1
        dE = delta_E_CIE2000(SHARMA[:, 1:4], SHARMA[:, 4:7])
        np.testing.assert_allclose(dE, SHARMA[:, 7], atol=5e-5)

    def test_symmetric(self):
        """ΔE00 is symmetric in its arguments (Sharma et al. 2005 pairs, both ways)."""
        # Sharma, Wu & Dalal (2005): the table lists pairs 7/8 as the same pair reversed
        np.testing.assert_allclose(
            delta_E_CIE2000(SHARMA[:, 1:4], SHARMA[:, 4:7]), delta_E_CIE2000(SHARMA[:, 4:7], SHARMA[:, 1:4]), atol=1e-12
        )

    def test_matches_reference_library_random(self):
        """Random pairs agree with colour-science to 1e-10."""
        # colour-science 0.4.7 delta_E_CIE2000 as reference library
        rng = np.random.default_rng(4)
        a = rng.uniform([0, -100, -100], [100, 100, 100], (2000, 3))
        b = a + rng.normal(0, 8, a.shape)
        np.testing.assert_allclose(delta_E_CIE2000(a, b), colour.difference.delta_E_CIE2000(a, b), atol=1e-10)

    def test_shape_ladder_and_zero(self):
        """(3,), (6, 3) and (2, 3, 3) inputs give (), (6,), (2, 3); identical colours give 0."""
        a = SHARMA[:6, 1:4]
        assert delta_E_CIE2000(a[0], a[0]).shape == ()
        assert delta_E_CIE2000(a, a).shape == (6,)
        assert delta_E_CIE2000(a.reshape(2, 3, 3), a.reshape(2, 3, 3)).shape == (2, 3)
        assert (delta_E_CIE2000(a, a) == 0).all()

    def test_nan_propagates(self):
        """NaN in, NaN out (never a silent number)."""
        assert np.isnan(delta_E_CIE2000([np.nan, 0, 0], [50, 0, 0]))

    def test_wrong_shape(self):
        """Two components are refused with the shape in the message."""
        with pytest.raises(WorkbenchError, match=r"Lab_1 must have 3 components on the last axis \(got shape \(2,\)\)"):
            delta_E_CIE2000([1, 2], [1, 2, 3])


class TestChromaticity:
    def test_xy_of_D65_white(self):
        """D65 white XYZ (ASTM E308) gives x, y = 0.3127, 0.3290."""
        # ITU-R BT.709-6, Table 1 (D65 white 0.3127, 0.3290)
        np.testing.assert_allclose(XYZ_to_xy(D65), [0.3127, 0.3290], atol=5e-5)

    def test_uv_prime_matches_reference_library(self):
        """u′v′ from XYZ and from xy agree with colour-science."""
        # colour-science 0.4.7 XYZ_to_xy / xy_to_Luv_uv as reference library
        rng = np.random.default_rng(2)
        XYZ = rng.uniform(1, 100, (50, 3))
        ref = colour.xy_to_Luv_uv(colour.XYZ_to_xy(XYZ))
        np.testing.assert_allclose(XYZ_to_uv_prime(XYZ), ref, atol=1e-12)
        xy = XYZ_to_xy(XYZ)
        np.testing.assert_allclose(xy_to_uv_prime(xy), colour.xy_to_Luv_uv(xy), atol=1e-12)
        np.testing.assert_allclose(uv_prime_to_xy(xy_to_uv_prime(xy)), xy, atol=1e-12)

    def test_uv_prime_of_E(self):
        """Equal-energy white sits at u′ = 4/19, v′ = 9/19."""
        # CIE 15:2004 § 8.1 (u' = 4x/(-2x+12y+3)) at x = y = 1/3; common practice
        np.testing.assert_allclose(XYZ_to_uv_prime([1, 1, 1]), [4 / 19, 9 / 19])

    def test_black_is_nan(self):
        """Chromaticity of black is undefined."""
        assert np.isnan(XYZ_to_xy([0, 0, 0])).all()
        assert np.isnan(XYZ_to_uv_prime([0, 0, 0])).all()

    def test_xy_round_trip_and_delta_uv(self):
        """xy → XYZ → xy round-trips; Δu′v′ is Euclidean."""
        XYZ = xy_to_XYZ([[0.64, 0.33], [0.3, 0.6]], Y=[21.26, 71.52])
        np.testing.assert_allclose(XYZ_to_xy(XYZ), [[0.64, 0.33], [0.3, 0.6]])
        assert delta_uv_prime([0.2, 0.4], [0.203, 0.404]) == pytest.approx(0.005)  # √(0.003² + 0.004²), computed (docs/methods.md §4)


class TestLab:
    def test_matches_reference_library(self):
        """CIELAB equals colour-science's XYZ_to_Lab including the dark branch."""
        # colour-science 0.4.7 XYZ_to_Lab as reference library (CIE 15:2004 § 8.2.1)
        rng = np.random.default_rng(3)
        XYZ = np.vstack([rng.uniform(0, 100, (100, 3)), rng.uniform(0, 0.5, (20, 3))])
        ref = colour.XYZ_to_Lab(XYZ / 100, colour.XYZ_to_xy(D65 / 100))
        np.testing.assert_allclose(XYZ_to_Lab(XYZ, D65), ref, atol=1e-9)

    def test_white_and_round_trip(self):
        """The white is L* = 100, a* = b* = 0; Lab → XYZ inverts."""
        np.testing.assert_allclose(XYZ_to_Lab(D65, D65), [100, 0, 0], atol=1e-12)
        XYZ = np.array([[20.0, 30.0, 10.0], [0.1, 0.2, 0.3]])
        np.testing.assert_allclose(Lab_to_XYZ(XYZ_to_Lab(XYZ, D65), D65), XYZ, atol=1e-12)

    def test_LCh(self):
        """Chroma and hue angle in degrees 0-360."""
        np.testing.assert_allclose(Lab_to_LCh([50, 0, -10]), [50, 10, 270])
