"""`workbench fit DESIGN.toml --out DIR`: the files it writes and its exit status."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from workbench.cli.main import main
from workbench.fileio.design_toml import load_design
from workbench.analysis.evaluator import DesignEvaluator
from workbench.fileio.spectra_csv import read_spectra_csv


@pytest.fixture(scope="module")
def fitted(fitted_demo):
    """The session's one fit of the demo design (conftest.py): exit status and output folder."""
    return fitted_demo.exit_status, fitted_demo.out


@pytest.mark.slow  # the session fit of the demo design
def test_exit_status_and_files(fitted):
    """A converged fit exits 0 and writes the five files."""
    rc, out = fitted
    assert rc == 0
    for name in ("design.toml", "sensitivities.csv", "matrix.csv", "metrics.json", "report.html"):
        assert (out / name).is_file(), name


@pytest.mark.slow  # the session fit of the demo design
def test_metrics_contract(fitted, demo_design):
    """metrics.json holds vora_value, neugebauer_q (3) and delta_E00 {illuminant: {mean, p95, max}}."""
    _, out = fitted
    m = json.loads((out / "metrics.json").read_text())
    assert 0 <= m["vora_value"] <= 1
    assert len(m["neugebauer_q"]) == 3
    d = demo_design
    assert set(m["delta_E00"]) == set(d.fit.illuminants)
    for s in m["delta_E00"].values():
        assert {"mean", "p95", "max"} <= set(s)
        assert 0 <= s["mean"] <= s["p95"] <= s["max"]
    assert m["status"] == 0 and m["status_name"] == "converged"
    assert m["vora_value"] > m["before"]["vora_value"]


@pytest.mark.slow  # the session fit of the demo design
def test_fitted_design_reloads_and_reproduces_metrics(fitted):
    """design.toml loads; its stored matrix reproduces metrics.json's ΔE00 and ν."""
    _, out = fitted
    d = load_design(out / "design.toml")
    assert d.matrix is not None
    m = json.loads((out / "metrics.json").read_text())
    again = DesignEvaluator(d).measures(use_stored_matrix=True)
    assert again.vora_value == pytest.approx(m["vora_value"], abs=1e-9)
    for ill, s in m["delta_E00"].items():
        assert again.delta_E00[ill]["mean"] == pytest.approx(s["mean"], abs=1e-9)


@pytest.mark.slow  # the session fit of the demo design
def test_sensitivities_and_matrix_files(fitted):
    """sensitivities.csv holds R, G, B on the design grid; matrix.csv the 3×3 of metrics.json."""
    _, out = fitted
    s = read_spectra_csv(out / "sensitivities.csv", kind="sensitivity")
    assert s.names == ("R", "G", "B")
    rows = list(csv.DictReader((out / "matrix.csv").open()))
    assert [r["display_channel"] for r in rows] == ["R", "G", "B"]
    M = np.array([[float(r[k]) for k in ("camera_R", "camera_G", "camera_B")] for r in rows])
    m = json.loads((out / "metrics.json").read_text())
    first = next(iter(m["matrix"]["values"].values()))
    np.testing.assert_allclose(M, first)


@pytest.mark.slow  # the session fit of the demo design
def test_report_is_self_contained(fitted):
    """report.html embeds its figures and links nothing outside."""
    _, out = fitted
    html = (out / "report.html").read_text()
    assert "data:image/svg+xml;base64," in html
    assert "http://" not in html and "https://" not in html


class TestFitStatus:
    """Each reason that ends a fit has its own status code in metrics.json and its own exit status."""

    def _run(self, tmp_path, capsys, design, *extra):
        out = tmp_path / "o"
        rc = main(["fit", str(design), "--out", str(out), "--quiet", "--no-report", *extra])
        m = json.loads((out / "metrics.json").read_text())
        return rc, m, capsys.readouterr()

    def test_budget_spent(self, tmp_path, capsys, demo_design_path):
        """A budget too small for one Jacobian: status 1 'budget spent', never more evaluations, exit 3."""
        rc, m, cap = self._run(tmp_path, capsys, demo_design_path, "--max-evaluations", "10")
        assert (rc, m["status"], m["status_name"]) == (3, 1, "budget spent")
        assert m["budget"] == 10 and 1 <= m["evaluations"] <= 10
        assert ("note: the fit ended without converging: budget spent (status 1) — the evaluation budget "
                "was spent before the best point passed the local convergence test; the best point found "
                "is kept; exit status 3") in cap.err

    def test_time_limit(self, tmp_path, capsys, demo_design_path):
        """A time limit shorter than one evaluation: status 2 'time limit', exit 4, the start kept."""
        rc, m, cap = self._run(tmp_path, capsys, demo_design_path, "--time-limit", "1e-9")
        assert (rc, m["status"], m["status_name"]) == (4, 2, "time limit")
        assert m["time_limit_s"] == 1e-9 and m["evaluations"] == 1
        assert m["vora_value"] == pytest.approx(m["before"]["vora_value"], abs=1e-12)
        assert "time limit (status 2)" in cap.err and "exit status 4" in cap.err

    def test_stopped_by_the_user(self, tmp_path, capsys, demo_design_path, monkeypatch):
        """Ctrl-C during the search: status 3 'stopped', the best point so far written, exit 130."""
        from workbench.analysis.fit_objective import Objective as Obj

        calls = {"n": 0}
        residuals = Obj.__call__

        def interrupted(self, x):
            calls["n"] += 1
            if calls["n"] == 3:
                raise KeyboardInterrupt
            return residuals(self, x)

        monkeypatch.setattr(Obj, "__call__", interrupted)
        rc, m, cap = self._run(tmp_path, capsys, demo_design_path)
        assert (rc, m["status"], m["status_name"]) == (130, 3, "stopped")
        assert "stopped (status 3)" in cap.err

    def test_infeasible(self, tmp_path, capsys, demo_design_path, monkeypatch):
        """No evaluation gives a finite residual: status 4 'infeasible', exit 5."""
        from workbench.analysis.fit_objective import Objective as Obj

        monkeypatch.setattr(Obj, "__call__", lambda self, x: np.full((np.atleast_2d(x).shape[0], 4), np.nan))
        rc, m, cap = self._run(tmp_path, capsys, demo_design_path)
        assert (rc, m["status"], m["status_name"]) == (5, 4, "infeasible")
        assert "infeasible (status 4)" in cap.err

    def test_worst_needs_the_delta_e_objective(self, tmp_path, capsys, demo_design_path):
        """--across-illuminants worst on a ν-objective design: one line naming the file, exit 2."""
        text = demo_design_path.read_text().replace(
            'objective = "mean-delta-e00"\nacross_illuminants = "worst"', 'objective = "vora"')
        import shutil

        for f in demo_design_path.parent.glob("*.csv"):
            shutil.copy(f, tmp_path / f.name)
        p = tmp_path / "vora_variant.toml"
        p.write_text(text)
        rc = main(["fit", str(p), "--out", str(tmp_path / "o"), "--quiet", "--across-illuminants", "worst"])
        assert rc == 2
        assert capsys.readouterr().err.strip().splitlines() == [
            f"error: {p}: illuminant weights and the worst-illuminant objective need [fit] objective = "
            "\"mean-delta-e00\" (got 'vora')"]
        assert not (tmp_path / "o").exists()

    def test_status_table_is_the_one_source(self):
        """Codes 0-4 each have a name, a message and an exit status; only 'converged' exits 0."""
        from workbench.analysis.fit import FIT_STATUS_TABLE, FitStatus

        assert [int(s) for s in FIT_STATUS_TABLE] == [0, 1, 2, 3, 4] == [int(s) for s in FitStatus]
        exits = [FIT_STATUS_TABLE[s][2] for s in FitStatus]
        assert exits == [0, 3, 4, 130, 5]
        assert 2 not in exits  # 2 is bad input

    @pytest.mark.parametrize("extra, message", [
        (["--illuminant-weight", "tungsten"],
         "error: '--illuminant-weight' must be NAME=W with W > 0 (got 'tungsten')"),
        (["--illuminant-weight", "tungsten=-1"],
         "error: '--illuminant-weight' must be NAME=W with W > 0 (got 'tungsten=-1')"),
        (["--illuminant-weight", "moon=2"],
         "error: 'illuminant weight moon' must name one of the fit's illuminants (daylight, tungsten, "
         "stage-led) (got 'moon')"),
        (["--front", "1"], "error: '--front' must be a whole number of points 2-100 (got 1)"),
        (["--front", "100000"], "error: '--front' must be a whole number of points 2-100 (got 100000)"),
        (["--robust", "--robust-percentile", "100"],
         "error: '--robust-percentile' must be a number in (0, 100) (got 100.0)"),
        (["--robust", "--robust-percentile", "0"], "error: '--robust-percentile' must be a number in (0, 100) (got 0.0)"),
        (["--robust-percentile", "90"], "error: '--robust-percentile' needs --robust"),
        (["--robust", "--robust-draws", "1"], "error: '--robust-draws' must be a whole number >= 2 (got 1)"),
        (["--robust", "--front", "3"],
         "error: '--front' and '--robust' cannot be combined (the front is of nominal fits)"),
        (["--max-evaluations", "0"], "error: '--max-evaluations' must be a whole number >= 1 (got 0)"),
        (["--max-evaluations", "-5"], "error: '--max-evaluations' must be a whole number >= 1 (got -5)"),
        (["--time-limit", "0"], "error: '--time-limit' must be a number of seconds > 0 (got 0)"),
        (["--time-limit", "nan"], "error: '--time-limit' must be a number of seconds > 0 (got nan)"),
    ])
    def test_bad_options(self, tmp_path, capsys, demo_design_path, extra, message):
        """A budget or time limit <= 0, a bad illuminant weight: one line, exit 2, nothing written."""
        rc = main(["fit", str(demo_design_path), "--out", str(tmp_path / "o"), "--quiet", *extra])
        assert rc == 2
        assert capsys.readouterr().err.strip().splitlines() == [message]
        assert not (tmp_path / "o").exists()


def test_missing_design_is_one_line(tmp_path, capsys):
    """A missing design file gives one error line and exit status 2."""
    rc = main(["fit", str(tmp_path / "nope.toml"), "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2
    assert len(err) == 1 and err[0].startswith("error:") and "nope.toml" in err[0]


def test_out_is_a_file(tmp_path, capsys, demo_design_path):
    """--out naming a file is refused before any work."""
    f = tmp_path / "f"
    f.write_text("x")
    assert main(["fit", str(demo_design_path), "--out", str(f), "--quiet"]) == 2
    assert "expected a folder" in capsys.readouterr().err


class TestParameterTable:
    def test_before_after_table(self, tmp_path, capsys, demo_design_path, demo_design):
        """stdout lists every free parameter: unit, start → fitted, change, bounds and the at-bound flag."""
        out = tmp_path / "o"
        main(["fit", str(demo_design_path), "--out", str(out), "--quiet", "--no-report", "--max-evaluations", "40"])
        text = capsys.readouterr().out
        assert "fitted parameters (start → fitted; bounds from the design file):" in text
        m = json.loads((out / "metrics.json").read_text())
        lines = {ln.split()[0]: ln.split() for ln in text.splitlines() if ln.split() and "." in ln.split()[0]}
        free = demo_design.free_parameters()
        assert len(m["parameters"]) == len(free)
        for p in m["parameters"]:
            cells = lines[p["name"]]
            spec = free[p["name"]]
            assert cells[1] == p["unit"] == ("mm" if p["name"].endswith("_mm") else "nm")
            assert float(cells[2]) == pytest.approx(spec.value, rel=1e-6)
            assert cells[3] == "→"
            assert float(cells[4]) == pytest.approx(p["value"], rel=1e-5)
            assert [float(cells[6]), float(cells[7])] == [spec.min, spec.max]
            assert (cells[-2:] == ["at", p["at_bound"]]) == (p["at_bound"] is not None)


@pytest.mark.slow  # the session fit of the demo design
def test_bound_costs_in_metrics(fitted):
    """metrics.json ranks a cost for every parameter at a bound, the largest gain in the objective first."""
    _, out = fitted
    m = json.loads((out / "metrics.json").read_text())
    names = [c["name"] for c in m["bound_costs"]]
    assert sorted(names) == sorted(m["parameters_at_bounds"]) and names
    d = [c["d_cost"] for c in m["bound_costs"]]
    assert d == sorted(d)
    assert "Lagrange multiplier" in m["bound_costs_method"]


class TestFrontOption:
    @pytest.mark.slow  # three demo fits
    def test_front_csv_and_report(self, tmp_path, capsys, demo_design_path):
        """--front 3 writes front.csv (3 rows, t = 0 first, the written fit), prints it and plots it in the report."""
        out = tmp_path / "o"
        rc = main(["fit", str(demo_design_path), "--out", str(out), "--quiet", "--front", "3"])
        assert rc == 0
        rows = list(csv.DictReader((out / "front.csv").open()))
        assert [float(r["t"]) for r in rows] == [0.0, 0.5, 1.0]
        m = json.loads((out / "metrics.json").read_text())
        assert float(rows[0]["mean_delta_E00"]) == pytest.approx(
            np.mean([s["mean"] for s in m["delta_E00"].values()]), abs=1e-9)
        ng = [float(r["noise_gain_rms"]) for r in rows]
        assert ng == sorted(ng, reverse=True)
        assert 'id="fig-front"' in (out / "report.html").read_text()
        assert "accuracy against noise, 3 non-dominated points" in capsys.readouterr().out

    def test_delta_e_matrix_refused(self, tmp_path, capsys, demo_design_path):
        """--front with a ΔE00 matrix: one line, exit 2, before any work."""
        import shutil

        for f in demo_design_path.parent.glob("*.csv"):
            shutil.copy(f, tmp_path / f.name)
        p = tmp_path / "de.toml"
        p.write_text(demo_design_path.read_text().replace('matrix = "least-squares"', 'matrix = "delta-e00"'))
        rc = main(["fit", str(p), "--out", str(tmp_path / "o"), "--quiet", "--front", "3"])
        assert rc == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert err == ["error: '--front' needs a matrix computed by its rule ([fit] matrix = \"least-squares\" or "
                       "\"white-preserving\"); a ΔE00 matrix is fitted freely and shrinks to zero at the noise-only "
                       "end (got 'delta-e00')"]


class TestRobustOption:
    @pytest.mark.slow  # the nominal and the robust fit of the demo, two tolerance runs
    def test_nominal_against_robust(self, tmp_path, capsys, demo_design_path):
        """--robust writes the robust design; metrics.json sets nominal against robust with Wilson intervals."""
        out = tmp_path / "o"
        rc = main(["fit", str(demo_design_path), "--out", str(out), "--quiet", "--robust", "--robust-draws", "16"])
        assert rc == 0
        m = json.loads((out / "metrics.json").read_text())
        rb = m["robust"]
        for side in ("nominal", "robust"):
            lo, hi = rb[side]["yield_interval_95"]
            assert 0 <= lo <= rb[side]["yield"] <= hi <= 1
        assert rb["robust"]["worst_mean_delta_E00"] <= rb["nominal"]["worst_mean_delta_E00"] + 0.1
        assert rb["check_seed"] != rb["seed"]
        assert "nominal against robust (16 draws" in capsys.readouterr().out
        assert 'id="robust"' in (out / "report.html").read_text()


    def test_yield_check_on_inverted_draws_keeps_the_fit(self, tmp_path, capsys, demo_design_path):
        """Fresh draws that invert the splitter's edges leave the yield unstated (n/a, with the reason); the fit is written.

        The demo's splitter edges are bounded 5 nm apart (570 / 575 nm) with
        σ = 3 nm tolerances, so a robust fit that brings them together has
        units whose edges swap; such units cannot be evaluated (docs/design-file.md).
        """
        out = tmp_path / "o"
        rc = main(["fit", str(demo_design_path), "--out", str(out), "--quiet", "--no-report", "--robust",
                   "--robust-percentile", "1", "--robust-draws", "2", "--max-evaluations", "20"])
        assert rc in (0, 3)  # converged or budget spent: the fit itself is fine
        captured = capsys.readouterr()
        rb = json.loads((out / "metrics.json").read_text())["robust"]
        assert rb["robust"]["yield"] is None and rb["robust"]["yield_interval_95"] is None
        assert "must stay above prism.blue_green_nm" in rb["robust"]["yield_note"]
        assert "note: robust design: yield not checked: prism.green_red_nm must stay above" in captured.err
        assert (out / "design.toml").is_file()
        assert rb["nominal"]["yield_note"] is None and rb["nominal"]["yield"] is not None


class TestConflictingOptions:
    """The issue's bad input: one clear line, exit 2, nothing written."""

    def _variant(self, tmp_path, demo_design_path, edit):
        import shutil

        for f in demo_design_path.parent.glob("*.csv"):
            shutil.copy(f, tmp_path / f.name)
        p = tmp_path / "variant.toml"
        p.write_text(edit(demo_design_path.read_text()))
        return p

    def test_front_without_free_parameters(self, tmp_path, capsys, demo_design_path):
        """--front on a design with nothing free."""
        p = self._variant(tmp_path, demo_design_path, lambda t: t.replace("free = true", "free = false"))
        rc = main(["fit", str(p), "--out", str(tmp_path / "o"), "--quiet", "--front", "4"])
        assert rc == 2
        assert capsys.readouterr().err.strip().splitlines() == [
            f"error: '--front' needs free parameters: {p} has none (set free = true with min and max on at least one)"]
        assert not (tmp_path / "o").exists()

    def test_robust_without_tolerances(self, tmp_path, capsys, demo_design_path):
        """--robust on a design whose parameters carry no tolerance."""
        import re

        p = self._variant(tmp_path, demo_design_path,
                          lambda t: re.sub(r", tolerance = \{[^}]*\}", "", t))
        rc = main(["fit", str(p), "--out", str(tmp_path / "o"), "--quiet", "--robust"])
        assert rc == 2
        assert capsys.readouterr().err.strip().splitlines() == [
            f"error: '--robust' needs toleranced parameters: {p} gives no parameter a tolerance = "
            "{ distribution, width } table"]
        assert not (tmp_path / "o").exists()
