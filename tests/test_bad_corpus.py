"""The bad-input corpus (tests/data/bad/cases): every case through every command that reads it.

Each case must end with exit status 2 and one ``error:`` line on stderr
holding the case's key words — no traceback, no hang (each run has a time
bound), no warnings printed, nothing on stdout. The files and their key
words are in tests/data/bad/cases/cases.toml (written by make_cases.py);
special files (FIFOs, devices, directories) are made here, and the option
cases are listed below.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import threading
import tomllib
from pathlib import Path

import pytest

from workbench.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "tests" / "data" / "bad" / "cases"
DEMO = ROOT / "spectra-demo"
DESIGN = str(DEMO / "tern3_design.toml")
REFL = str(DEMO / "studio_reflectances.csv")
LED = str(DEMO / "luminaire_led_export.csv")
SCENE = str(DEMO / "scene_small.npy")

GROUPS = {
    "spectra": [["tristimulus", "{f}"], ["tristimulus", REFL, "--illuminant", "{f}"], ["light", "{f}"],
                ["primaries", "--emitters", "{f}"]],
    "reflectance": [["tristimulus", "{f}"]],
    "emission": [["tristimulus", REFL, "--illuminant", "{f}"], ["light", "{f}"], ["primaries", "--emitters", "{f}"]],
    "design": [["evaluate", "{f}"], ["fit", "{f}", "--out", "{tmp}/fit", "--quiet"],
               ["tolerance", "{f}", "--trials", "5", "--quiet", "--no-field"],
               ["render", "{f}", SCENE, "--out", "{tmp}/r"], ["light", LED, "--camera", "{f}"]],
    "tolerance": [["tolerance", "{f}", "--trials", "5", "--quiet", "--no-field"]],
    "cube": [["render", DESIGN, "{f}", "--out", "{tmp}/r"]],
    "sidecar": [["render", DESIGN, "{f}", "--out", "{tmp}/r"]],
}

# (id, command line, key words); {tmp} is the case's own folder, {file} a regular file in it
OPTIONS = [
    ("resample-0", ["tristimulus", REFL, "--resample", "0"], ["--resample", "at least 0.01 nm"]),
    ("resample-1e-6", ["tristimulus", REFL, "--resample", "1e-6"], ["--resample", "at least 0.01 nm"]),
    ("resample-neg", ["tristimulus", REFL, "--resample=-1"], ["--resample"]),
    ("resample-nan", ["tristimulus", REFL, "--resample", "nan"], ["--resample"]),
    ("resample-inf", ["tristimulus", REFL, "--resample", "inf"], ["--resample"]),
    ("resample-over-range", ["tristimulus", REFL, "--resample", "1000"], ["at most the range"]),
    ("illuminant-unknown", ["tristimulus", REFL, "--illuminant", "D99"], ["D99"]),
    ("illuminant-missing-file", ["tristimulus", REFL, "--illuminant", "{tmp}/nowhere.csv"], ["No such file"]),
    ("grid-1e-9", ["primaries", "bt709", "--targets", "{tmp}/t.csv", "--grid", "380,780,1e-9"], ["--grid", "at least 0.01"]),
    ("grid-0", ["primaries", "bt709", "--targets", "{tmp}/t.csv", "--grid", "380,780,0"], ["--grid"]),
    ("grid-1e-300", ["primaries", "bt709", "--targets", "{tmp}/t.csv", "--grid", "380,780,1e-300"], ["--grid"]),
    ("grid-nan", ["primaries", "bt709", "--targets", "{tmp}/t.csv", "--grid", "380,780,nan"], ["--grid"]),
    ("grid-reversed", ["primaries", "bt709", "--targets", "{tmp}/t.csv", "--grid", "780,380,5"], ["--grid"]),
    ("grid-text", ["primaries", "bt709", "--targets", "{tmp}/t.csv", "--grid", "a,b,c"], ["--grid"]),
    ("targets-under-file", ["primaries", "bt709", "--targets", "{file}/t.csv"], ["--targets", "is a file"]),
    ("targets-dir", ["primaries", "bt709", "--targets", "{tmp}"], ["--targets", "is a folder"]),
    ("xy-nan", ["primaries", "--xy", "nan,0.33,0.3,0.6,0.15,0.06"], ["--xy"]),
    ("xy-count", ["primaries", "--xy", "0.64,0.33"], ["--xy"]),
    ("trials-1e9", ["tolerance", DESIGN, "--trials", "1000000000", "--quiet"], ["--trials", "above the limit of 1000000"]),
    ("trials-0", ["tolerance", DESIGN, "--trials", "0", "--quiet"], ["--trials"]),
    ("trials-over-raised-limit", ["--limit", "trials=10", "tolerance", DESIGN, "--trials", "11", "--quiet"],
     ["above the limit of 10"]),
    ("tolerance-seed-neg", ["tolerance", DESIGN, "--trials", "3", "--seed=-1", "--quiet"], ["--seed"]),
    ("tolerance-chunk-0", ["tolerance", DESIGN, "--trials", "3", "--chunk", "0", "--quiet"], ["--chunk"]),
    ("tolerance-scale-nan", ["tolerance", DESIGN, "--trials", "3", "--scale", "nan", "--quiet"], ["--scale"]),
    ("tolerance-min-vora", ["tolerance", DESIGN, "--trials", "3", "--min-vora", "2", "--quiet"], ["--min-vora"]),
    ("tolerance-plots-under-file", ["tolerance", DESIGN, "--trials", "3", "--quiet", "--plots", "{file}/p"],
     ["--plots", "is a file"]),
    ("tolerance-plots-is-file", ["tolerance", DESIGN, "--trials", "3", "--quiet", "--plots", "{file}"],
     ["--plots", "expected a folder, found a file"]),
    ("tolerance-csv-under-file", ["tolerance", DESIGN, "--trials", "3", "--quiet", "--csv", "{file}/x.csv"],
     ["--csv", "is a file"]),
    ("fit-seed-neg", ["fit", DESIGN, "--seed=-1", "--global-start", "multi-start", "--out", "{tmp}/f", "--quiet"],
     ["'--seed'"]),
    ("fit-out-under-file", ["fit", DESIGN, "--out", "{file}/sub", "--quiet"], ["--out", "is a file"]),
    ("fit-out-is-file", ["fit", DESIGN, "--out", "{file}", "--quiet"], ["--out", "expected a folder, found a file"]),
    ("fit-out-dot", ["fit", DESIGN, "--out", ".", "--quiet"], ["--out", "a folder of its own"]),
    ("fit-out-foreign-folder", ["fit", DESIGN, "--out", "{tmp}", "--quiet"], ["--out", "did not write"]),
    ("fit-max-evaluations-0", ["fit", DESIGN, "--out", "{tmp}/f", "--max-evaluations", "0", "--quiet"],
     ["'--max-evaluations'"]),
    ("fit-time-limit-nan", ["fit", DESIGN, "--out", "{tmp}/f", "--time-limit", "nan", "--quiet"], ["'--time-limit'"]),
    ("render-chunk-0", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--chunk-mb", "0"], ["--chunk-mb"]),
    ("render-chunk-huge", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--chunk-mb", "1e12"], ["--chunk-mb"]),
    ("render-chunk-nan", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--chunk-mb", "nan"], ["--chunk-mb"]),
    ("render-chunk-pixels", ["--limit", "chunk_pixels=10", "render", DESIGN, SCENE, "--out", "{tmp}/r"],
     ["pixels per chunk", "above the limit of 10"]),
    ("render-wavelengths-1e-9", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--wavelengths", "380:780:1e-9"],
     ["at least 0.01"]),
    ("render-wavelengths-0", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--wavelengths", "380:780:0"], ["step"]),
    ("render-wavelengths-1e-300", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--wavelengths", "380:780:1e-300"],
     ["at least 0.01"]),
    ("render-wavelengths-text", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--wavelengths", "abc"],
     ["--wavelengths"]),
    ("render-wavelengths-bands", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--wavelengths", "380:780:10"],
     ["81 bands"]),
    ("render-out-under-file", ["render", DESIGN, SCENE, "--out", "{file}/r"], ["--out", "is a file"]),
    ("render-scheduler-inproc", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "inproc://nothing"],
     ["--scheduler", "tcp://HOST:PORT"]),
    ("render-scheduler-file", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "file:///etc/passwd"],
     ["--scheduler", "tcp://HOST:PORT"]),
    ("render-scheduler-bare", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "localhost"],
     ["--scheduler"]),
    ("render-scheduler-port-0", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "tcp://127.0.0.1:0"],
     ["--scheduler"]),
    ("render-scheduler-closed", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "tcp://127.0.0.1:{closed}"],
     ["--scheduler", "cannot connect"]),
    ("render-scheduler-not-dask", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "tcp://127.0.0.1:{http}"],
     ["--scheduler", "not a dask scheduler"]),
    ("render-scheduler-silent", ["render", DESIGN, SCENE, "--out", "{tmp}/r", "--scheduler", "tcp://127.0.0.1:{silent}"],
     ["--scheduler", "not a dask scheduler"]),
    ("light-match-order", ["light", LED, "--match", "3", "--differ", "1"], ["--match"]),
    ("light-figures-under-file", ["light", LED, "--figures", "{file}/figs"], ["--figures", "is a file"]),
    ("evaluate-sensitivities-dir", ["evaluate", DESIGN, "--sensitivities", "{tmp}"], ["--sensitivities", "is a folder"]),
    ("limit-unknown", ["--limit", "bogus=1", "bars"], ["--limit", "bogus"]),
    ("limit-negative", ["--limit", "trials=-1", "bars"], ["--limit", "> 0"]),
    ("limit-text", ["--limit", "trials=many", "bars"], ["--limit", "a number"]),
    ("limit-cell-chars", ["--limit", "cell_chars=2", "tristimulus", REFL], ["a cell of", "at most 2"]),
    ("limit-spectra", ["--limit", "spectra=2", "tristimulus", REFL], ["6 columns of spectra", "above the limit of 2"]),
    ("limit-bands", ["--limit", "bands=10", "tristimulus", REFL], ["wavelengths", "above the limit of 10"]),
    ("limit-file-size", ["--limit", "file_mb=0.0001", "tristimulus", REFL], ["larger than the limit"]),
    ("limit-line-chars", ["--limit", "line_chars=20", "tristimulus", REFL], ["a line of", "at most 20"]),
    ("limit-design-size", ["--limit", "design_mb=0.0001", "evaluate", DESIGN], ["larger than the limit"]),
]

SPECIAL = ["fifo", "dev-zero", "dev-null", "directory", "missing", "symlink-to-fifo"]
SPECIAL_COMMANDS = {
    "tristimulus": ["tristimulus", "{f}"], "illuminant": ["tristimulus", REFL, "--illuminant", "{f}"],
    "light": ["light", "{f}"], "emitters": ["primaries", "--emitters", "{f}"], "evaluate": ["evaluate", "{f}"],
    "fit": ["fit", "{f}", "--out", "{tmp}/f", "--quiet"], "tolerance": ["tolerance", "{f}", "--quiet"],
    "render-design": ["render", "{f}", SCENE, "--out", "{tmp}/r"], "render-cube": ["render", DESIGN, "{f}", "--out", "{tmp}/r"],
    "camera": ["light", LED, "--camera", "{f}"],
}


def _file_cases():
    data = tomllib.loads((CASES / "cases.toml").read_text(encoding="utf-8"))
    out = []
    for entry in data["file"]:
        for argv in GROUPS[entry["group"]]:
            out.append(pytest.param(entry["path"], argv, entry["words"], id=f"{argv[0]}{'-ill' if '--illuminant' in argv else ''}"
                                    f"{'-emitters' if '--emitters' in argv else ''}{'-camera' if '--camera' in argv else ''}:"
                                    f"{entry['path']}"))
    return out


def _run(argv, capsys, timeout=60):
    """main(argv) with an alarm as the hang guard; returns (code, out, err)."""
    def hang(signum, frame):
        raise TimeoutError(f"no answer in {timeout} s: {argv}")

    old = signal.signal(signal.SIGALRM, hang)
    signal.alarm(timeout)
    try:
        try:
            code = main([str(a) for a in argv])
        except SystemExit as e:
            code = e.code
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def _check(code, out, err, words, argv):
    assert "Traceback" not in err, err
    assert code == 2, (argv, code, err[-500:])
    lines = err.rstrip("\n").splitlines()
    errors = [l for l in lines if l.startswith("error:")]
    assert len(errors) == 1, (argv, err[-500:])
    assert not any(l.startswith("warning:") or "Warning" in l for l in lines), err
    message = err[err.index("error:"):]
    for w in words:
        assert w in message, (argv, w, message[:500])
    assert "\x1b" not in err and "\u202e" not in err
    assert out.strip() == "" or "nan" not in out.lower(), out


@pytest.mark.slow
class TestCorpusFiles:
    @pytest.mark.parametrize("path, argv, words", _file_cases())
    def test_case(self, path, argv, words, tmp_path, capsys, monkeypatch):
        """One bad file through one command: exit 2, one error line with the key words."""
        monkeypatch.chdir(tmp_path)
        f = (CASES / path).resolve()
        if argv[0] == "render" and "{f}" == argv[2]:        # a cube: copy it with its sidecar
            shutil.copy(f, tmp_path / f.name)
            shutil.copy(f.with_suffix(".json"), tmp_path / f.with_suffix(".json").name)
            f = tmp_path / f.name
        args = [a.replace("{f}", str(f)).replace("{tmp}", str(tmp_path)) for a in argv]
        code, out, err = _run(args, capsys)
        _check(code, out, err, [w.replace("PATH", str(f)) for w in words], args)


@pytest.fixture(scope="module")
def endpoints():
    """Loopback endpoints only: a closed port, a socket answering like a web server, a silent one."""
    closed = socket.socket()
    closed.bind(("127.0.0.1", 0))
    closed_port = closed.getsockname()[1]
    closed.close()
    servers, stop = [], threading.Event()

    def serve(reply):
        s = socket.socket()
        s.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        s.bind(("127.0.0.1", 0))
        s.listen(8)
        s.settimeout(0.2)
        servers.append(s)

        def loop():
            conns = []
            while not stop.is_set():
                try:
                    c, _ = s.accept()
                except OSError:
                    continue
                conns.append(c)
                if reply:
                    c.sendall(reply)
            for c in conns:
                c.close()
        threading.Thread(target=loop, daemon=True).start()
        return s.getsockname()[1]

    http = serve(b"HTTP/1.1 400 Bad Request\r\nContent-Length: 0\r\n\r\n")
    silent = serve(b"")
    yield {"closed": closed_port, "http": http, "silent": silent}
    stop.set()
    for s in servers:
        s.close()


@pytest.mark.slow
class TestCorpusOptions:
    @pytest.mark.parametrize("argv, words", [pytest.param(a, w, id=i) for i, a, w in OPTIONS])
    def test_option(self, argv, words, tmp_path, capsys, monkeypatch, endpoints):
        """One bad option value: exit 2, one error line with the key words, checked before any computing."""
        monkeypatch.chdir(tmp_path)
        (tmp_path / "file").write_text("x")
        (tmp_path / "stray").write_text("not ours")
        args = [a.format(tmp=tmp_path, file=tmp_path / "file", **endpoints) for a in argv]
        code, out, err = _run(args, capsys)
        _check(code, out, err, words, args)


@pytest.mark.slow
class TestCorpusSpecialFiles:
    @pytest.mark.parametrize("kind", SPECIAL)
    @pytest.mark.parametrize("command", sorted(SPECIAL_COMMANDS))
    def test_special(self, kind, command, tmp_path, capsys, monkeypatch):
        """FIFOs, devices, folders and missing files are refused before opening (no hang)."""
        monkeypatch.chdir(tmp_path)
        suffix = ".npy" if command == "render-cube" else (".toml" if command in
                                                          ("evaluate", "fit", "tolerance", "render-design", "camera")
                                                          else ".csv")
        f = tmp_path / f"x{suffix}"
        if kind == "fifo":
            os.mkfifo(f)
        elif kind == "dev-zero":
            f = Path("/dev/zero")
        elif kind == "dev-null":
            f = Path("/dev/null")
        elif kind == "directory":
            f.mkdir()
        elif kind == "symlink-to-fifo":
            os.mkfifo(tmp_path / "pipe")
            f.symlink_to(tmp_path / "pipe")
        words = {"fifo": ["FIFO", "expected a regular file"], "dev-zero": ["character device"],
                 "dev-null": ["character device"], "directory": [],
                 "missing": [], "symlink-to-fifo": ["FIFO"]}[kind]
        if command == "render-cube" and kind == "directory":
            words = ["Zarr"]
        args = [a.replace("{f}", str(f)).replace("{tmp}", str(tmp_path)) for a in SPECIAL_COMMANDS[command]]
        code, out, err = _run(args, capsys, timeout=30)
        _check(code, out, err, words + [str(f)] if kind != "directory" or command != "render-cube" else words, args)


def test_corpus_size():
    """The corpus holds at least 300 cases (files × the commands that read them, options, special files)."""
    n = len(_file_cases()) + len(OPTIONS) + len(SPECIAL) * len(SPECIAL_COMMANDS)
    assert n >= 300, n
