"""Tests of ``workbench evaluate`` through workbench.cli.main.main."""

from __future__ import annotations

import json

import numpy as np

from workbench.colorimetry.cie import cmfs_on
from workbench.cli.main import main
from workbench.analysis.measures import vora_value
from workbench.fileio.spectra_csv import read_spectra_csv

def test_json_contract(capsys, demo_design_path, demo_design):
    """JSON on stdout holds a summary per channel and vora_value in 0-1."""
    assert main(["evaluate", str(demo_design_path), "--format", "json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out["channels"]) == {"R", "G", "B"}
    for c in out["channels"].values():
        assert {"peak_nm", "half_max_low_nm", "half_max_high_nm", "area", "neugebauer_q"} <= set(c)
        assert c["half_max_low_nm"] < c["peak_nm"] < c["half_max_high_nm"]
    assert 0 <= out["vora_value"] <= 1
    # the same value from the public functions, with the design's illuminants
    d = demo_design
    s = d.channel_sensitivities()
    rec = d.illuminant_values(d.fit.recording_illuminant)[1]
    view = d.illuminant_values("daylight")[1]
    nu = vora_value(s.values.T, cmfs_on(s.wavelengths).values, rec, view)
    assert abs(out["vora_value"] - nu) < 1e-12
    # the full measures of the design evaluator, with their methods
    assert set(out["delta_E00"]) == set(d.fit.illuminants)
    assert {"luther_residual", "smi", "noise", "matrix"} <= set(out)
    assert "CIEDE2000" in out["method"]["delta_E00"]
    assert out["channels"]["B"]["peak_nm"] == float(s.wavelengths[np.argmax(s["B"])])


def test_half_max_of_a_known_curve():
    """The 50 % points of a triangle 500-600 nm peaking at 550 are 525 and 575 nm."""
    from workbench.cli.commands.evaluate import curve_summary

    wl = np.arange(480.0, 621.0, 10.0)
    s = np.clip(1 - np.abs(wl - 550.0) / 50.0, 0, None)
    c = curve_summary(wl, s)
    assert (c["peak_nm"], c["half_max_low_nm"], c["half_max_high_nm"]) == (550.0, 525.0, 575.0)
    assert np.isclose(c["area"], 50.0)  # triangle: base 100 nm × height 1 / 2


def test_table_and_sensitivities_csv(tmp_path, capsys, demo_design_path, demo_design):
    """The table names units and method; --sensitivities writes R, G, B that read back."""
    out = tmp_path / "sens.csv"
    assert main(["evaluate", str(demo_design_path), "--sensitivities", str(out)]) == 0
    cap = capsys.readouterr()
    assert "Vora value" in cap.out and "nm" in cap.out
    assert "note:" in cap.err
    s = read_spectra_csv(out)
    assert s.names == ("R", "G", "B") and s.kind == "sensitivity"
    np.testing.assert_array_equal(s.values, demo_design.channel_sensitivities().values)


def test_bad_design_exits_2(tmp_path, capsys):
    """A bad design ends with status 2 and an error line naming the key."""
    p = tmp_path / "bad.toml"
    p.write_text('schema = 1\nname = "x"\n[grid]\nstart_nm = 400\nstop_nm = 700\nstep_nm = 10\n'
                 '[[chain]]\nname = "e"\ntype = "long-pass"\ncenter_nm = 5000\nwidth_nm = 10\n')
    assert main(["evaluate", str(p), "--format", "json"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "chain[0].center_nm" in err
