"""`workbench coating`: CSV and JSON contract, agreement with tmm, figures, and every rejection."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from workbench.cli.main import main

N_H, N_L = 2.35, 1.46


def _write_stack(path, rows, header="material,thickness_nm"):
    path.write_text(header + "\n" + "".join(f"{m},{d}\n" for m, d in rows))
    return path


@pytest.fixture
def blue_stack(tmp_path):
    """(HL)^10 H of plain indices 2.35 / 1.46, quarter-wave at 430 nm."""
    rows = [(N_H if i % 2 == 0 else N_L, 430.0 / 4 / (N_H if i % 2 == 0 else N_L)) for i in range(21)]
    return _write_stack(tmp_path / "blue.csv", rows)


def _run(capsys, argv):
    status = main(argv)
    out = capsys.readouterr()
    return status, out.out, out.err


class TestCoatingCommand:
    def test_csv_columns_and_values_match_tmm(self, capsys, tmp_path):
        """CSV has wavelength_nm then R_s_A, R_p_A, T_s_A, T_p_A per angle; values agree with tmm to 1e-9."""
        tmm = pytest.importorskip("tmm")
        rows = [("2.1+0.01j", 80.0), ("1.38", 120.0), ("TiO2", 60.0)]
        path = _write_stack(tmp_path / "s.csv", rows)
        status, out, err = _run(capsys, ["coating", str(path), "--incident", "1.52", "--substrate", "1.6",
                                         "--angles", "0,45", "--grid", "400:700:100", "--format", "csv"])
        assert status == 0, err
        lines = out.strip().splitlines()
        assert lines[0] == "wavelength_nm,R_s_0,R_p_0,T_s_0,T_p_0,R_s_45,R_p_45,T_s_45,T_p_45"
        table = np.array([[float(x) for x in line.split(",")] for line in lines[1:]])
        np.testing.assert_array_equal(table[:, 0], [400, 500, 600, 700])
        from workbench.optics.materials import BUILT_IN

        for i, wl in enumerate(table[:, 0]):
            n = [2.1 + 0.01j, 1.38, BUILT_IN["tio2"].index([wl])[0]]
            for j, a in enumerate((0.0, 45.0)):
                for k, (q, pol) in enumerate((("R", "s"), ("R", "p"), ("T", "s"), ("T", "p"))):
                    # tmm 0.2.0 (S. J. Byrnes, arXiv:1603.02720), coh_tmm; CSV written with 8 decimals
                    ref = tmm.coh_tmm(pol, [1.52, *n, 1.6], [np.inf, 80.0, 120.0, 60.0, np.inf],
                                      math.radians(a), wl)[q]
                    assert table[i, 1 + 4 * j + k] == pytest.approx(ref, abs=1e-8)

    def test_json_band_edges_reproduce_s_p_order(self, capsys, blue_stack):
        """JSON carries the arrays per angle and band edges; the 45° long-wave edge is s 486.9, p 458.6 nm."""
        status, out, err = _run(capsys, ["coating", str(blue_stack), "--substrate", "1.52", "--angles", "0,45",
                                         "--grid", "400:600:0.1", "--format", "json"])
        assert status == 0, err
        d = json.loads(out)
        assert [a["angle_deg"] for a in d["angles"]] == [0.0, 45.0]
        a45 = d["angles"][1]
        assert len(a45["R_s"]) == len(d["wavelength_nm"]) == 2001
        np.testing.assert_allclose(np.array(a45["R_p"]) + np.array(a45["T_p"]), 1.0, atol=1e-12)
        # This project's issue 19, independent characteristic-matrix figures (50 % points)
        assert a45["band_edges_50"]["s"]["long_wave_nm"] == pytest.approx(486.9, abs=0.5)
        assert a45["band_edges_50"]["p"]["long_wave_nm"] == pytest.approx(458.6, abs=0.5)
        assert set(a45["half_points_T"]) == {"s", "p", "mean"}
        assert a45["half_points_T"]["s"][0]["T"] in ("rising", "falling")

    def test_table_names_method_and_band(self, capsys, blue_stack):
        """The table names the method and prints the band edges at each angle."""
        status, out, _ = _run(capsys, ["coating", str(blue_stack), "--angles", "45", "--grid", "400:600:1"])
        assert status == 0
        assert "characteristic-matrix method" in out
        assert "45°  s " in out

    def test_table_marks_non_monotone_and_notes_it(self, capsys, blue_stack):
        """(HL)^10 H in air rises above 50 % again beside its band: the table stars the edge and stderr says so."""
        status, out, err = _run(capsys, ["coating", str(blue_stack), "--substrate", "1.52", "--angles", "45",
                                         "--grid", "400:600:0.1"])
        assert status == 0
        assert "s - / 486.9–513.8*" in out and "* non-monotone transition" in out
        assert "pass band (max - min of R, peak-to-peak" in out
        assert "3 band edges have a non-monotone transition (45° s long-wave, 45° p long-wave, 45° mean long-wave)" in err

    def test_figures(self, capsys, blue_stack, tmp_path):
        """--figures writes R/T per angle and the band edges against angle as PNG into a new folder."""
        folder = tmp_path / "figs"
        status, _, err = _run(capsys, ["coating", str(blue_stack), "--angles", "0,22.5,45", "--grid", "400:700:2",
                                       "--figures", str(folder)])
        assert status == 0
        assert sorted(p.name for p in folder.iterdir() if not p.name.startswith(".")) == [
            "coating-RT-0deg.png", "coating-RT-22.5deg.png", "coating-RT-45deg.png", "coating-edges-vs-angle.png"]
        assert all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in folder.glob("*.png"))
        assert "wrote 4 figures" in err

    def test_user_material(self, capsys, tmp_path):
        """--material NAME=FILE.csv makes an n,k table usable by name."""
        nk = tmp_path / "film.csv"
        nk.write_text("wavelength_nm,n,k\n350,2.0,0\n800,2.0,0\n")
        path = _write_stack(tmp_path / "s.csv", [("myfilm", 100.0)])
        status, out, err = _run(capsys, ["coating", str(path), "--material", f"myfilm={nk}", "--grid",
                                         "400:500:100", "--format", "csv", "--substrate", "1.52"])
        assert status == 0, err
        ref = _run(capsys, ["coating", str(_write_stack(tmp_path / "t.csv", [("2.0", 100.0)])), "--grid",
                            "400:500:100", "--format", "csv", "--substrate", "1.52"])[1]
        assert out == ref


class TestCoatingRejections:
    """Each bad input: one line naming file/row, exit status 2, nothing written."""

    def _reject(self, capsys, argv, message, tmp_path=None):
        status, out, err = _run(capsys, argv)
        assert status == 2
        assert out == ""
        assert err == f"error: {message}\n"

    def test_unknown_material(self, capsys, tmp_path):
        """An unknown material names the file, line and column."""
        path = _write_stack(tmp_path / "s.csv", [("TiO2", 50.0), ("kryptonite", 80.0)])
        status, out, err = _run(capsys, ["coating", str(path)])
        assert status == 2 and out == ""
        assert err.startswith(f"error: {path}, line 3, column 'material': material must be one of air, TiO2,")
        assert err.endswith("(got 'kryptonite')\n") and err.count("\n") == 1

    def test_zero_thickness(self, capsys, tmp_path):
        """A thickness ≤ 0 is refused naming the row."""
        path = _write_stack(tmp_path / "s.csv", [("TiO2", 50.0), ("SiO2", 0)])
        self._reject(capsys, ["coating", str(path)],
                     f"{path}, line 3, column 'thickness_nm': must be a thickness in nm > 0 (got 0)")

    def test_negative_k(self, capsys, tmp_path):
        """A plain index with k < 0 is refused naming the row."""
        path = _write_stack(tmp_path / "s.csv", [("2.1-0.01j", 50.0)])
        self._reject(capsys, ["coating", str(path)],
                     f"{path}, line 2, column 'material': index must have k ≥ 0 (got '2.1-0.01j'); "
                     "k < 0 would be gain")

    def test_missing_column(self, capsys, tmp_path):
        """A table without thickness_nm is refused naming the header line."""
        path = _write_stack(tmp_path / "s.csv", [("TiO2", 50.0)], header="material,thickness")
        self._reject(capsys, ["coating", str(path)],
                     f"{path}, line 1: the header must have the columns 'material' and 'thickness_nm' "
                     "(missing 'thickness_nm'; got material, thickness)")

    def test_angle_of_90(self, capsys, blue_stack):
        """An angle ≥ 90° is refused."""
        self._reject(capsys, ["coating", str(blue_stack), "--angles", "0,90"],
                     "--angles must be 0 ≤ angle < 90 degrees (got 90)")

    def test_nk_table_outside_grid(self, capsys, tmp_path):
        """A user n,k table that does not cover the grid is refused naming the layer row and the table."""
        nk = tmp_path / "film.csv"
        nk.write_text("wavelength_nm,n,k\n400,2.0,0\n700,2.0,0\n")
        path = _write_stack(tmp_path / "s.csv", [("film", 100.0)])
        self._reject(capsys, ["coating", str(path), "--material", f"film={nk}"],
                     f"{path}, line 2, column 'material': material 'film' must be used within 400-700 nm "
                     f"(got 380-780 nm; n,k table {nk})")

    def test_nk_table_with_gap(self, capsys, tmp_path):
        """A user n,k table with an empty cell is refused naming its file and line."""
        nk = tmp_path / "film.csv"
        nk.write_text("wavelength_nm,n,k\n300,2.0,0\n500,,0\n900,2.0,0\n")
        path = _write_stack(tmp_path / "s.csv", [("film", 100.0)])
        self._reject(capsys, ["coating", str(path), "--material", f"film={nk}"],
                     f"{nk}, line 3, column 'n': must hold a number (got an empty cell: gaps are not filled)")

    def test_absorbing_incidence_medium(self, capsys, blue_stack):
        """The incidence medium must be lossless."""
        self._reject(capsys, ["coating", str(blue_stack), "--incident", "1.5+0.01j"],
                     "--incident must be a lossless medium (k = 0) (got '1.5+0.01j')")

    def test_bad_grid(self, capsys, blue_stack):
        """A grid that is not START:STOP:STEP is refused."""
        self._reject(capsys, ["coating", str(blue_stack), "--grid", "380-780"],
                     "--grid must be START:STOP:STEP in nm, e.g. 380:780:1 (got '380-780')")

    def test_nothing_written_on_error(self, capsys, tmp_path):
        """A bad row leaves no figure folder behind."""
        path = _write_stack(tmp_path / "s.csv", [("TiO2", -5)])
        folder = tmp_path / "figs"
        status, _, _ = _run(capsys, ["coating", str(path), "--figures", str(folder)])
        assert status == 2 and not folder.exists()
        assert [p.name for p in tmp_path.iterdir()] == ["s.csv"]


def _half_period_stack(path, periods, reference_nm):
    """(0.5L H 0.5L)^periods of plain indices 2.35 / 1.46, QWOT at ``reference_nm``: its rows and the stack."""
    n = np.array([N_L] + [N_H, N_L] * periods)
    q = np.ones(n.size)
    q[0] = q[-1] = 0.5
    d = q * reference_nm / (4 * n)
    return _write_stack(path, list(zip(n, d))), n, d


class TestCoatingEdgeRule:
    """`workbench coating` finds each band edge by the rule of docs/methods.md §15 (analysis/transition.py)."""

    def test_quarter_wave_edge_is_the_transition_rule(self, capsys, tmp_path):
        """A 10-period stack in glass: JSON's band edges are edge_transition's on the engine's R; 0°: one monotone edge."""
        from workbench.analysis.transition import edge_transition
        from workbench.optics.thinfilm import stack_response

        path, n, d = _half_period_stack(tmp_path / "ten.csv", 10, 600.0)
        status, out, err = _run(capsys, ["coating", str(path), "--incident", "1.52", "--substrate", "1.52",
                                         "--angles", "0,30", "--grid", "450:850:0.02", "--format", "json"])
        assert status == 0, err
        doc = json.loads(out)
        assert "single 50 % crossing" in doc["edge_rule"]
        wl = np.array(doc["wavelength_nm"])
        res = stack_response(n[:, None].astype(complex), d, wl, [0.0, 30.0], incident=1.52, substrate=1.52)
        for ia, a in enumerate(doc["angles"]):
            for pol, R in (("s", res.R[0, ia]), ("p", res.R[1, ia]), ("mean", res.R_mean[ia])):
                got = a["band_edges_50"][pol]
                for side, reflects in (("long_wave", "short"), ("short_wave", "long")):
                    ref = edge_transition(wl, R, reflects=reflects)
                    assert got[side]["monotone"] is ref.monotone
                    assert got[f"{side}_nm"] == pytest.approx(ref.band_edge_nm, abs=1e-4)
                    assert got[side]["crossings_nm"] == pytest.approx(list(ref.crossings_nm), abs=1e-3)
                if a["angle_deg"] == 0.0:
                    ref = edge_transition(wl, R, reflects="short")
                    assert ref.monotone and got["long_wave"]["monotone"] is True
                    assert got["long_wave"]["edge_nm"] == pytest.approx(ref.edge_nm, abs=1e-3)
                    assert got["long_wave"]["crossings_nm"] == [got["long_wave"]["edge_nm"]]

    def test_rippled_stack_flagged_in_json(self, capsys, tmp_path):
        """A 20-period stack in glass ripples back above 50 %: every crossing listed, no single edge, not monotone."""
        path, _, _ = _half_period_stack(tmp_path / "twenty.csv", 20, 500.0)
        status, out, err = _run(capsys, ["coating", str(path), "--incident", "1.52", "--substrate", "1.52",
                                         "--grid", "380:780:0.2", "--format", "json"])
        assert status == 0
        side = json.loads(out)["angles"][0]["band_edges_50"]["mean"]["long_wave"]
        assert side["monotone"] is False and side["edge_nm"] is None and len(side["crossings_nm"]) > 1
        assert side["reversal_pct"] > 1.0 and side["pass_ripple_pct"] > 0.0
        assert side["band_edge_nm"] == side["crossings_nm"][0]
        assert "band edges have a non-monotone transition" in err
