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
    assert m["status"] == "converged"
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


def test_not_converged_exits_1(tmp_path, capsys, demo_design_path):
    """A fit stopped by its evaluation budget still writes the files, says so and exits 1."""
    rc = main(["fit", str(demo_design_path), "--out", str(tmp_path / "o"), "--quiet", "--max-evaluations", "10",
               "--no-report"])
    assert rc == 1
    m = json.loads((tmp_path / "o" / "metrics.json").read_text())
    assert m["status"] == "interrupted"
    assert "did not converge" in capsys.readouterr().err


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
