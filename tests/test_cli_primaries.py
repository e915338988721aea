"""`workbench primaries`: the JSON contract, tables, colour bars, targets CSV, emitters, errors."""

import json

import colour
import numpy as np
import pytest

from workbench.cli.main import main
from workbench.colorimetry.emitters import Band, Emitter, emitter_spectra
from workbench.colorimetry.primaries import PRIMARIES
from workbench.model.spectra import Spectra, grid
from workbench.fileio.spectra_csv import read_spectra_csv, write_spectra_csv
from workbench.colorimetry.targets import target_cmfs


def _json(capsys, argv):
    assert main(argv) == 0
    return json.loads(capsys.readouterr().out)


class TestContract:
    def test_issue_example(self, capsys):
        """The issue's invocation: NTSC chromaticities, white C → 0.299/0.587/0.114 (ITU-R BT.601-7)."""
        d = _json(capsys, ["primaries", "--xy", "0.67,0.33,0.21,0.71,0.14,0.08", "--white", "C", "--format", "json"])
        for key in ("rgb_to_xyz", "luminance_coefficients", "white_xy", "gamut_area_xy", "gamut_area_uv"):
            assert key in d
        assert np.array(d["rgb_to_xyz"]).shape == (3, 3)
        assert np.round(d["luminance_coefficients"], 3).tolist() == [0.299, 0.587, 0.114]
        np.testing.assert_allclose(d["white_xy"], colour.CCS_ILLUMINANTS["CIE 1931 2 Degree Standard Observer"]["C"])

    def test_named_set(self, capsys):
        """--set ITU-R-BT.709 gives colour's BT.709 NPM (reference library) and its inverse."""
        d = _json(capsys, ["primaries", "--set", "ITU-R-BT.709", "--format", "json"])
        cs = colour.RGB_COLOURSPACES["ITU-R BT.709"]
        np.testing.assert_allclose(d["rgb_to_xyz"], colour.normalised_primary_matrix(cs.primaries, cs.whitepoint),
                                   atol=1e-12)
        np.testing.assert_allclose(np.array(d["xyz_to_rgb"]) @ np.array(d["rgb_to_xyz"]), np.eye(3), atol=1e-12)
        assert d["coverage"]["ITU-R BT.709"] == {"xy": pytest.approx(1.0), "uv": pytest.approx(1.0)}

    def test_positional_name_table(self, capsys):
        """A positional name prints the table with units and methods."""
        assert main(["primaries", "bt2020"]) == 0
        out = capsys.readouterr().out
        assert "K_R 0.26270" in out  # ITU-R BT.2020-2, Table 4: 0.2627
        assert "SMPTE RP 177" in out and "CIE 1976 u′v′ units²" in out

    def test_white_override(self, capsys):
        """--white replaces a named set's white and says so in the source."""
        d = _json(capsys, ["primaries", "bt709", "--white", "D50", "--format", "json"])
        assert d["white_name"] == "D50" and "white replaced by D50" in d["source"]


class TestBars:
    def test_json_bt709_75(self, capsys):
        """75 % BT.709 bars' 8-bit codes equal colour.RGB_to_YCbCr's (reference library; ITU-R BT.709-6 item 6.10; docs/methods.md §7)."""
        d = _json(capsys, ["primaries", "--bars", "--luma", "BT.709", "--bar-amplitude", "75", "--format", "json"])
        assert [r["bar"] for r in d["bars"]][:3] == ["white", "yellow", "cyan"]
        ref = colour.RGB_to_YCbCr(np.array([0.75, 0.75, 0.0]), K=colour.WEIGHTS_YCBCR["ITU-R BT.709"],
                                  out_bits=8, out_legal=True, out_int=True)
        y = d["bars"][1]
        assert [y["Y8"], y["Cb8"], y["Cr8"]] == ref.tolist()

    def test_csv(self, capsys):
        """--format csv prints a header and 8 bars."""
        assert main(["primaries", "--bars", "--luma", "BT.601", "--format", "csv"]) == 0
        lines = capsys.readouterr().out.strip().splitlines()
        assert lines[0].startswith("bar,R',G',B',Y'") and len(lines) == 9

    def test_luma_from_primaries(self, capsys):
        """Bars of a named set use its RP 177 coefficients by default."""
        d = _json(capsys, ["primaries", "NTSC-1953", "--bars", "--format", "json"])
        assert np.round(d["luma_coefficients"], 3).tolist() == [0.299, 0.587, 0.114]  # ITU-R BT.601-7


class TestTargets:
    def test_writes_csv(self, tmp_path, capsys):
        """--targets writes r̄ḡb̄ that read back equal to target_cmfs."""
        out = tmp_path / "targets.csv"
        assert main(["primaries", "bt709", "--targets", str(out), "--observer", "10", "--grid", "400,700,10"]) == 0
        assert "wrote target colour-matching functions" in capsys.readouterr().err
        s = read_spectra_csv(out)
        ref = target_cmfs(PRIMARIES["ITU-R BT.709"], grid(400, 700, 10), "10")
        assert s.kind == "sensitivity" and s.names == ref.names
        np.testing.assert_allclose(s.values, ref.values, atol=1e-12)


class TestEmitters:
    def test_drive_levels(self, tmp_path, capsys):
        """--emitters gives the emitters' primaries and drive levels for the white."""
        wl = grid(380, 780, 5)
        em = [Emitter("R", (Band("gaussian", 620, 30, 0.01),)), Emitter("G", (Band("gaussian", 535, 40, 0.01),)),
              Emitter("B", (Band("gaussian", 455, 25, 0.01),))]
        s = emitter_spectra(em, wl)
        path = tmp_path / "em.csv"
        write_spectra_csv(Spectra(wl, s.values, s.names, kind="emission", units="W/(sr m2 nm)"), path)
        d = _json(capsys, ["primaries", "--emitters", str(path), "--luminance", "100", "--format", "json"])
        dl = d["drive_levels"]
        XYZ = np.array(dl["drive_levels"]) @ np.array(dl["XYZ_emitters_full_drive"])
        np.testing.assert_allclose(XYZ[1], 100.0)
        np.testing.assert_allclose(XYZ[:2] / XYZ.sum(), d["white_xy"], atol=1e-12)


class TestErrors:
    @pytest.mark.parametrize("argv,msg", [
        (["primaries", "bt709", "--xy", "0.6,0.3,0.3,0.6,0.15,0.06"], "give one set"),
        (["primaries", "--xy", "0.6,0.3,0.3"], "--xy must be 6 comma-separated numbers (got 3)"),
        (["primaries", "--xy", "a,b,c,d,e,f"], "--xy must be 6 comma-separated numbers"),
        (["primaries", "P9"], "unknown primaries set 'P9'"),
        (["primaries"], "give a set"),
        (["primaries", "bt709", "--format", "csv"], "--format csv is for --bars"),
        (["primaries", "--xy", "0.64,0.33,0.3,0.6,0.15,0.06", "--white", "Q7"], "unknown white 'Q7'"),
    ])
    def test_one_line_error(self, capsys, argv, msg):
        """User mistakes end with status 2 and one line starting 'error:'."""
        assert main(argv) == 2
        err = capsys.readouterr().err.strip()
        assert err.startswith("error: ") and msg in err and "\n" not in err
