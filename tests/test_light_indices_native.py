"""The workbench's own CCT/Duv, CIE 13.3 Ra, CIE 224 Rf, TM-30 Rg and Academy SSI against colour-science.

colour-science 0.4.7 is the reference library (imported here only; the
workbench's light path never imports it). Every SPD below goes through
both: the CIE illuminants A, D50, D65, FL1-FL12, the demo luminaires,
Planckian radiators 2000-10000 K (through the 4000-5000 K blend of CIE
224), narrow-band and spiky synthetic LEDs, and (slow) colour-science's
own light-source set. Agreement reached: ~1e-11 on every index and ~1e-13
relative on CCT (the same arithmetic in another order; the tolerances below,
1e-9 and 1e-10, leave room for the platform's libm). The test SPDs go to colour-science as
SpectralDistributions that interpolate linearly, as the workbench does for
emission spectra (docs/methods.md §17).
"""

from __future__ import annotations

import warnings

import colour
import numpy as np
import pytest
from colour.colorimetry import handle_spectral_arguments

from workbench import demo_dir
from workbench.analysis.light import read_light, working_spd
from workbench.colorimetry.cam02 import SURROUND_AVERAGE, JMh_to_CAM02UCS, Surround, XYZ_to_JMh_CIECAM02
from workbench.colorimetry.cct import (
    XYZ_to_uv_1960,
    cct_ohno_2013,
    cct_robertson_1968,
    planck_relative,
    planckian_table,
    uv_planckian,
)
from workbench.errors import WorkbenchError
from workbench.colorimetry.rendering import (
    colour_fidelity_cie_224,
    colour_rendering_cie_13_3,
    daylight_xy,
    fidelity_from_delta_E,
    spectral_similarity_index,
)

WL1 = np.arange(380.0, 781.0)
WL5 = np.arange(380.0, 781.0, 5.0)
INDEX_TOL = 1e-9   # Ra, Ri, Rf, Rf,i, Rg, SSI: colour-science 0.4.7, absolute
CCT_REL_TOL = 1e-10
DUV_TOL = 1e-10


def sd(wl, values, name="test"):
    """A colour-science SpectralDistribution interpolating linearly (as the workbench does for emission)."""
    return colour.SpectralDistribution(np.asarray(values, float), np.asarray(wl, float), name=name,
                                       interpolator=colour.algebra.LinearInterpolator)


def gaussian(wl, peak, width):
    return np.exp(-0.5 * ((wl - peak) / width) ** 2)


def on_grid(name_or_sd, wl):
    s = colour.SDS_ILLUMINANTS[name_or_sd] if isinstance(name_or_sd, str) else name_or_sd
    return np.interp(wl, np.asarray(s.wavelengths, float), np.asarray(s.values, float))


def synthetic_leds(wl):
    """Narrow-band and spiky test lights (synthetic Gaussians), name → SPD."""
    out = {
        "rgb-narrow": gaussian(wl, 455, 8) + 0.9 * gaussian(wl, 530, 10) + 0.8 * gaussian(wl, 625, 7),
        "phosphor-white": gaussian(wl, 450, 10) + 0.6 * gaussian(wl, 560, 55),
        "warm-phosphor": 0.5 * gaussian(wl, 450, 10) + gaussian(wl, 600, 60),
        "spiky": 0.2 + sum(a * gaussian(wl, p, 1.5) for a, p in ((3, 436), (5, 546), (4, 611), (2, 487))),
        "rgba": (gaussian(wl, 460, 9) + gaussian(wl, 520, 14) + 0.7 * gaussian(wl, 590, 7)
                 + 0.9 * gaussian(wl, 630, 8)),
    }
    return out


def test_spds(wl):
    """The SPD set on ``wl``: name → values."""
    out = {n: on_grid(n, wl) for n in ["A", "D50", "D65"] + [f"FL{i}" for i in range(1, 13)]}
    for fname in ("luminaire_led_export.csv", "luminaire_halogen_3200K.csv"):
        w = working_spd(read_light(demo_dir() / fname))
        out[fname] = np.interp(wl, w.wavelengths, w.flat()[0])
    for T in (2000, 2856, 3500, 4000, 4300, 4700, 5000, 5500, 6500, 10000):
        out[f"planck-{T}K"] = planck_relative(wl, float(T))
    out.update(synthetic_leds(wl))
    return out


test_spds.__test__ = False  # a helper, not a test


def colour_reference(wl, values):
    """colour-science's CCT, Duv, Ra, R1-R14, Rf, Rf,i and Rg of one SPD."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        cri = colour.colour_rendering_index(sd(wl, values), additional_data=True)
        tm = colour.colour_fidelity_index(sd(wl, values), additional_data=True, method="ANSI/IES TM-30-18")
    return {"Ra": cri.Q_a, "R": np.array([cri.Q_as[i].Q_a for i in sorted(cri.Q_as)]),
            "Rf": tm.R_f, "Rf_i": np.asarray(tm.R_s), "Rg": tm.R_g, "CCT": tm.CCT, "Duv": tm.D_uv}


@pytest.fixture(scope="module", params=[1, 5], ids=["1nm", "5nm"])
def compared(request):
    """Every test SPD through both implementations, on a 1 nm or a 5 nm grid."""
    wl = WL1 if request.param == 1 else WL5
    spds = test_spds(wl)
    V = np.array(list(spds.values()))
    return (list(spds), wl, V, colour_rendering_cie_13_3(wl, V), colour_fidelity_cie_224(wl, V),
            [colour_reference(wl, v) for v in V])


class TestColourRenderingCie133:
    def test_equal_to_colour(self, compared):
        """Ra and R1-R14 of every test SPD equal colour-science's to 1e-9 (CIE 13.3-1995)."""
        names, _, _, cri, _, ref = compared
        for k, name in enumerate(names):
            assert cri.Ra[k] == pytest.approx(ref[k]["Ra"], abs=INDEX_TOL), name
            np.testing.assert_allclose(cri.R[k], ref[k]["R"], rtol=0, atol=INDEX_TOL, err_msg=name)

    def test_published_fluorescent(self):
        """FL1 Ra 75.852828 and FL2 64.233724 (CIE 13.3-1995 method; colour-science's own tests)."""
        V = np.array([on_grid("FL1", WL1), on_grid("FL2", WL1)])
        np.testing.assert_allclose(colour_rendering_cie_13_3(WL1, V).Ra, [75.852828, 64.233724], atol=1e-6)

    def test_reference_choice(self):
        """Planckian below 5000 K and daylight at and above, by the Robertson CCT (CIE 13.3-1995, § 5.2)."""
        V = np.array([planck_relative(WL1, 4900.0), planck_relative(WL1, 5100.0)])
        r = colour_rendering_cie_13_3(WL1, V)
        assert r.daylight.tolist() == [False, True]
        assert r.Ra[0] == pytest.approx(100, abs=0.02)  # a Planckian radiator renders as its reference (common practice)

    def test_vectorised_equals_one_by_one(self):
        """A batch gives what each SPD gives alone."""
        V = np.array(list(synthetic_leds(WL1).values()))
        batch = colour_rendering_cie_13_3(WL1, V).R
        alone = np.array([colour_rendering_cie_13_3(WL1, v).R[0] for v in V])
        np.testing.assert_allclose(batch, alone, rtol=0, atol=1e-10)

    def test_rejects_irregular_grid(self):
        """A grid that is not uniform 1 or 5 nm is refused."""
        with pytest.raises(WorkbenchError) as err:
            colour_rendering_cie_13_3(np.arange(380.0, 781.0, 2.0), np.ones(201))
        assert str(err.value) == ("'wavelengths' must be a uniform 1 nm or 5 nm grid on whole multiples of the "
                                  "step (got 380-780 nm, first step 2 nm)")

    def test_rejects_length_mismatch(self):
        """Wavelengths and values of different lengths are refused."""
        with pytest.raises(WorkbenchError) as err:
            colour_rendering_cie_13_3(WL1, np.ones(81))
        assert str(err.value) == ("'wavelengths' must be one grid of as many points as each SPD has values "
                                  "(got 401 wavelengths for 81 values)")


class TestColourFidelityCie224:
    def test_equal_to_colour(self, compared):
        """Rf, Rf,i, Rg, CCT and Duv of every test SPD equal colour-science's (CIE 224:2017, TM-30-18)."""
        names, _, _, _, cfi, ref = compared
        for k, name in enumerate(names):
            assert cfi.Rf[k] == pytest.approx(ref[k]["Rf"], abs=INDEX_TOL), name
            np.testing.assert_allclose(cfi.Rf_i[k], ref[k]["Rf_i"], rtol=0, atol=INDEX_TOL, err_msg=name)
            assert cfi.Rg[k] == pytest.approx(ref[k]["Rg"], abs=INDEX_TOL), name
            assert cfi.CCT[k] == pytest.approx(ref[k]["CCT"], rel=CCT_REL_TOL), name
            assert cfi.Duv[k] == pytest.approx(ref[k]["Duv"], abs=DUV_TOL), name

    def test_fl2_published(self):
        """FL2: Rf 70.1, Rg 86 (ANSI/IES TM-30-18; the values colour-science's tests pin)."""
        r = colour_fidelity_cie_224(WL5, on_grid("FL2", WL5))  # the CIE table's own 5 nm points
        assert r.Rf[0] == pytest.approx(70.1, abs=0.05) and round(float(r.Rg[0])) == 86

    def test_blend_share(self):
        """The reference's daylight share is (CCT − 4000)/1000 between 4000 and 5000 K (CIE 224:2017, § 4.3)."""
        V = np.array([planck_relative(WL1, T) for T in (3500.0, 4500.0, 6000.0)])
        r = colour_fidelity_cie_224(WL1, V)
        np.testing.assert_allclose(r.daylight_share, [0, (r.CCT[1] - 4000) / 1000, 1])

    def test_short_grid(self):
        """An SPD on a shorter grid is extended with its end values, as colour-science 0.4.7 does."""
        wl = np.arange(390.0, 781.0)
        v = on_grid("FL2", wl)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ref = colour.colour_fidelity_index(sd(wl, v), additional_data=True, method="ANSI/IES TM-30-18")
        r = colour_fidelity_cie_224(wl, v)
        assert r.Rf[0] == pytest.approx(ref.R_f, abs=INDEX_TOL) and r.Rg[0] == pytest.approx(ref.R_g, abs=INDEX_TOL)


class TestFidelityFromDeltaE:
    def test_scale(self):
        """Rf = 10 ln(1 + exp((100 − 6.73 ΔE)/10)): ΔE 0 → ~100, 100/6.73 → 10 ln 2 (CIE 224:2017, eq. 4.6)."""
        np.testing.assert_allclose(fidelity_from_delta_E([0.0, 100 / 6.73]),
                                   [10 * np.log1p(np.exp(10.0)), 10 * np.log(2)])


class TestSpectralSimilarityIndex:
    @pytest.mark.parametrize("reference", ["D65", "A", "D50"])
    def test_equal_to_colour(self, reference):
        """SSI of every 1 nm test SPD against CIE illuminants equals colour-science's (Academy SSI)."""
        spds = test_spds(WL1)
        V = np.array(list(spds.values()))
        ref = colour.SDS_ILLUMINANTS[reference]
        got = spectral_similarity_index(WL1, V, ref.wavelengths, ref.values)
        want = [colour.spectral_similarity_index(sd(WL1, v), ref.copy(), round_result=False) for v in V]
        np.testing.assert_allclose(got, want, rtol=0, atol=INDEX_TOL)

    def test_C_against_D65(self):
        """Illuminant C against D65: 94.183 (Academy SSI; colour-science's tests)."""
        c, d65 = colour.SDS_ILLUMINANTS["C"], colour.SDS_ILLUMINANTS["D65"]
        assert spectral_similarity_index(c.wavelengths, c.values, d65.wavelengths, d65.values)[0] == \
            pytest.approx(94.183, abs=1e-3)

    def test_identical(self):
        """An SPD against itself scores 100 (Academy SSI definition)."""
        v = on_grid("FL2", WL5)
        assert spectral_similarity_index(WL5, v, WL5, v)[0] == pytest.approx(100, abs=1e-12)


class TestCctOhno2013:
    def test_equal_to_colour(self):
        """Ohno 2013 CCT and Duv of points around the locus (1500-15000 K, |Δu|, |Δv| ≤ 0.01) equal colour-science's."""
        rng = np.random.default_rng(7)
        T = np.geomspace(1500, 15000, 80)
        uv = uv_planckian(T) + rng.uniform(-0.01, 0.01, (80, 2))
        cct, duv = cct_ohno_2013(uv)
        want = np.array([colour.temperature.uv_to_CCT_Ohno2013(p) for p in uv])
        np.testing.assert_allclose(cct, want[:, 0], rtol=CCT_REL_TOL)
        np.testing.assert_allclose(duv, want[:, 1], rtol=0, atol=DUV_TOL)

    def test_on_the_locus(self):
        """A Planckian radiator's own chromaticity returns its temperature and Duv 0 (Ohno 2014)."""
        cct, duv = cct_ohno_2013(uv_planckian(np.array([2000.0, 2856.0, 6504.0, 15000.0])))
        np.testing.assert_allclose(cct, [2000, 2856, 6504, 15000], rtol=1e-6)
        np.testing.assert_allclose(duv, 0, atol=1e-7)

    def test_sign(self):
        """Duv is positive above the locus (greener) and negative below (pinker) (Ohno 2014)."""
        uv = uv_planckian(np.array([4000.0, 4000.0]))
        _, duv = cct_ohno_2013(uv + [[0, 0.01], [0, -0.01]])
        assert duv[0] > 0 > duv[1]

    def test_shape(self):
        """Any leading shape is kept."""
        cct, duv = cct_ohno_2013(np.tile(uv_planckian(3000.0), (2, 3, 1)))
        assert cct.shape == duv.shape == (2, 3)


class TestPlanckianTable:
    @pytest.mark.parametrize("end", [25000.0, 100000.0])
    def test_equal_to_colour(self, end):
        """The search table for 1000-``end`` K equals colour-science's planckian_table to 1e-15."""
        cmfs, _ = handle_spectral_arguments(None)
        want = colour.temperature.ohno2013.planckian_table(cmfs, 1000, end, 1.001)
        got = planckian_table(1000.0, end, 1.001)
        assert got.shape == want.shape
        np.testing.assert_allclose(got, want, rtol=0, atol=1e-14)

    def test_stored_rows_recomputed(self):
        """The stored chromaticities equal Planck's law through CIE 1931 2° (CIE 15:2004; c₂ 1.4388e-2 m·K)."""
        tab = planckian_table()
        np.testing.assert_allclose(uv_planckian(tab[::97, 0]), tab[::97, 1:], rtol=0, atol=1e-14)


class TestUvPlanckian:
    def test_illuminant_A(self):
        """2856 K lies at CIE 1960 (0.2560, 0.3495), illuminant A's white (CIE 15:2004, Table T.3: x 0.44757, y 0.40745)."""
        u, v = uv_planckian(2856.0)
        assert u == pytest.approx(4 * 0.44757 / (-2 * 0.44757 + 12 * 0.40745 + 3), abs=2e-4)
        assert v == pytest.approx(6 * 0.40745 / (-2 * 0.44757 + 12 * 0.40745 + 3), abs=2e-4)


class TestXYZToUv1960:
    def test_formula(self):
        """u = 4X/(X + 15Y + 3Z), v = 6Y/(X + 15Y + 3Z) (CIE 15:2004, eq. 8.x)."""
        X, Y, Z = 95.047, 100.0, 108.883
        d = X + 15 * Y + 3 * Z
        np.testing.assert_allclose(XYZ_to_uv_1960([X, Y, Z]), [4 * X / d, 6 * Y / d], rtol=1e-15)


class TestCctRobertson1968:
    def test_equal_to_colour(self):
        """Robertson CCT and Duv equal colour-science's (Robertson 1968; Wyszecki & Stiles Table 1(3.11))."""
        rng = np.random.default_rng(3)
        uv = uv_planckian(np.geomspace(1700, 50000, 60)) + rng.uniform(-0.01, 0.01, (60, 2))
        cct, duv = cct_robertson_1968(uv)
        want = colour.temperature.uv_to_CCT_Robertson1968(uv)
        np.testing.assert_allclose(cct, want[:, 0], rtol=1e-12)
        np.testing.assert_allclose(duv, want[:, 1], rtol=0, atol=1e-14)

    def test_illuminant_A(self):
        """Illuminant A's white gives about 2856 K (CIE 15:2004; Robertson's method is within a few K)."""
        XYZ = np.array([109.850, 100.0, 35.585])  # ASTM E308, illuminant A 2° white
        assert cct_robertson_1968(XYZ_to_uv_1960(XYZ))[0] == pytest.approx(2856, abs=3)


class TestDaylightXy:
    def test_D65(self):
        """6504 K gives D65's chromaticity to 1e-4 (CIE 15:2004, Table T.3: 0.31272, 0.32903)."""
        np.testing.assert_allclose(daylight_xy(6504.0), [0.31272, 0.32903], atol=1e-4)

    def test_equal_to_colour(self):
        """Equal to colour-science's CCT_to_xy_CIE_D over 4000-25000 K (CIE 15:2004 § 3.1)."""
        T = np.linspace(4000, 25000, 50)
        np.testing.assert_allclose(daylight_xy(T), colour.temperature.CCT_to_xy_CIE_D(T), rtol=1e-14)


class TestXYZToJMhCIECAM02:
    def test_equal_to_colour(self):
        """J, M, h equal colour-science's, illuminant discounted or not (CIE 159:2004)."""
        rng = np.random.default_rng(5)
        XYZ = rng.uniform(1, 90, (40, 3))
        XYZ_w = np.array([95.05, 100.0, 108.88])
        for discount in (True, False):
            for L_A, Y_b, surround in ((318.31, 20.0, SURROUND_AVERAGE), (100.0, 20.0, Surround(0.9, 0.59, 0.9))):
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    ref = colour.XYZ_to_CIECAM02(XYZ, XYZ_w, L_A, Y_b,
                                                 colour.appearance.InductionFactors_CIECAM02(*vars(surround).values()),
                                                 discount_illuminant=discount)
                got = XYZ_to_JMh_CIECAM02(XYZ, XYZ_w, L_A=L_A, Y_b=Y_b, surround=surround,
                                          discount_illuminant=discount)
                np.testing.assert_allclose(got, np.stack([ref.J, ref.M, ref.h], axis=-1), rtol=1e-12, atol=1e-11)

    def test_worked_example(self):
        """CIE 159:2004 style example: XYZ (19.01, 20, 21.78) under D65, L_A 318.31, Y_b 20 → J 41.73, h 219.05 (from memory)."""
        J, M, h = XYZ_to_JMh_CIECAM02([19.01, 20.00, 21.78], [95.05, 100.00, 108.88], L_A=318.31, Y_b=20.0)
        assert J == pytest.approx(41.731, abs=1e-3) and h == pytest.approx(219.048, abs=1e-3)
        assert M == pytest.approx(0.1088, abs=1e-3)


class TestJMhToCAM02UCS:
    def test_equal_to_colour(self):
        """J′ a′ b′ equal colour-science's JMh_CIECAM02_to_CAM02UCS (Luo, Cui & Li 2006)."""
        rng = np.random.default_rng(9)
        JMh = np.column_stack([rng.uniform(0, 100, 30), rng.uniform(0, 60, 30), rng.uniform(0, 360, 30)])
        np.testing.assert_allclose(JMh_to_CAM02UCS(JMh), colour.JMh_CIECAM02_to_CAM02UCS(JMh), rtol=1e-13, atol=1e-12)


@pytest.mark.slow  # about 55 light sources through colour-science's three indices
class TestColourLightSources:
    def test_equal_to_colour(self):
        """colour-science's own light-source set (LEDs, discharge, fluorescent): Ra, Rf, Rg, CCT agree."""
        names = [n for n, s in colour.SDS_LIGHT_SOURCES.items() if s.wavelengths[0] <= 380 and s.wavelengths[-1] >= 780]
        V = np.array([on_grid(colour.SDS_LIGHT_SOURCES[n], WL1) for n in names])
        cri = colour_rendering_cie_13_3(WL1, V)
        cfi = colour_fidelity_cie_224(WL1, V)
        for k, name in enumerate(names):
            ref = colour_reference(WL1, V[k])
            assert cri.Ra[k] == pytest.approx(ref["Ra"], abs=INDEX_TOL), name
            assert cfi.Rf[k] == pytest.approx(ref["Rf"], abs=INDEX_TOL), name
            if np.isfinite(ref["Rg"]):
                assert cfi.Rg[k] == pytest.approx(ref["Rg"], abs=INDEX_TOL), name
            assert cfi.CCT[k] == pytest.approx(ref["CCT"], rel=1e-9), name
