"""Tests of workbench.analysis.light: published indices, the camera fidelity index, two fixtures compared."""

from __future__ import annotations

import json

import colour
import numpy as np
import pytest

from workbench import demo_dir
from workbench.analysis.camera import Camera, ColourBench
from workbench.colorimetry.cie import cmfs_on, illuminant_on
from workbench.cli.commands._output import to_json
from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.analysis.light_camera import _verdict
from workbench.analysis.light import (
    CAUTION,
    absolute_scale,
    camera_fidelity,
    camera_fidelity_score,
    compare_lights,
    daylight_spd,
    light_indices,
    light_report,
    parse_light,
    planckian_spd,
    read_light,
    reference_illuminant,
    working_spd,
)
from workbench.colorimetry.primaries import primaries_from_xy, primaries_named
from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3
from workbench.model.spectra import Spectra, grid

DEMO = demo_dir()
LED = DEMO / "luminaire_led_export.csv"
HALOGEN = DEMO / "luminaire_halogen_3200K.csv"
WL5 = grid(380, 780, 5)
BT709 = primaries_named("ITU-R BT.709")


def light(name: str) -> Spectra:
    """A CIE illuminant colour-science tabulates, as a relative emission Spectra on its own grid."""
    sd = colour.SDS_ILLUMINANTS[name]
    return Spectra(np.array(sd.wavelengths, float), np.array(sd.values, float)[None], (name,),
                   kind="emission", units="relative")


def spd(wl, values, name="test", units="relative") -> Spectra:
    return Spectra(np.asarray(wl, float), np.asarray(values, float)[None], (name,), kind="emission", units=units)


def gaussian_camera(wl=WL5) -> Camera:
    """The open synthetic Gaussian camera of docs/methods.md §8 (610/540/450 nm, σ 30/35/25), least squares on the 99 CES under D65."""
    S = np.stack([np.exp(-0.5 * ((wl - p) / s) ** 2) for p, s in ((610, 30), (540, 35), (450, 25))])
    _, d65 = illuminant_on(wl, "D65")
    bench = ColourBench(wl, ces_cie_224(wl, extrapolation="constant"), {"D65": np.asarray(d65.values)}, BT709)
    return Camera("gaussian", wl, S, bench.evaluate(S).matrices[0], BT709)


def luther_camera(wl=WL5, primaries=BT709) -> Camera:
    """CIE 1931 functions mapped through the inverse RP 177 matrix: a Luther camera whose matrix is identity."""
    S = primaries.matrix_XYZ_to_RGB @ cmfs_on(wl).values.T
    return Camera("luther", wl, S, np.eye(3), primaries)


@pytest.fixture(scope="module")
def design_camera():
    from workbench.analysis.evaluator import load_camera

    return load_camera(DEMO / "tern3_design.toml")


# --------------------------------------------------------------------------


class TestReadLight:
    def test_spectrometer_export(self):
        """The demo LED export (metadata lines, semicolons, decimal commas) reads as one absolute SPD."""
        s = read_light(LED)
        assert s.shape == (1, 401) and s.units == "W/m2/nm" and s.kind == "emission"
        assert any("metadata" in n for n in s.notes)

    def test_several_spectra_need_a_name(self, tmp_path):
        """A file of two SPDs is refused naming both, and --spectrum picks one."""
        f = tmp_path / "two.csv"
        f.write_text("wavelength_nm,lamp1,lamp2\n" + "".join(f"{w},{w / 100},{1}\n" for w in range(380, 781, 5)))
        with pytest.raises(InputFileError) as e:
            read_light(f)
        assert str(e.value) == (f"{f}: holds 2 spectra (lamp1, lamp2); expected one SPD, or name one "
                                "(--spectrum NAME)")
        assert read_light(f, spectrum="lamp2").names == ("lamp2",)
        with pytest.raises(InputFileError, match="no spectrum named 'lamp3'; expected one of lamp1, lamp2"):
            read_light(f, spectrum="lamp3")

    def test_uploaded_bytes(self):
        """Bytes in memory read like the file, named by ``source``."""
        s = parse_light(LED.read_bytes(), source="upload.csv")
        assert s.source == "upload.csv"
        np.testing.assert_array_equal(s.values, read_light(LED).values)


class TestWorkingSpd:
    def test_5nm_kept(self):
        """A uniform 5 nm SPD on multiples of 5 nm is used as it is."""
        s = light("FL2")
        assert working_spd(s) is s

    def test_irregular_to_1nm(self):
        """The irregular halogen goes to 1 nm by cubic spline (CIE 167), said in the notes."""
        w = working_spd(read_light(HALOGEN))
        assert w.step == 1.0 and w.wavelengths[0] == 370 and w.wavelengths[-1] == 788
        assert any("cubic spline" in n for n in w.notes) and any("1 nm grid" in n for n in w.notes)

    def test_short_range_refused(self):
        """An SPD over 400-700 nm is refused, naming the range needed and the way out."""
        s = spd(grid(400, 700, 5), np.ones(61), name="short")
        with pytest.raises(RangeCoverageError) as e:
            working_spd(s)
        assert str(e.value) == ("short: the SPD covers 400-700 nm but the indices need 380-780 nm "
                                "(CIE 15:2004, CIE 224:2017); allow constant extrapolation (CIE 167) with "
                                "--extrapolate constant")
        w = working_spd(s, extrapolation="constant")
        assert w.wavelengths[0] == 380 and w.wavelengths[-1] == 780 and w.flat()[0][0] == 1.0
        assert "extrapolated" in w.notes[-1]

    def test_non_finite_refused(self):
        """NaN in an SPD is an error, not a gap to fill."""
        v = np.ones(81)
        v[3] = np.nan
        with pytest.raises(WorkbenchError, match="not finite"):
            working_spd(spd(WL5, v))

    def test_not_emission(self):
        """A reflectance is not a light."""
        with pytest.raises(WorkbenchError, match="expected an emission spectrum"):
            working_spd(tcs_cie_13_3(WL5).select(["TCS01"]))


class TestAbsoluteScale:
    @pytest.mark.parametrize("units, expected", [
        ("W/m2/nm", ("illuminance", "lx", 1.0)),
        ("W·m⁻²·nm⁻¹", ("illuminance", "lx", 1.0)),
        ("W/(m² nm)", ("illuminance", "lx", 1.0)),
        ("mW/cm2/nm", ("illuminance", "lx", 10.0)),
        ("µW/cm²/nm", ("illuminance", "lx", 0.01)),
        ("W/sr/m2/nm", ("luminance", "cd/m²", 1.0)),
        ("W·sr⁻¹·m⁻²·nm⁻¹", ("luminance", "cd/m²", 1.0)),
        ("relative", None),
        ("counts", None),
        ("W/m2", None),
    ])
    def test_units(self, units, expected):
        """Radiometric units give the photometric quantity and the factor to W-based SI units."""
        got = absolute_scale(units)
        if expected is None:
            assert got is None
        else:
            assert got[:2] == expected[:2] and got[2] == pytest.approx(expected[2], rel=1e-12)


class TestReferenceIlluminant:
    def test_planckian_shape(self):
        """Planck's law with c₂ = 1.4388×10⁻² m·K has colour-science's blackbody shape (CIE 15:2004)."""
        wl = grid(360, 830, 1)
        sd = colour.sd_blackbody(3200, colour.SpectralShape(360, 830, 1))
        ref = np.asarray(sd.values) / np.interp(560, wl, sd.values) * 100
        np.testing.assert_allclose(planckian_spd(wl, 3200), ref, rtol=1e-10)

    @pytest.mark.parametrize("T", [4000.0, 5003.0, 6504.0, 7000.0, 9300.0, 25000.0])
    def test_daylight_equals_colour(self, T):
        """CIE daylight (CIE 15:2004 § 3.1, M1 M2 rounded) equals colour-science's D series at 5 nm, and
        its linear interpolation at 1 nm (linear, as the CIE's 1 nm D65 table: from memory)."""
        xy = colour.temperature.CCT_to_xy_CIE_D(T)
        s5 = colour.SpectralShape(380, 780, 5)
        ref = colour.sd_CIE_illuminant_D_series(xy, shape=s5)
        np.testing.assert_allclose(daylight_spd(s5.wavelengths, T), ref.values, rtol=1e-10, atol=1e-10)
        s1 = colour.SpectralShape(380, 780, 1)
        ref1 = colour.sd_CIE_illuminant_D_series(xy).copy().align(s1)  # its LinearInterpolator
        np.testing.assert_allclose(daylight_spd(s1.wavelengths, T), ref1.values, rtol=1e-10, atol=1e-10)

    def test_rule(self):
        """CIE 13.3: Planckian below 5000 K, daylight at 5000 K and above; SSI switches at 4000 K."""
        assert reference_illuminant(4999, WL5)[0] == "Planckian 4999 K"
        assert reference_illuminant(5000, WL5)[0] == "CIE daylight 5000 K"
        assert reference_illuminant(4500, WL5, daylight_from=4000)[0] == "CIE daylight 4500 K"

    def test_daylight_range(self):
        """CIE daylight is defined for 4000-25000 K only."""
        with pytest.raises(WorkbenchError, match=r"CIE daylight is defined for 4000-25000 K \(got 30000 K\)"):
            daylight_spd(WL5, 30000)


class TestLightIndices:
    # CIE 15:2004, Table T.8 (F1-F12 CCT and Ra) -- from memory; docs/methods.md §17
    CIE_TABLE = {1: (6430, 76), 2: (4230, 64), 3: (3450, 57), 4: (2940, 51), 5: (6350, 72), 6: (4150, 59),
                 7: (6500, 90), 8: (5000, 95), 9: (4150, 90), 10: (5000, 81), 11: (4000, 83), 12: (3000, 83)}

    # colour-science 0.4.7 CCT (Ohno 2013), whole kelvin (docs/methods.md §17)
    COLOUR_CCT = {1: 6428, 2: 4225, 3: 3446, 4: 2938, 5: 6345, 6: 4149, 7: 6495, 8: 4997, 9: 4149, 10: 4998,
                  11: 3999, 12: 3000}

    @pytest.mark.parametrize("i", range(1, 13))
    def test_fluorescent_Ra_and_CCT(self, i):
        """F1-F12: Ra and CCT equal colour-science's and lie within rounding of the CIE table."""
        r = light_indices(light(f"FL{i}"))
        sd = colour.SDS_ILLUMINANTS[f"FL{i}"]
        assert r.Ra == pytest.approx(colour.colour_rendering_index(sd), abs=1e-9)  # colour-science 0.4.7
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(sd.shape)
        uv = colour.UCS_to_uv(colour.XYZ_to_UCS(colour.sd_to_XYZ(sd, cmfs, method="Integration")))
        cct, duv = colour.uv_to_CCT(uv, method="Ohno 2013")  # CIE 15 summation at the table's 5 nm
        assert abs(r.CCT - self.COLOUR_CCT[i]) <= 1  # colour-science 0.4.7, to its whole-kelvin rounding (docs/methods.md §17)
        assert r.CCT == pytest.approx(cct, abs=1e-6) and r.Duv == pytest.approx(duv, abs=1e-9)
        table_cct, table_ra = self.CIE_TABLE[i]
        assert abs(r.CCT - table_cct) <= 15      # CIE 15:2004 Table T.8, from memory (10 K steps)
        assert abs(r.Ra - table_ra) <= 0.6       # CIE 13.3 / CIE 15 table, from memory; F8 95.53 vs 95
        assert len(r.R) == 14

    def test_colour_science_pins(self):
        """colour-science's own tests pin FL1 = 75.852828 and FL2 = 64.233724 (CIE 13.3-1995; docs/methods.md §17)."""
        assert light_indices(light("FL1")).Ra == pytest.approx(75.852828, abs=1e-5)
        assert light_indices(light("FL2")).Ra == pytest.approx(64.233724, abs=1e-5)

    def test_tm30_fl2(self):
        """TM-30-18 of FL2: Rf 70, Rg 86 (ANSI/IES TM-30-18 via colour-science's tests; docs/methods.md §17)."""
        r = light_indices(light("FL2"))
        assert round(r.Rf) == 70 and round(r.Rg) == 86
        assert r.Rf == pytest.approx(70.1, abs=0.05)  # CIE 2017 FL2 R_f 70.1 (colour tests)

    def test_ssi_C_against_D65(self):
        """SSI of illuminant C against D65 = 94 (94.183) (Academy SSI; colour-science's tests)."""
        r = light_indices(light("C"), ssi_reference="D65")
        assert r.SSI == 94 and r.SSI_unrounded == pytest.approx(94.183, abs=1e-3)
        assert r.SSI_reference == "D65 (chosen)"

    def test_ssi_auto_reference(self):
        """Automatic SSI reference: Planckian below 4000 K, daylight above; a blackbody scores 100."""
        bb = spd(grid(360, 830, 1), planckian_spd(grid(360, 830, 1), 3200.0))
        r = light_indices(bb)
        assert r.SSI == 100 and r.SSI_reference.startswith("Planckian 3200 K")
        d65 = light_indices(light("D65"))
        assert d65.SSI_reference == f"CIE daylight {d65.CCT:.0f} K (automatic)"

    def test_ssi_reference_spectra(self):
        """A reference given as an SPD is used as given (D65 itself scores 100)."""
        r = light_indices(light("D65"), ssi_reference=light("D65"))
        assert r.SSI == 100

    @pytest.mark.parametrize("name", ["A", "D65"])
    def test_references_score_100(self, name):
        """A and D65 as test lights have Ra ≈ 100 (CIE 13.3: the reference scores 100)."""
        r = light_indices(light(name))
        assert r.Ra == pytest.approx(100, abs=0.01) and min(r.R) > 99.9
        assert r.Rf == pytest.approx(100, abs=0.01)

    def test_blackbody_scores_100(self):
        """A blackbody at 2700 K: Ra ≈ 100, Rf ≈ 100, Duv ≈ 0 (CIE 13.3, CIE 224)."""
        wl = grid(360, 830, 1)
        r = light_indices(spd(wl, planckian_spd(wl, 2700.0)))
        assert r.Ra == pytest.approx(100, abs=0.01) and r.Rf == pytest.approx(100, abs=0.01)
        assert r.CCT == pytest.approx(2700, abs=1) and abs(r.Duv) < 1e-4  # Ohno 2014: within 1 K

    def test_A_cct(self):
        """Illuminant A: CCT 2855.5 K (c₂ change from 1.435 to 1.4388; CIE e-ILV, illuminant A; docs/methods.md §17)."""
        assert light_indices(light("A")).CCT == pytest.approx(2855.5, abs=0.5)

    def test_illuminance_of_absolute_spd(self):
        """lux = 683 Σ E V Δλ equals colour-science's luminous_flux; mW/cm² scale by 10."""
        s = read_light(LED)
        r = light_indices(s)
        sd = colour.SpectralDistribution(s.flat()[0], s.wavelengths)
        assert r.illuminance == pytest.approx(colour.luminous_flux(sd), rel=1e-4)
        assert r.illuminance_unit == "lx" and "683" in r.methods["illuminance"]
        r2 = light_indices(spd(s.wavelengths, s.flat()[0] / 10, units="mW/cm2/nm"))
        assert r2.illuminance == pytest.approx(r.illuminance, rel=1e-12)

    def test_relative_has_no_illuminance(self):
        """Relative units: no illuminance, and the notes say why."""
        r = light_indices(light("FL2"))
        assert r.illuminance is None and r.to_dict()["illuminance_lx"] is None
        assert any("not absolute" in n for n in r.notes)

    def test_every_number_names_its_method(self):
        """The JSON form carries the method of every index."""
        d = light_indices(light("FL2")).to_dict()
        assert {"CCT", "Duv", "Ra", "R", "Rf", "Rg", "SSI"} <= set(d["method"])
        assert "Ohno 2013" in d["method"]["CCT"] and "CIE 13.3" in d["method"]["Ra"]
        assert "CIE 224:2017" in d["method"]["Rf"] and "TM-30-18" in d["method"]["Rg"]

    def test_far_from_locus_warns(self):
        """A green LED far off the Planckian locus: |Duv| > 0.05 is said to make CCT meaningless (CIE 15)."""
        wl = grid(380, 780, 1)
        r = light_indices(spd(wl, np.exp(-0.5 * ((wl - 530) / 15) ** 2)))
        assert abs(r.Duv) > 0.05
        assert any("CCT is not meaningful" in w for w in r.warnings)

    def test_above_daylight_range(self):
        """A 40000 K blackbody: no automatic SSI reference (CIE daylight ends at 25000 K), said, not guessed."""
        wl = grid(360, 830, 1)
        r = light_indices(spd(wl, planckian_spd(wl, 40000.0), name="hot"))
        assert r.SSI is None and any(w.startswith("SSI: not computed (no automatic reference above 25000 K")
                                     for w in r.warnings)
        with pytest.raises(WorkbenchError, match=r"hot: CCT \d+ K lies above 25000 K, where CIE daylight"):
            camera_fidelity(gaussian_camera(), spd(wl, planckian_spd(wl, 40000.0), name="hot"))

    def test_no_visible_power(self):
        """An SPD of zeros is refused."""
        with pytest.raises(WorkbenchError, match=r"test: the SPD has no visible power"):
            light_indices(spd(WL5, np.zeros(81)))


class TestCameraFidelityScore:
    def test_half_point(self):
        """ΔE_a = 3.16 scores 50 (EBU Tech 3355 § 1.5.1; docs/methods.md §18)."""
        q, dea = camera_fidelity_score([3.16] * 5)
        assert float(q) == pytest.approx(50.0, abs=1e-12) and float(dea) == pytest.approx(3.16)

    def test_quartic_mean(self):
        """ΔE_a is the fourth-power mean: [2, 0] gives (16/2)^¼; no difference scores 100."""
        q, dea = camera_fidelity_score([2.0, 0.0])
        assert float(dea) == pytest.approx(8 ** 0.25, rel=1e-12)
        assert float(q) == pytest.approx(100 / (1 + (8 ** 0.25 / 3.16) ** 2.4), rel=1e-12)
        assert float(camera_fidelity_score(np.zeros(7))[0]) == 100.0

    def test_batch(self):
        """Leading axes are kept: (2, 3) → (2,)."""
        q, _ = camera_fidelity_score(np.array([[0.0, 0, 0], [3.16, 3.16, 3.16]]))
        np.testing.assert_allclose(q, [100.0, 50.0])


class TestCameraFidelity:
    def test_reference_against_itself(self):
        """The reference illuminant as test light scores exactly 100 on any camera."""
        wl = grid(360, 830, 1)
        for T in (3000.0, 6500.0):
            _, E = reference_illuminant(T, wl)
            for cam in (gaussian_camera(), luther_camera()):
                f = camera_fidelity(cam, spd(wl, E), cct=T)
                assert f.index == 100.0 and np.all(f.delta_E00 == 0)

    @pytest.mark.parametrize("name", ["A", "D65", "blackbody"])
    def test_cie_lights_score_100(self, name, design_camera):
        """A, D65 and a blackbody give the camera fidelity index 100 for any camera (to 0.01)."""
        wl = grid(360, 830, 1)
        s = spd(wl, planckian_spd(wl, 3400.0)) if name == "blackbody" else light(name)
        for cam in (gaussian_camera(), luther_camera(), design_camera):
            f = camera_fidelity(cam, s)
            assert f.index == pytest.approx(100.0, abs=0.01), cam.name
            assert f.delta_E00.max() < 0.05

    @pytest.mark.parametrize("name", ["FL2", "FL1"])
    def test_luther_camera_is_colorimetric(self, name):
        """A Luther camera's ΔE00 equals colour-science's: von Kries in BT.709 RGB, CIELAB, CIEDE2000.

        FL2 (4225 K) has a Planckian reference, FL1 (6426 K) a daylight one.
        """
        f = camera_fidelity(luther_camera(), light(name))
        shape = colour.SpectralShape(380, 780, 5)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
        if f.CCT < 5000:
            ref = colour.sd_blackbody(f.CCT, shape)
        else:
            ref = colour.sd_CIE_illuminant_D_series(colour.temperature.CCT_to_xy_CIE_D(f.CCT), shape=shape)
        samples = np.vstack([tcs_cie_13_3(WL5).flat(), ces_cie_224(WL5).flat()])
        msds = colour.MultiSpectralDistributions(samples.T, WL5)
        cs = colour.RGB_COLOURSPACES["ITU-R BT.709"]
        labs = []
        for E in (colour.SDS_ILLUMINANTS[name], ref):
            XYZ = colour.msds_to_XYZ(msds, cmfs, E, method="Integration", shape=shape) / 100
            XYZ_w = colour.sd_to_XYZ(colour.sd_ones(shape), cmfs, E, method="Integration") / 100
            RGB = colour.XYZ_to_RGB(XYZ, cs, chromatic_adaptation_transform=None)
            RGB_w = colour.XYZ_to_RGB(XYZ_w, cs, chromatic_adaptation_transform=None)
            XYZ_out = colour.RGB_to_XYZ(RGB / RGB_w, cs, chromatic_adaptation_transform=None)
            labs.append(colour.XYZ_to_Lab(XYZ_out, cs.whitepoint))
        ref_de = colour.delta_E(labs[0], labs[1], method="CIE 2000")
        np.testing.assert_allclose(f.delta_E00, ref_de, atol=1e-6)
        assert f.index < 99

    def test_xyz_luther_camera_is_cielab(self):
        """With x̄ȳz̄ as sensitivities and the CIE XYZ primaries (white E), the camera's ΔE00 is plain
        CIELAB ΔE00 of the samples, each light against its own white (CIE 15:2004 § 8.2.1)."""
        xyz = primaries_from_xy([[1, 0], [0, 1], [0, 0]], "E", name="CIE XYZ")
        np.testing.assert_allclose(xyz.matrix_RGB_to_XYZ, np.eye(3), atol=1e-15)
        cam = Camera("xyz", WL5, cmfs_on(WL5).values.T, np.eye(3), xyz)
        f = camera_fidelity(cam, light("FL2"))
        shape = colour.SpectralShape(380, 780, 5)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
        samples = np.vstack([tcs_cie_13_3(WL5).flat(), ces_cie_224(WL5).flat()])
        msds = colour.MultiSpectralDistributions(samples.T, WL5)
        labs = []
        for E in (colour.SDS_ILLUMINANTS["FL2"], colour.sd_blackbody(f.CCT, shape)):
            XYZ = colour.msds_to_XYZ(msds, cmfs, E, method="Integration", shape=shape) / 100
            XYZ_w = colour.sd_to_XYZ(colour.sd_ones(shape), cmfs, E, method="Integration") / 100
            labs.append(colour.XYZ_to_Lab(XYZ, colour.XYZ_to_xy(XYZ_w)))
        np.testing.assert_allclose(f.delta_E00, colour.delta_E(labs[0], labs[1], method="CIE 2000"), atol=1e-6)

    def test_result_shape_and_sets(self):
        """113 samples, 14 + 99 per set; a real camera under FL2 scores below 100."""
        f = camera_fidelity(gaussian_camera(), light("FL2"))
        assert f.delta_E00.shape == (113,) and f.uv_test.shape == (113, 2)
        counts = {k: v["count"] for k, v in f.by_set.items()}
        assert counts == {"CIE 13.3 TCS01-TCS14": 14, "CIE 224:2017 CES01-CES99": 99}
        assert 0 < f.index < 100
        assert f.reference == f"Planckian {f.CCT:.0f} K"
        d = f.to_dict()
        assert len(d["samples"]) == 113 and d["camera_fidelity_index"] == f.index
        json.loads(to_json(d))

    def test_camera_wider_than_light(self):
        """A camera reaching 360-830 nm with a light measured over 380-780 nm: evaluated where both exist, said."""
        wl = grid(360, 830, 5)
        cam = gaussian_camera(wl)
        f = camera_fidelity(cam, light("FL2"))
        assert any("evaluated over 380-780 nm only" in n for n in f.notes)

    def test_camera_grid_interpolated_to_light(self):
        """A 5 nm camera on a 1 nm light: sensitivities exact at 5 nm points, Sprague between (notes)."""
        f = camera_fidelity(gaussian_camera(), read_light(LED))
        assert any("exact at its own grid points" in n for n in f.notes)


class TestCompareLights:
    def test_same_light(self):
        """A light against itself: zero everywhere, a match to the eye and on camera."""
        c = compare_lights(light("FL2"), light("FL2"), camera=gaussian_camera())
        assert c.delta_u_prime_v_prime == 0
        for m in c.modes.values():
            assert np.all(m.eye == 0) and np.all(m.camera == 0)
            assert m.verdict == "match to the eye and on camera"

    def test_eye_definitions_against_colour(self):
        """Eye side by side = CIELAB against A's white; each adapted = Bradford to D65, CIELAB against D65."""
        a, b = light("FL2"), light("FL11")
        c = compare_lights(a, b)
        shape = colour.SpectralShape(380, 780, 5)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
        msds = colour.MultiSpectralDistributions(
            np.vstack([tcs_cie_13_3(WL5).flat(), ces_cie_224(WL5).flat()]).T, WL5)
        X, W = [], []
        for n in ("FL2", "FL11"):
            E = colour.SDS_ILLUMINANTS[n]
            X.append(colour.msds_to_XYZ(msds, cmfs, E, method="Integration", shape=shape))
            W.append(colour.sd_to_XYZ(colour.sd_ones(shape), cmfs, E, method="Integration"))
        xy_a = colour.XYZ_to_xy(W[0])
        side = colour.delta_E(colour.XYZ_to_Lab(X[0] / 100, xy_a), colour.XYZ_to_Lab(X[1] / 100, xy_a),
                              method="CIE 2000")
        np.testing.assert_allclose(c.modes["side-by-side"].eye, side, atol=1e-6)
        d65 = colour.xy_to_XYZ([0.3127, 0.3290]) * 100
        adapted = [colour.adaptation.chromatic_adaptation_VonKries(x, w, d65, transform="Bradford")
                   for x, w in zip(X, W)]
        own = colour.delta_E(*(colour.XYZ_to_Lab(x / 100, [0.3127, 0.3290]) for x in adapted), method="CIE 2000")
        np.testing.assert_allclose(c.modes["each-adapted"].eye, own, atol=1e-6)
        uv = [colour.xy_to_Luv_uv(colour.XYZ_to_xy(w)) for w in W]
        assert c.delta_u_prime_v_prime == pytest.approx(float(np.hypot(*(uv[0] - uv[1]))), abs=1e-9)

    def test_luther_camera_balanced_on_a(self):
        """A Luther camera balanced on A renders B's white off by what colorimetry says (von Kries in RGB)."""
        c = compare_lights(light("FL2"), light("FL11"), camera=luther_camera())
        side = c.modes["side-by-side"]
        assert side.white_camera > 0 and side.white_eye > 0
        assert c.modes["each-adapted"].white_camera == 0.0
        # same samples, same lights: the camera comparison is of the same order as the eye's
        assert 0.3 < side.camera_mean / side.eye_mean < 3

    def test_verdicts(self):
        """Flags follow the stated thresholds (match ≤ 1, differ ≥ 2 on the means)."""
        assert _verdict(0.5, 2.5, 1, 2) == "match to the eye but not on camera"
        assert _verdict(2.5, 0.5, 1, 2) == "match on camera but not to the eye"
        assert _verdict(0.5, 0.9, 1, 2) == "match to the eye and on camera"
        assert _verdict(2.0, 2.0, 1, 2) == "differ to the eye and on camera"
        assert _verdict(1.5, 0.5, 1, 2) == "no clear verdict (a mean ΔE00 between the thresholds)"
        assert _verdict(0.5, None, 1, 2) == "match to the eye (no camera given)"

    def test_sample_flags(self):
        """Per-sample lists hold the samples matching to the eye (≤ match) but differing on camera (≥ differ)."""
        c = compare_lights(light("FL2"), light("FL11"), camera=gaussian_camera(), match=0.8, differ=1.2)
        m = c.modes["each-adapted"]
        names = np.array(c.sample_names)
        want = set(names[(m.eye <= 0.8) & (m.camera >= 1.2)])
        assert set(m.eye_not_camera) == want
        assert set(m.camera_not_eye) == set(names[(m.camera <= 0.8) & (m.eye >= 1.2)])

    def test_thresholds_checked(self):
        """match must be below differ."""
        with pytest.raises(WorkbenchError, match=r"thresholds must satisfy 0 <= match < differ \(got match 2, differ 1\)"):
            compare_lights(light("FL2"), light("FL2"), match=2, differ=1)

    def test_grids_merged(self):
        """A 1 nm and an irregular light are compared on a common 1 nm grid over their overlap."""
        c = compare_lights(read_light(LED), read_light(HALOGEN))
        assert c.delta_u_prime_v_prime > 0.01
        assert c.modes["side-by-side"].camera is None


class TestLightReport:
    def test_contract(self, design_camera):
        """The report dict holds the CLI contract keys, the caution, the camera index and per-sample ΔE00."""
        r = light_report(read_light(LED), camera=design_camera, compare=read_light(HALOGEN))
        d = json.loads(to_json(r.to_dict()))
        assert {"CCT", "Duv", "Ra", "R", "Rf", "Rg", "SSI", "caution"} <= set(d)
        assert len(d["R"]) == 14 and d["caution"] == CAUTION and "IEC 62471" in CAUTION
        assert 0 < d["camera_fidelity_index"] <= 100 and len(d["camera_delta_E00"]) == 113
        assert set(d["compare"]["modes"]) == {"side-by-side", "each-adapted"}
        assert "Tech 3355" in d["method"]["camera_fidelity_index"]
        assert "IEC 62471" in r._repr_html_()


class TestLightPanel:
    @pytest.mark.slow  # builds the light panel on the demo and draws every figure
    def test_opens_on_demo_data(self):
        """The panel evaluates the demo LED on a camera with the halogen as light B; each tab draws its figures when shown."""
        from workbench.widgets.common import output_png
        from workbench.widgets.light import LightPanel

        p = LightPanel(camera=gaussian_camera())
        assert p.status.text.startswith("evaluated luminaire_led_export on gaussian") and not p.status.is_error
        assert "IEC 62471" in p.caution.value and "Ohno 2013" in p.indices.value
        assert output_png(p.spd_plot)[:8] == output_png(p.special_plot)[:8] == b"\x89PNG\r\n\x1a\n"
        assert output_png(p.delta_e_plot) is None and output_png(p.compare_plot) is None  # drawn when shown
        p.tabs.selected_index = 1
        assert output_png(p.delta_e_plot)[:8] == output_png(p.shift_plot)[:8] == b"\x89PNG\r\n\x1a\n"
        p.tabs.selected_index = 2
        assert output_png(p.compare_plot)[:8] == b"\x89PNG\r\n\x1a\n"
        assert "Camera fidelity index" in p.camera_table.value and "verdict" in p.compare_table.value

    def test_errors_are_one_line(self, tmp_path):
        """A bad path or file shows the CLI's one-line error; the last good report stays."""
        from workbench.widgets.light import LightPanel

        p = LightPanel(compare="", camera="", evaluate=False)
        p.light_path.value = str(tmp_path / "missing.csv")
        assert p.evaluate() is None
        assert p.status.is_error and p.status.text == f"error: {tmp_path / 'missing.csv'}: cannot read: No such file or directory"
        p.light_path.value = str(DEMO / "lens.csv")
        p.evaluate()
        assert p.status.text.startswith("error: ") and "\n" not in p.status.text

    @pytest.mark.slow  # builds the light panel and draws its figures
    def test_upload(self):
        """An uploaded SPD is evaluated at once and named by its file name."""
        from workbench.widgets.common import upload_entry
        from workbench.widgets.light import LightPanel

        p = LightPanel(compare="", camera="", evaluate=False)
        p.light_upload.value = (upload_entry("fixture.csv", LED.read_bytes()),)
        assert p.report is not None and p.report.indices.name == "fixture"
        assert p.report.camera is None and "No camera given" in p.camera_table.value
