"""`workbench recipe`: the idealised splitter faces as layer tables, JSON, the output folder, rejections."""

from __future__ import annotations

import json

import numpy as np
import pytest

from workbench.cli.main import main


def _run(capsys, argv):
    status = main(argv)
    out = capsys.readouterr()
    return status, out.out, out.err


class TestRecipeCommand:
    def test_json_and_layer_tables(self, capsys, demo_design_path, tmp_path):
        """JSON names both faces with their layers; --out writes tables that `workbench coating` reads back."""
        out = tmp_path / "rec"
        status, text, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "4", "--evaluations", "2",
                                          "--tolerance-trials", "20", "--format", "json", "--out", str(out)])
        assert status == 0, err
        d = json.loads(text)
        assert [f["face"] for f in d["faces"]] == ["blue-green", "green-red"]
        blue = d["faces"][0]
        assert len(blue["layers"]) == 9 and blue["layers"][0]["material"] == "SiO2"
        assert sorted(p.name for p in out.iterdir() if not p.name.startswith(".")) == [
            "design.toml", "face-blue-green.csv", "face-blue-green.png", "face-green-red.csv", "face-green-red.png",
            "layers-blue-green.png", "layers-green-red.png", "recipes.json"]
        assert (out / "layers-blue-green.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        shares = d["layer_tolerance"]["blue-green"]["trial_shares"]
        assert shares["settings"]["trials"] == 20 and 0 < shares["noise_floor"] < 1
        assert shares["layers_above_floor"] == sum(r["above_floor"] for r in d["layer_tolerance"]["blue-green"]["ranking"])
        assert set(d["measures"]["mean_delta_E00"]) == {"daylight", "tungsten", "stage-led"}
        # the two edge types split s and p in opposite senses (this project's issue 19; Macleod 2010, ch. 6)
        blue_at = [r for r in blue["edge_vs_angle"] if r["angle_deg"] == 25.0][0]
        red_at = [r for r in d["faces"][1]["edge_vs_angle"] if r["angle_deg"] == 12.0][0]
        assert blue_at["s_nm"] > blue_at["p_nm"] and red_at["s_nm"] < red_at["p_nm"]
        ranking = d["layer_tolerance"]["blue-green"]["ranking"]
        assert len(ranking) == 9 and sum(r["share"] for r in ranking) == pytest.approx(1.0)
        from workbench.fileio.design_toml import load_design

        coated = load_design(out / "design.toml")
        assert [e.type for e in coated.chain].count("coating") == 2
        assert "prism-blue-green.layer_9_nm" in coated.parameters()
        status, csv_text, err = _run(capsys, ["coating", str(out / "face-blue-green.csv"), "--incident", "1.52",
                                              "--substrate", "1.52", "--grid", "450:550:50", "--format", "csv"])
        assert status == 0, err
        thick = [layer["thickness_nm"] for layer in blue["layers"]]
        from workbench.fileio.layers_csv import read_layer_table

        rows = read_layer_table(out / "face-blue-green.csv")
        np.testing.assert_allclose([r.thickness_nm for r in rows], thick, atol=1e-3)

    def test_non_monotone_transition_flagged(self, capsys, demo_design_path):
        """A 20-period starting stack in glass ripples above 50 % by its edge: a note, a starred span, no single edge."""
        status, text, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "20", "--evaluations", "0",
                                          "--tolerance-trials", "0"])
        assert status == 0, err
        assert "note: the blue-green face's transition at 25° is not monotone for s, p, mean" in err
        line = next(x for x in text.splitlines() if x.startswith("# 50 % point") and "25°" in x)
        assert "25° 492.4–514.0* / " in line                 # first and last crossing, starred
        assert "#   * non-monotone transition" in text and "# ripple at 25°, chief ray, s / p / mean" in text
        status, text, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "20", "--evaluations", "0",
                                          "--tolerance-trials", "0", "--format", "json"])
        at = [r for r in json.loads(text)["faces"][0]["edge_vs_angle"] if r["angle_deg"] == 25.0][0]
        assert at["s_nm"] is None and at["s"]["monotone"] is False and len(at["s"]["crossings_nm"]) > 1
        assert at["s"]["band_edge_nm"] == at["s"]["crossings_nm"][0] and at["s"]["pass_ripple_pct"] > 10.0

    @pytest.mark.parametrize("extra, message", [
        (["--keep-free"], "error: '--keep-free' needs --free-layers\n"),
        (["--free-layers"], "error: '--free-layers' needs --out (it writes DIR/design.toml)\n"),
    ])
    def test_rejects_layer_options_that_would_do_nothing(self, capsys, demo_design_path, extra, message):
        """--keep-free without --free-layers, or --free-layers without --out, is refused, not ignored."""
        status, out, err = _run(capsys, ["recipe", str(demo_design_path), *extra])
        assert status == 2 and out == "" and err == message

    def test_rejects_design_without_splitter(self, capsys, tmp_path, demo_design_path):
        """A design without a dichroic-splitter is refused in one line."""
        text = demo_design_path.read_text()
        start = text.index('[[chain]]\nname = "prism"')
        end = text.index("[[chain]]", start + 5)
        p = tmp_path / "no_splitter.toml"
        demo = demo_design_path.parent.as_posix()
        p.write_text((text[:start] + text[end:]).replace('file = "', f'file = "{demo}/'))
        status, out, err = _run(capsys, ["recipe", str(p)])
        assert status == 2 and out == ""
        assert err.startswith("error: ") and "must have a dichroic-splitter element" in err and err.count("\n") == 1

    def test_free_layers_design_refits(self, capsys, demo_design_path, tmp_path):
        """--free-layers writes every layer free within --layer-range, the rest fixed; `workbench fit` runs on it."""
        from workbench.fileio.design_toml import load_design

        out = tmp_path / "rec"
        status, _, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "3", "--evaluations", "1",
                                       "--tolerance-trials", "0", "--free-layers", "--layer-range", "0.1",
                                       "--out", str(out)])
        assert status == 0, err
        original = load_design(demo_design_path)
        assert original.free_parameters()                # the demo has free parameters to fix
        coated = load_design(out / "design.toml")
        free = coated.free_parameters()
        layers = {k: p for k, p in coated.parameters().items() if ".layer_" in k}
        assert len(layers) == 2 * 7 and set(free) == set(layers)   # 2N + 1 layers per face, nothing else free
        for p in free.values():
            assert p.min == pytest.approx(0.9 * p.value, abs=2e-4) and p.max == pytest.approx(1.1 * p.value, abs=2e-4)
        for k, p in original.free_parameters().items():
            if k in coated.parameters():
                assert coated.parameters()[k].value == p.value
        status, _, err = _run(capsys, ["fit", str(out / "design.toml"), "--out", str(tmp_path / "refit"),
                                       "--max-evaluations", "3", "--no-report", "--quiet"])
        assert status in (0, 3), err                     # converged, or the small budget spent
        # --keep-free keeps the design's free parameters free beside the layers
        out2 = tmp_path / "rec2"
        status, _, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "3", "--evaluations", "1",
                                       "--tolerance-trials", "0", "--free-layers", "--keep-free", "--out", str(out2)])
        assert status == 0, err
        kept = load_design(out2 / "design.toml").free_parameters()
        carried = set(original.free_parameters()) & set(coated.parameters())   # those not on the splitter
        assert carried and set(kept) == set(layers) | carried

    @pytest.mark.parametrize("value", ["0", "1", "-0.2", "1.5", "nan"])
    def test_rejects_bad_layer_range(self, capsys, demo_design_path, value):
        """--layer-range outside (0, 1) is refused in one line."""
        status, out, err = _run(capsys, ["recipe", str(demo_design_path), "--layer-range", value])
        assert status == 2 and out == ""
        assert err.startswith("error: --layer-range must be in (0, 1)") and err.count("\n") == 1

    @pytest.mark.parametrize("argv, message", [
        (["--smoothness", "-1"], "error: --smoothness must be a weight 0-1000 (got -1)\n"),
        (["--smoothness", "nan"], "error: --smoothness must be a weight 0-1000 (got nan)\n"),
        (["--periods", "6", "--apodise", "4"], "error: --apodise must be 0-3, half of --periods at most (got 4)\n"),
    ])
    def test_rejects_bad_smoothness_and_apodise(self, capsys, demo_design_path, argv, message):
        """A negative or NaN ripple weight, or more tapered periods than half the stack, is refused in one line."""
        status, out, err = _run(capsys, ["recipe", str(demo_design_path), *argv])
        assert status == 2 and out == "" and err == message

    def test_rejects_bad_periods(self, capsys, demo_design_path):
        """--periods outside 1-200 is refused."""
        status, out, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "0"])
        assert status == 2 and err == "error: --periods must be 1-200 (got 0)\n"


class TestRecipeWithUserMaterialTable:
    def _work(self, tmp_path, demo_design_path):
        """The demo design saved into work/, with a trim coating on a user n,k table work/nk/mix.csv."""
        import tomllib

        import tomli_w

        from workbench.fileio.design_toml import load_design, save_design

        work = tmp_path / "work"
        (work / "nk").mkdir(parents=True)
        save_design(load_design(demo_design_path), work / "design.toml")
        raw = tomllib.loads((work / "design.toml").read_text())
        raw["chain"].append({"name": "mix-trim", "type": "coating", "paths": ["G"], "layers": "(0.5L M 0.5L)^3",
                             "materials": {"M": {"file": "nk/mix.csv"}, "L": "SiO2"}, "reference_nm": 380.0})
        (work / "design.toml").write_text(tomli_w.dumps(raw))
        (work / "nk" / "mix.csv").write_text(
            "wavelength_nm,n,k\n" + "".join(f"{w},{2.0 + 0.02 * (550 / w) ** 2:.6f},0\n" for w in range(350, 860, 10)))
        return work

    def test_out_rewrites_the_table_path(self, capsys, demo_design_path, tmp_path):
        """recipe --out writes the coated design with the n,k table named relative to the output folder."""
        import tomllib

        from workbench.fileio.design_toml import load_design

        work = self._work(tmp_path, demo_design_path)
        status, _, err = _run(capsys, ["recipe", str(work / "design.toml"), "--periods", "2", "--evaluations", "0",
                                       "--tolerance-trials", "0", "--format", "json", "--out",
                                       str(tmp_path / "rec")])
        assert status == 0, err
        saved = tomllib.loads((tmp_path / "rec" / "design.toml").read_text())
        trim = [e for e in saved["chain"] if e["name"] == "mix-trim"][0]
        assert trim["materials"] == {"M": {"file": "../work/nk/mix.csv"}, "L": "SiO2"}
        coated = load_design(tmp_path / "rec" / "design.toml")
        assert np.all(np.isfinite(coated.model().sensitivities()))

    def test_missing_table_is_one_line(self, capsys, demo_design_path, tmp_path):
        """A missing n,k table: one line naming design, element, key and file; exit status 2."""
        work = self._work(tmp_path, demo_design_path)
        (work / "nk" / "mix.csv").unlink()
        status, _, err = _run(capsys, ["recipe", str(work / "design.toml"), "--periods", "2", "--evaluations", "0",
                                       "--tolerance-trials", "0", "--format", "json"])
        assert status == 2
        assert err.strip().splitlines()[-1] == (
            f"error: {work / 'design.toml'}: chain[9].materials.M: expected an n,k table (CSV: wavelength_nm, n, k) "
            "relative to the design file's folder (got 'nk/mix.csv': no such file)")

    def test_fit_out_rewrites_the_table_path(self, capsys, demo_design_path, tmp_path):
        """fit --out writes the fitted design with the n,k table named relative to the output folder."""
        import tomllib

        work = self._work(tmp_path, demo_design_path)
        status, _, err = _run(capsys, ["fit", str(work / "design.toml"), "--out", str(tmp_path / "fitted"),
                                       "--max-evaluations", "3", "--no-report", "--quiet"])
        assert status in (0, 3), err                     # converged, or the small budget spent
        saved = tomllib.loads((tmp_path / "fitted" / "design.toml").read_text())
        trim = [e for e in saved["chain"] if e["name"] == "mix-trim"][0]
        assert trim["materials"] == {"M": {"file": "../work/nk/mix.csv"}, "L": "SiO2"}
