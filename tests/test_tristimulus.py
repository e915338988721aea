"""Tristimulus values against CIE 15 / ASTM E308 values and colour-science."""

import colour
import numpy as np
import pytest

from workbench.colorimetry.cie import D_SERIES_CCT, cmfs_on, illuminant_A, illuminant_names, illuminant_on
from workbench.colorimetry.coordinates import XYZ_to_xy
from workbench.errors import RangeCoverageError, WorkbenchError
from workbench.model.spectra import Spectra, grid
from workbench.colorimetry.tristimulus import APPLY_BLOCK_ROWS, emission_weights, object_weights, tristimulus

from test_spectra import smooth

CMFS = {"2": "CIE 1931 2 Degree Standard Observer", "10": "CIE 1964 10 Degree Standard Observer"}


def colour_illuminant(name, wl):
    """The illuminant on ``wl`` by colour-science's own linear interpolator and constant extrapolator."""
    if name == "A":
        # A is defined by its formula (CIE 15:2004 Eq. 2.1); colour-science computes it too.
        return colour.sd_CIE_standard_illuminant_A(colour.SpectralShape(wl[0], wl[-1], wl[1] - wl[0]))
    sd = colour.SDS_ILLUMINANTS[name]
    f = colour.Extrapolator(colour.LinearInterpolator(sd.wavelengths, sd.values), method="Constant")
    values = f(wl)
    if name in D_SERIES_CCT:
        # past the table's end the D series follows the daylight basis (CIE 15:2004, § 3.1),
        # which colour-science computes over 300-830 nm
        xy = colour.temperature.CCT_to_xy_CIE_D(D_SERIES_CCT[name])
        basis = colour.colorimetry.sd_CIE_illuminant_D_series(xy)
        past = wl > sd.wavelengths[-1]
        values[past] = np.interp(wl[past], basis.wavelengths, basis.values)
    return colour.SpectralDistribution(values, wl)


def colour_XYZ(values, wl, illuminant, observer="2"):
    """colour-science msds_to_XYZ, integration, on the data's grid (CMFs by its own align)."""
    step = wl[1] - wl[0]
    shape = colour.SpectralShape(wl[0], wl[-1], step)
    cmfs = colour.MSDS_CMFS[CMFS[observer]].copy().align(shape)
    ill = colour_illuminant(illuminant, wl)
    return colour.msds_to_XYZ(np.atleast_2d(values), cmfs, ill, method="Integration", shape=shape)


class TestObjectWeights:
    @pytest.mark.parametrize("name", illuminant_names())
    def test_every_illuminant_matches_reference_library(self, name):
        """XYZ of TCS01-14 under every illuminant colour-science ships, 5 nm, ≤ 1e-6 relative."""
        # colour-science 0.4.7 msds_to_XYZ (Integration) as reference library; CIE 13.3 samples
        tcs = colour.quality.SDS_TCS["CIE 1995"]
        wl = np.array(next(iter(tcs.values())).wavelengths, dtype=float)
        R = np.array([sd.values for sd in tcs.values()])
        for observer in ("2", "10"):
            ours = object_weights(wl, illuminant=name, observer=observer).apply(R)
            ref = colour_XYZ(R, wl, name, observer)
            np.testing.assert_allclose(ours, ref, rtol=1e-6, atol=1e-9)

    @pytest.mark.parametrize("name", ["A", "C", "D50", "D65", "FL2", "FL11", "LED-B3"])
    def test_odd_grid_matches_reference_library(self, name):
        """Random smooth spectra at 3 nm from 383 nm: ≤ 1e-6 relative."""
        # colour-science 0.4.7 msds_to_XYZ (Integration) as reference library
        wl = grid(383, 830, 3)
        R = smooth(wl, seed=11, count=20)
        for observer in ("2", "10"):
            ours = object_weights(wl, illuminant=name, observer=observer).apply(R)
            np.testing.assert_allclose(ours, colour_XYZ(R, wl, name, observer), rtol=1e-6)

    @pytest.mark.parametrize(
        "observer, name, xy, step, lo, hi",
        [
            # CIE 15:2004, Table T.3 (from memory). A and D65 are tabulated by the CIE at 1 nm
            # to 830 nm and summed so; C and D50 at 5 nm to 780 nm, summed over 380-780 nm.
            ("2", "A", (0.44758, 0.40745), 1, 360, 830),
            ("2", "C", (0.31006, 0.31616), 5, 380, 780),
            ("2", "D50", (0.34567, 0.35850), 5, 380, 780),
            ("2", "D65", (0.31272, 0.32903), 1, 360, 830),
            ("10", "A", (0.45117, 0.40594), 1, 360, 830),
            ("10", "C", (0.31039, 0.31905), 5, 380, 780),
            ("10", "D50", (0.34773, 0.35952), 5, 380, 780),
            ("10", "D65", (0.31382, 0.33100), 1, 360, 830),
        ],
    )
    def test_white_points_cie15(self, observer, name, xy, step, lo, hi):
        """White chromaticities of A, C, D50, D65 for both observers, to the table's 5 decimals."""
        w = object_weights(grid(lo, hi, step), illuminant=name, observer=observer)
        np.testing.assert_allclose(XYZ_to_xy(w.white), xy, atol=1.5e-5)

    @pytest.mark.parametrize(
        "name, XYZ",
        [
            # ASTM E308-15, Table 5 (10 nm, 2°) white points, from memory (docs/methods.md §3)
            ("D65", (95.047, 100.0, 108.883)),
            ("D50", (96.422, 100.0, 82.521)),
            ("A", (109.850, 100.0, 35.585)),
            ("C", (98.074, 100.0, 118.232)),
        ],
    )
    def test_astm_e308_white(self, name, XYZ):
        """The ASTM E308 10 nm weights give the tabulated white XYZ."""
        w = object_weights(grid(360, 780, 10), illuminant=name, method="astm-e308")
        np.testing.assert_allclose(w.white, XYZ, atol=1.5e-3)

    @pytest.mark.parametrize("step, start, end", [(10, 360, 780), (10, 400, 700), (20, 380, 780), (5, 380, 780), (1, 360, 780)])
    def test_astm_e308_matches_reference_library(self, step, start, end):
        """ASTM E308 XYZ under D65 equal colour-science's sd_to_XYZ_ASTME308 (no 20 nm interpolation)."""
        # colour-science 0.4.7 sd_to_XYZ_ASTME308 as reference library (its D65 is linear at 1 nm, as ours)
        wl = grid(start, end, step)
        r = smooth(wl, seed=5)[0]
        ours = object_weights(wl, illuminant="D65", method="astm-e308").apply(r)
        sd = colour.SpectralDistribution(r, wl)
        ref = colour.colorimetry.sd_to_XYZ_ASTME308(
            sd, colour.MSDS_CMFS[CMFS["2"]], colour.SDS_ILLUMINANTS["D65"],
            mi_20nm_interpolation_method=False,
        )
        np.testing.assert_allclose(ours, ref, rtol=1e-6)

    def test_astm_needs_supported_step(self):
        """ASTM E308 refuses 3 nm data with a message naming the steps it takes."""
        with pytest.raises(WorkbenchError, match="ASTM E308 needs data at 1, 5, 10 or 20 nm"):
            object_weights(grid(383, 779, 3), method="astm-e308")

    def test_weights_are_cached(self):
        """The same grid, observer, illuminant and method give the very same matrix."""
        wl = grid(380, 780, 5)
        assert object_weights(wl, illuminant="D65") is object_weights(wl.copy(), illuminant="D65")
        assert not object_weights(wl, illuminant="D65").W.flags.writeable


class TestTables:
    def test_illuminant_A_formula_matches_table(self):
        """Illuminant A from its formula equals the CIE table (100 at 560 nm)."""
        # CIE 15:2004 Eq. 2.1 against colour-science's tabulated A
        sd = colour.SDS_ILLUMINANTS["A"]
        wl = np.array(sd.wavelengths, dtype=float)
        np.testing.assert_allclose(illuminant_A(wl), sd.values, rtol=5e-6)
        assert illuminant_A(np.array([560.0]))[0] == pytest.approx(100.0)

    def test_cmfs_off_table_are_zero_and_noted(self):
        """CMFs outside 360-830 nm are zero, and the note says so."""
        t = cmfs_on(grid(300, 900, 10))
        assert (t.values[:6] == 0).all() and (t.values[-7:] == 0).all()
        assert "zero outside 360-830 nm" in t.note

    def test_illuminant_extension_is_noted(self):
        """FL2 past 780 nm repeats its end value and says so."""
        name, t = illuminant_on(grid(380, 830, 10), "FL2")
        assert name == "FL2" and t.values[-1] == t.values[-6]
        assert "extended over 780-830 nm with its end values" in t.note

    def test_short_illuminant_name_and_unknown(self):
        """'F2' means FL2; unknown names are refused."""
        assert illuminant_on(grid(380, 780, 5), "F2")[0] == "FL2"
        with pytest.raises(WorkbenchError, match="unknown illuminant 'D93'"):
            illuminant_on(grid(380, 780, 5), "D93")


class TestTristimulus:
    def test_shape_ladder(self):
        """(n,), (k, n) and (a, b, n) inputs keep their leading shape."""
        wl = grid(380, 780, 5)
        r = smooth(wl, count=6)
        for v, shape in [(r[0], (3,)), (r, (6, 3)), (r.reshape(2, 3, -1), (2, 3, 3))]:
            assert tristimulus(Spectra(wl, v)).XYZ.shape == shape

    def test_perfect_diffuser_is_white(self):
        """R = 1 gives the illuminant's white at Y = 100."""
        wl = grid(380, 780, 5)
        t = tristimulus(Spectra(wl, np.ones(wl.size)), illuminant="D50")
        np.testing.assert_allclose(t.XYZ, t.white)
        assert t.XYZ[1] == pytest.approx(100.0)

    def test_range_needed(self):
        """Data short of 380-780 nm are refused unless constant extrapolation is allowed."""
        wl = grid(400, 700, 10)
        s = Spectra(wl, smooth(wl)[0], source="paint.csv")
        with pytest.raises(RangeCoverageError) as e:
            tristimulus(s)
        assert str(e.value) == (
            "paint.csv: data cover 400-700 nm but colorimetry needs 380-780 nm (CIE 15:2004); "
            "allow constant extrapolation (CIE 167) with --extrapolate constant"
        )
        t = tristimulus(s, extrapolation="constant")
        assert "extrapolated 380-400 nm and 700-780 nm with the end values" in " ".join(t.notes)
        # Extended by hand with the end values: the same numbers.
        wl2 = grid(380, 780, 10)
        v2 = np.interp(wl2, wl, s.values)
        np.testing.assert_allclose(t.XYZ, tristimulus(Spectra(wl2, v2)).XYZ, rtol=1e-12)

    def test_emission_relative_and_absolute(self):
        """Emission: relative Y = 100; absolute 683 lm/W × Σ S ȳ Δλ."""
        # CIE 15:2004 § 7.2 (relative k = 100/ΣSȳΔλ; K_m = 683 lm/W)
        wl = grid(380, 780, 5)
        S = smooth(wl, seed=2, count=3)
        rel = tristimulus(Spectra(wl, S, kind="emission", units="relative"))
        np.testing.assert_allclose(rel.XYZ[:, 1], 100.0)
        ab = tristimulus(Spectra(wl, S, kind="emission", units="W·m⁻²·nm⁻¹"))
        ybar = cmfs_on(wl).values[:, 1]
        np.testing.assert_allclose(ab.XYZ[:, 1], 683 * (S * ybar).sum(axis=1) * 5)
        # colour-science 0.4.7 sd_to_XYZ of a light source (illuminant E weights), scaled to Y = 100
        sd = colour.SpectralDistribution(S[0], wl)
        cm = colour.MSDS_CMFS[CMFS["2"]].copy().align(colour.SpectralShape(380, 780, 5))
        ref = colour.sd_to_XYZ(sd, cm, method="Integration")
        np.testing.assert_allclose(rel.XYZ[0], 100 * ref / ref[1], rtol=1e-6)

    def test_nonuniform_refused(self):
        """Summation needs a uniform grid; the message says how to resample."""
        wl = np.array([380.0, 390, 405, 500, 600, 700, 780])
        with pytest.raises(WorkbenchError, match="resample first"):
            tristimulus(Spectra(wl, np.ones(7)))

    def test_measured_illuminant(self):
        """A measured SPD as illuminant equals the same SPD given by name."""
        wl = grid(380, 780, 5)
        _, d65 = illuminant_on(wl, "D65")
        spd = Spectra(wl, d65.values, kind="emission", units="relative", source="d65.csv")
        r = smooth(wl, count=4)
        a = tristimulus(Spectra(wl, r), illuminant=spd).XYZ
        b = tristimulus(Spectra(wl, r), illuminant="D65").XYZ
        np.testing.assert_allclose(a, b, rtol=1e-14)

    def test_emission_weights_no_k(self):
        """Emission weights are x̄ȳz̄ Δλ."""
        wl = grid(380, 780, 5)
        np.testing.assert_array_equal(emission_weights(wl).W, cmfs_on(wl).values * 5)


class TestWeightsApply:
    def test_float32_kept(self):
        """float32 spectra give float32 XYZ within 1e-6 relative of the float64 result (stated precision)."""
        wl = grid(380, 780, 5)
        R = np.random.default_rng(3).random((5000, wl.size))
        w = object_weights(wl, illuminant="D65")
        x32 = w.apply(R.astype(np.float32))
        x64 = w.apply(R)
        assert x32.dtype == np.float32 and x64.dtype == np.float64
        assert np.max(np.abs(x32 - x64) / np.abs(x64)) < 1e-6

    def test_blocks_equal_one_product(self):
        """A batch larger than one block equals one matrix product to rounding, in any leading shape."""
        wl = grid(380, 780, 10)
        R = np.random.default_rng(4).random((3, APPLY_BLOCK_ROWS + 7, wl.size))
        w = object_weights(wl, illuminant="A")
        got = w.apply(R)
        assert got.shape == (3, APPLY_BLOCK_ROWS + 7, 3)
        np.testing.assert_allclose(got, R @ w.W, rtol=1e-12)

    def test_wrong_length(self):
        """Values on another grid: one-line error naming both lengths."""
        w = object_weights(grid(380, 780, 10), illuminant="D65")
        with pytest.raises(WorkbenchError) as e:
            w.apply(np.ones((2, 5)))
        assert str(e.value) == "values have 5 wavelengths but the weights 41"


class TestE2022Weights:
    @pytest.mark.parametrize("observer, illuminant, step, start, end", [
        ("2", "D65", 10, 360, 780), ("2", "A", 20, 380, 760), ("10", "D50", 10, 400, 700), ("2", "FL2", 20, 420, 780)])
    def test_equal_to_colour(self, observer, illuminant, step, start, end):
        """ASTM E2022 weights (with the E308 end folding) equal colour-science's bit for bit (reference library)."""
        from colour.colorimetry import (adjust_tristimulus_weighting_factors_ASTME308,
                                        tristimulus_weighting_factors_ASTME2022)

        wl1 = grid(360, 780, 1)
        cm1 = cmfs_on(wl1, observer).values
        _, s1 = illuminant_on(wl1, illuminant, interpolation="linear" if illuminant in ("D65", "A") else "sprague")
        full = colour.SpectralShape(360, 780, step)
        ref = tristimulus_weighting_factors_ASTME2022(colour.MultiSpectralDistributions(cm1, wl1),
                                                      colour.SpectralDistribution(s1.values, wl1), full)
        if (start, end) != (360, 780):
            ref = adjust_tristimulus_weighting_factors_ASTME308(ref, full, colour.SpectralShape(start, end, step))
        ours = object_weights(grid(start, end, step), illuminant=illuminant, observer=observer, method="astm-e308")
        np.testing.assert_array_equal(ours.W, ref)
