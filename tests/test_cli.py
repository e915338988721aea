"""The command line: help, the tristimulus contract, errors, and the lab server's binding and auth."""

import json
import os
import socket
import subprocess
import time
import urllib.error
import urllib.request

import colour
import numpy as np
import pytest

from workbench.cli.main import main
from workbench.cli.commands.lab import lab_command, lab_environment
from workbench.model.spectra import Spectra, grid
from workbench.fileio.spectra_csv import write_spectra_csv


@pytest.fixture
def samples(tmp_path):
    """Three CIE 13.3 test colour samples (open CIE data) and a perfect white, 5 nm, 380-780 nm."""
    tcs = colour.quality.SDS_TCS["CIE 1995"]
    names = list(tcs)[:3]
    wl = grid(380, 780, 5)
    values = np.array([tcs[n].copy().align(colour.SpectralShape(380, 780, 5)).values for n in names])
    values = np.vstack([values, np.ones(wl.size)])
    path = tmp_path / "tcs.csv"
    write_spectra_csv(Spectra(wl, values, names=tuple(names) + ("white",)), path)
    return path, wl, values


class TestHelp:
    def test_lists_subcommands(self, capsys):
        """`workbench --help` lists every subcommand."""
        with pytest.raises(SystemExit) as e:
            main(["--help"])
        assert e.value.code == 0
        out = capsys.readouterr().out
        for name in ("tristimulus", "lab"):
            assert name in out


class TestTristimulusCommand:
    def test_json_contract(self, samples, capsys):
        """JSON array, one object per spectrum, with name, X, Y, Z, x, y; white Y = 100."""
        path, wl, values = samples
        assert main(["tristimulus", str(path), "--illuminant", "D65", "--observer", "2", "--format", "json"]) == 0
        out, err = capsys.readouterr()
        rows = json.loads(out)
        assert [r["name"] for r in rows][-1] == "white"
        for key in ("name", "X", "Y", "Z", "x", "y"):
            assert key in rows[0]
        assert rows[-1]["Y"] == pytest.approx(100.0)
        # colour-science 0.4.7 msds_to_XYZ (Integration) on the same grid as reference library
        shape = colour.SpectralShape(380, 780, 5)
        cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
        ref = colour.msds_to_XYZ(values, cmfs, colour.SDS_ILLUMINANTS["D65"].copy().align(shape),
                                 method="Integration", shape=shape)
        np.testing.assert_allclose([[r["X"], r["Y"], r["Z"]] for r in rows], ref, rtol=1e-6)
        assert "note:" in err and "summation at 5 nm" in err

    def test_observer_10_and_astm(self, samples, capsys):
        """--observer 10 and --method astm-e308 change the numbers and are named in the output."""
        path, *_ = samples
        main(["tristimulus", str(path), "--format", "json"])
        two = json.loads(capsys.readouterr().out)
        main(["tristimulus", str(path), "--format", "json", "--observer", "10", "--method", "astm-e308"])
        ten = json.loads(capsys.readouterr().out)
        assert ten[0]["observer"] == "10" and ten[0]["method"] == "astm-e308"
        assert ten[0]["X"] != two[0]["X"]

    def test_csv_and_table(self, samples, capsys):
        """CSV has a header row; the table names the method above it."""
        path, *_ = samples
        main(["tristimulus", str(path), "--format", "csv", "--illuminant", "FL2"])
        lines = capsys.readouterr().out.splitlines()
        assert lines[0].startswith("name,X,Y,Z,x,y") and len(lines) == 5
        main(["tristimulus", str(path), "--illuminant", "A"])
        out = capsys.readouterr().out
        assert out.startswith(f"# {path}: A, CIE 1931 2°, integration, perfect diffuser Y = 100")

    def test_bad_file_exit_2_one_line(self, tmp_path, capsys):
        """A non-numeric cell: exit 2, one stderr line starting 'error:' with file and line."""
        p = tmp_path / "bad.csv"
        p.write_text("wavelength_nm,leaf\n380,0.1\n390,abc\n400,0.2\n", encoding="utf-8")
        assert main(["tristimulus", str(p)]) == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and err[0].startswith(f"error: {p}, line 3") and "Traceback" not in err[0]

    def test_short_range_refused_then_extrapolated(self, tmp_path, capsys):
        """400-700 nm data are refused with the range needed; --extrapolate constant accepts them."""
        wl = grid(400, 700, 10)
        p = tmp_path / "short.csv"
        write_spectra_csv(Spectra(wl, 0.5 + 0.2 * np.sin(wl / 30), names=("paint",)), p)
        assert main(["tristimulus", str(p)]) == 2
        err = capsys.readouterr().err
        assert "needs 380-780 nm" in err and "--extrapolate constant" in err
        assert main(["tristimulus", str(p), "--extrapolate", "constant", "--format", "json"]) == 0
        out, err = capsys.readouterr()
        assert json.loads(out)[0]["name"] == "paint" and "extrapolated 380-400 nm and 700-780 nm" in err

    def test_unknown_illuminant(self, samples, capsys):
        """An unknown illuminant name is one line naming it."""
        path, *_ = samples
        assert main(["tristimulus", str(path), "--illuminant", "D93"]) == 2
        assert "unknown illuminant 'D93'" in capsys.readouterr().err

    def test_measured_illuminant_file(self, samples, tmp_path, capsys):
        """An SPD file as illuminant gives the same numbers as the same SPD by name."""
        path, wl, _ = samples
        from workbench.colorimetry.cie import illuminant_on

        spd = tmp_path / "d65.csv"
        write_spectra_csv(Spectra(wl, illuminant_on(wl, "D65")[1].values, names=("d65",),
                                  kind="emission", units="relative"), spd)
        main(["tristimulus", str(path), "--format", "json"])
        by_name = json.loads(capsys.readouterr().out)
        main(["tristimulus", str(path), "--format", "json", "--illuminant", str(spd)])
        by_file = json.loads(capsys.readouterr().out)
        assert by_file[0]["X"] == pytest.approx(by_name[0]["X"], rel=1e-12)

    def test_non_uniform_needs_resample(self, tmp_path, capsys):
        """Uneven steps: refused with the way out; --resample 1 computes."""
        wl = np.array([380.0, 392, 405, 450, 500, 560, 620, 700, 780])
        p = tmp_path / "uneven.csv"
        write_spectra_csv(Spectra(wl, np.full(wl.size, 0.4), names=("grey",)), p)
        assert main(["tristimulus", str(p)]) == 2
        assert "--resample 1" in capsys.readouterr().err
        assert main(["tristimulus", str(p), "--resample", "1", "--format", "json"]) == 0
        out, err = capsys.readouterr()
        assert json.loads(out)[0]["Y"] == pytest.approx(40.0, rel=1e-9)
        assert "cubic spline" in err


def _free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class TestLab:
    def test_command_binds_loopback_with_token(self, tmp_path):
        """The server command binds 127.0.0.1, keeps token auth and opens no browser."""
        cmd = lab_command(tmp_path, port=9999, token="abc")
        assert "--ServerApp.ip=127.0.0.1" in cmd and "--no-browser" in cmd
        assert not any("abc" in part for part in cmd)              # the token is not on the command line
        assert lab_environment("abc", {"PATH": "/bin"}) == {"PATH": "/bin", "JUPYTER_TOKEN": "abc"}

    def test_empty_token_refused(self, tmp_path):
        """Token authentication cannot be switched off."""
        from workbench.errors import WorkbenchError

        with pytest.raises(WorkbenchError, match="token authentication stays on"):
            lab_command(tmp_path, port=9999, token="")

    @pytest.mark.slow  # starts a JupyterLab server
    def test_server_requires_token(self, tmp_path):
        """A started server answers with the token and refuses without it."""
        port = _free_port()
        env = dict(os.environ)
        for var in ("JUPYTER_CONFIG_DIR", "JUPYTER_DATA_DIR", "JUPYTER_RUNTIME_DIR", "IPYTHONDIR"):
            d = tmp_path / var.lower()
            d.mkdir()
            env[var] = str(d)
        root = tmp_path / "nb"
        root.mkdir()
        proc = subprocess.Popen(lab_command(root, port=port, token="t0ken"), env=lab_environment("t0ken", env),
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
        try:
            url = f"http://127.0.0.1:{port}/api/status"
            deadline = time.time() + 60
            while True:
                try:
                    with urllib.request.urlopen(url + "?token=t0ken", timeout=2) as r:
                        assert r.status == 200
                        break
                except (urllib.error.URLError, ConnectionError):
                    if time.time() > deadline or proc.poll() is not None:
                        raise
                    time.sleep(0.5)
            with pytest.raises(urllib.error.HTTPError) as e:
                urllib.request.urlopen(url, timeout=5)
            assert e.value.code == 403
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                proc.kill()
