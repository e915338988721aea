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
            "design.toml", "face-blue-green.csv", "face-green-red.csv", "recipes.json"]
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

    def test_rejects_bad_periods(self, capsys, demo_design_path):
        """--periods outside 1-200 is refused."""
        status, out, err = _run(capsys, ["recipe", str(demo_design_path), "--periods", "0"])
        assert status == 2 and err == "error: --periods must be 1-200 (got 0)\n"
