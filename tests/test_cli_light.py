"""Tests of ``workbench light`` through workbench.cli.main.main."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from workbench import demo_dir
from workbench.cli.main import main
from workbench.analysis.light import CAUTION, light_indices, read_light
from workbench.model.spectra import Spectra, grid
from workbench.fileio.spectra_csv import write_spectra_csv

DEMO = demo_dir()
LED = str(DEMO / "luminaire_led_export.csv")
HALOGEN = str(DEMO / "luminaire_halogen_3200K.csv")
DESIGN = str(DEMO / "tern3_design.toml")


def run_json(capsys, *args):
    assert main(["light", *args, "--format", "json"]) == 0
    return json.loads(capsys.readouterr().out)


def sensitivity_csv(path: Path, wl=None) -> Path:
    """The open synthetic Gaussian camera (docs/methods.md §8) as a three-column sensitivity CSV."""
    wl = grid(380, 780, 5) if wl is None else wl
    S = np.stack([np.exp(-0.5 * ((wl - p) / s) ** 2) for p, s in ((610, 30), (540, 35), (450, 25))])
    write_spectra_csv(Spectra(wl, S, ("R", "G", "B"), kind="sensitivity", units="relative"), path)
    return path


def one_error_line(capsys) -> str:
    err = capsys.readouterr().err.strip().splitlines()
    assert "Traceback" not in "\n".join(err)
    assert err and err[-1].startswith("error: ")
    assert sum(line.startswith("error:") for line in err) == 1
    return err[-1]


class TestJsonContract:
    def test_indices(self, capsys):
        """JSON holds CCT, Duv, Ra, R (14), Rf, Rg, SSI, caution, each with its method, equal to the library's."""
        out = run_json(capsys, LED)
        assert {"CCT", "Duv", "Ra", "R", "Rf", "Rg", "SSI", "caution", "method"} <= set(out)
        assert len(out["R"]) == 14 and out["caution"] == CAUTION
        ref = light_indices(read_light(LED))
        for k in ("CCT", "Duv", "Ra", "Rf", "Rg", "SSI"):
            assert out[k] == pytest.approx(getattr(ref, k), rel=1e-12), k
            assert k in out["method"]
        assert out["illuminance_lx"] == pytest.approx(ref.illuminance, rel=1e-12)
        assert "camera_fidelity_index" not in out

    def test_with_design_camera(self, capsys):
        """--camera DESIGN.toml adds the camera fidelity index and the ΔE00 of all 113 samples."""
        out = run_json(capsys, HALOGEN, "--camera", DESIGN)
        # a 3200 K halogen (Planck's law) against its Planckian reference scores 100 on any camera
        assert out["camera_fidelity_index"] == pytest.approx(100.0, abs=0.01)
        assert len(out["camera_delta_E00"]) == 113 and max(out["camera_delta_E00"].values()) < 0.01
        assert "Tech 3355" in out["method"]["camera_fidelity_index"]
        assert out["camera"]["reference"].startswith("Planckian 3200 K")

    def test_with_sensitivity_csv(self, capsys, tmp_path):
        """--camera SENS.csv loads three sensitivities; the LED scores below 100 on them."""
        f = sensitivity_csv(tmp_path / "gauss.csv")
        out = run_json(capsys, LED, "--camera", str(f))
        assert 0 < out["camera_fidelity_index"] < 100
        assert out["camera"]["camera"] == "gauss"

    def test_compare(self, capsys):
        """--compare adds Δu′v′ and both comparison modes with verdicts."""
        out = run_json(capsys, LED, "--compare", HALOGEN, "--camera", DESIGN)
        c = out["compare"]
        assert c["delta_u_prime_v_prime"] > 0.01
        for m in c["modes"].values():
            assert m["verdict"] and m["camera"]["mean"] > 0 and len(m["per_sample"]) == 113
        assert c["thresholds"]["match_delta_E00"] == 1.0 and c["thresholds"]["differ_delta_E00"] == 2.0

    def test_ssi_reference_choice(self, capsys):
        """--ssi-reference takes a CIE name or an SPD file."""
        assert run_json(capsys, LED, "--ssi-reference", "D65")["SSI_reference"] == "D65 (chosen)"
        out = run_json(capsys, LED, "--ssi-reference", LED)
        assert out["SSI"] == 100 and out["SSI_reference"].endswith("(given)")


class TestTable:
    def test_table_names_units_methods_and_caution(self, capsys):
        """The table starts with the caution and names each number's unit and method; notes go to stderr."""
        assert main(["light", LED, "--camera", DESIGN, "--compare", HALOGEN]) == 0
        cap = capsys.readouterr()
        lines = cap.out.splitlines()
        assert lines[0] == f"caution: {CAUTION}"
        assert any(line.startswith("CCT") and " K " in line and "Ohno 2013" in line for line in lines)
        assert any(line.startswith("camera fidelity index") for line in lines)
        assert "verdict" in cap.out and "Δu′v′" in cap.out
        assert "note:" in cap.err and "caution:" in cap.err

    @pytest.mark.slow  # draws every light figure
    def test_figures(self, tmp_path, capsys):
        """--figures DIR writes the PNG figures."""
        d = tmp_path / "figs"
        assert main(["light", LED, "--camera", DESIGN, "--compare", HALOGEN, "--figures", str(d)]) == 0
        names = sorted(p.name for p in d.iterdir())
        assert names == [".workbench-output", "camera-delta-e00.png", "camera-shifts-uv.png", "compare-each-adapted.png",
                         "compare-side-by-side.png", "light-spd.png", "light-special-indices.png"]
        assert all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in d.glob("*.png"))


class TestBadInput:
    def test_missing_file(self, capsys):
        """A missing SPD: one line naming the file, exit 2."""
        assert main(["light", "/no/such/spd.csv"]) == 2
        assert one_error_line(capsys) == "error: /no/such/spd.csv: cannot read: No such file or directory"

    def test_percent_emission(self, capsys):
        """A transmittance file is not an SPD: refused naming the file and --kind."""
        assert main(["light", str(DEMO / "lens.csv")]) == 2
        assert one_error_line(capsys) == (
            f"error: {DEMO / 'lens.csv'}: holds transmittance (so says the header 'lens T%'), but "
            "`workbench light` takes emission; pass --kind emission if it is one")

    def test_two_spectra(self, tmp_path, capsys):
        """Two spectra without --spectrum: named, exit 2; with --spectrum it runs."""
        f = tmp_path / "two.csv"
        f.write_text("wavelength_nm,a,b\n" + "".join(f"{w},{w / 500},{1}\n" for w in range(380, 781, 5)))
        assert main(["light", str(f)]) == 2
        assert one_error_line(capsys) == (f"error: {f}: holds 2 spectra (a, b); expected one SPD, or name one "
                                          "(--spectrum NAME)")
        assert main(["light", str(f), "--spectrum", "b", "--format", "json"]) == 0

    def test_short_range(self, tmp_path, capsys):
        """An SPD over 400-700 nm is refused unless --extrapolate constant."""
        f = tmp_path / "short.csv"
        f.write_text("wavelength_nm,lamp\n" + "".join(f"{w},{1 + w / 1000}\n" for w in range(400, 701, 5)))
        assert main(["light", str(f)]) == 2
        assert one_error_line(capsys) == (
            f"error: {f}: the SPD covers 400-700 nm but the indices need 380-780 nm (CIE 15:2004, "
            "CIE 224:2017); allow constant extrapolation (CIE 167) with --extrapolate constant")
        assert main(["light", str(f), "--extrapolate", "constant", "--format", "json"]) == 0
        assert "extrapolated" in capsys.readouterr().err

    def test_bad_row(self, tmp_path, capsys):
        """A cell that is not a number: the reader's line and column."""
        f = tmp_path / "bad.csv"
        rows = [f"{w},{1}" for w in range(380, 781, 5)]
        rows[10] = "430,n/a"
        f.write_text("wavelength_nm,lamp\n" + "\n".join(rows) + "\n")
        assert main(["light", str(f)]) == 2
        assert one_error_line(capsys).startswith(f"error: {f}, line 12, column 'lamp'")

    def test_unknown_ssi_reference(self, capsys):
        """An unknown SSI reference name: the choices, exit 2."""
        assert main(["light", LED, "--ssi-reference", "D99"]) == 2
        assert one_error_line(capsys) == ("error: SSI reference must be 'auto', a CIE illuminant name "
                                          "(A, D50, D65, ...) or an SPD file (got 'D99')")

    def test_thresholds(self, capsys):
        """--match must be below --differ."""
        assert main(["light", LED, "--match", "3", "--differ", "2"]) == 2
        assert one_error_line(capsys) == "error: --match and --differ must satisfy 0 <= match < differ (got 3 and 2)"

    def test_missing_camera(self, capsys):
        """A missing camera file: one line naming it."""
        assert main(["light", LED, "--camera", "/no/cam.toml"]) == 2
        assert one_error_line(capsys) == "error: /no/cam.toml: cannot read: No such file or directory"

    def test_camera_csv_with_two_columns(self, tmp_path, capsys):
        """A sensitivity CSV must hold R, G and B."""
        f = tmp_path / "two.csv"
        f.write_text("wavelength_nm,R,G\n" + "".join(f"{w},{0.5},{0.5}\n" for w in range(380, 781, 5)))
        assert main(["light", LED, "--camera", str(f)]) == 2
        assert "expected three sensitivity columns R, G, B (got 2" in one_error_line(capsys)
