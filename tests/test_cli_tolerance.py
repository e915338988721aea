"""Tests of ``workbench tolerance`` through workbench.cli.main.main."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from workbench.cli.main import main

SMALL = """\
schema = 1
name = "small"
[grid]
start_nm = 400
stop_nm = 700
step_nm = 10
[target]
kind = "primaries"
name = "ITU-R BT.709"
[[chain]]
name = "split"
type = "dichroic-splitter"
blue_green_nm = { value = 500.0, tolerance = { distribution = "normal", width = 2.0 } }
green_red_nm = 590.0
blue_green_width_nm = 25.0
green_red_width_nm = 25.0
blue_green_aoi_deg = 15.0
medium_index = 1.52
[[samples]]
name = "tcs"
source = "cie-13.3"
[[illuminants]]
name = "d65"
cie = "D65"
"""


@pytest.fixture()
def small(tmp_path):
    p = tmp_path / "small.toml"
    p.write_text(SMALL, encoding="utf-8")
    return p


@pytest.mark.slow  # 2000 Monte Carlo trials of the demo
def test_json_contract_on_the_demo(tmp_path, capsys, demo_design_path):
    """--trials 2000 --seed 1 --format json: trials, yield and per-illuminant p50/p95 that the CSV reproduces."""
    out = tmp_path / "trials.csv"
    assert main(["tolerance", str(demo_design_path), "--trials", "2000", "--seed", "1", "--format", "json", "--quiet",
                 "--csv", str(out)]) == 0
    cap = capsys.readouterr()
    s = json.loads(cap.out)
    assert s["trials"] == 2000 and s["seed"] == 1 and s["matrix"] == "fixed"
    assert 0.0 <= s["yield"] <= 1.0
    assert set(s["illuminants"]) == {"daylight", "tungsten", "stage-led"}
    rows = list(csv.DictReader(out.open(encoding="utf-8")))
    assert len(rows) == 2000
    for ill, d in s["illuminants"].items():
        m = d["delta_E00_mean"]
        assert m["p5"] <= m["p50"] <= m["p95"]
        col = np.array([float(r[f"fixed.{ill}.delta_E00_mean"]) for r in rows])
        assert m["p50"] == pytest.approx(np.percentile(col, 50), rel=1e-12)
        assert m["p95"] == pytest.approx(np.percentile(col, 95), rel=1e-12)
    assert s["yield"] == np.mean([int(r["fixed.pass"]) for r in rows])
    # every number says its unit and method
    assert s["units"]["delta_E00"] and s["units"]["prism.blue_green_nm"] == "nm"
    assert "Wilson" in s["methods"]["yield"] and "kstest" not in s["methods"]["sampling"]
    assert {c["name"] for c in s["parameters"]} >= {"prism.blue_green_nm", "red-trim.thickness_mm"}
    assert [r["position"] for r in s["field"]["positions"]][::3] == ["centre", "edge", "corner"]
    assert "note:" in cap.err


def test_same_seed_same_output(small, capsys):
    """The same seed prints the same JSON; another seed does not."""
    args = ["tolerance", str(small), "--trials", "300", "--format", "json", "--quiet"]
    assert main(args + ["--seed", "4"]) == 0
    a = capsys.readouterr().out
    assert main(args + ["--seed", "4"]) == 0
    b = capsys.readouterr().out
    assert main(args + ["--seed", "5"]) == 0
    c = capsys.readouterr().out
    assert a == b and a != c


def test_matrix_choice_and_spec_options(small, capsys):
    """--matrix recalibrated alone; --max-mean-de00 and --min-vora replace the design's spec."""
    assert main(["tolerance", str(small), "--trials", "100", "--format", "json", "--quiet", "--matrix",
                 "recalibrated", "--max-mean-de00", "100", "--min-vora", "0"]) == 0
    s = json.loads(capsys.readouterr().out)
    assert s["matrix"] == "recalibrated" and list(s["cases"]) == ["recalibrated"]
    assert s["spec"]["max_mean_delta_E00"] == 100 and s["yield"] == 1.0


@pytest.mark.slow  # Monte Carlo with plots
def test_table_with_units_and_files(small, tmp_path, capsys):
    """The table names units and methods; --plots and --trials-json write their files."""
    plots = tmp_path / "plots"
    tj = tmp_path / "all.json"
    assert main(["tolerance", str(small), "--trials", "120", "--quiet", "--plots", str(plots),
                 "--trials-json", str(tj)]) == 0
    out = capsys.readouterr().out
    for text in ("yield", "95 % Wilson interval", "CIEDE2000", "variance_contribution", "split.blue_green_nm",
                 "degrees in the prism glass", "2 nm normal"):
        assert text in out
    assert sorted(p.name for p in plots.iterdir()) == [".workbench-output",
        "field-shift.png", "histograms-fixed.png", "histograms-recalibrated.png", "ranking-fixed.png",
        "ranking-recalibrated.png"]
    assert len(json.loads(tj.read_text(encoding="utf-8"))["trials_data"]["trial"]) == 120


@pytest.mark.parametrize("extra, message", [
    (["--trials", "0"], "error: --trials: expected a whole number >= 1 (got 0)"),
    (["--seed", "-3"], "error: --seed: expected a whole number >= 0 (got -3)"),
    (["--min-vora", "2"], "error: --min-vora: expected a number in [0, 1] (got 2)"),
    (["--max-mean-de00", "0"], "error: --max-mean-de00: expected a number > 0 (got 0)"),
    (["--scale", "-1"], "error: --scale: expected a finite number >= 0 (got -1)"),
    (["--scale", "40"], "error: split.green_red_nm must stay above split.blue_green_nm: "),
    (["--scale", "200"], "error: split.blue_green_nm: "),
])
def test_bad_options_exit_2(small, capsys, extra, message):
    """Bad options end with status 2 and one error line."""
    assert main(["tolerance", str(small), "--quiet"] + extra) == 2
    err = capsys.readouterr().err
    assert err.startswith(message) and err.count("\n") == 1


def test_bad_design_exits_2(tmp_path, capsys):
    """A bad design file ends with status 2 naming the key."""
    p = tmp_path / "bad.toml"
    p.write_text(SMALL.replace("width = 2.0", "width = -2.0"), encoding="utf-8")
    assert main(["tolerance", str(p), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "chain[0].blue_green_nm.tolerance" in err


def test_interrupted_run_reports_and_exits_1(small, capsys, monkeypatch):
    """Ctrl-C after the first chunk: the finished trials are printed, the output says so, status 1."""
    from workbench.analysis import tolerance as T

    real = T._evaluate
    calls = {"n": 0}

    def flaky(*a, **k):
        calls["n"] += 1
        if calls["n"] == 4:  # nominal, one-at-a-time, chunk 0, then Ctrl-C
            raise KeyboardInterrupt
        return real(*a, **k)

    monkeypatch.setattr(T, "_evaluate", flaky)
    monkeypatch.setattr(T, "_workers", lambda n, w: 1)
    assert main(["tolerance", str(small), "--trials", "100", "--chunk", "25", "--format", "json", "--quiet"]) == 1
    cap = capsys.readouterr()
    s = json.loads(cap.out)
    assert s["interrupted"] is True and s["trials"] == 25 and s["trials_requested"] == 100
    assert "interrupted after 25 of 100 trials; exit status 1" in cap.err
