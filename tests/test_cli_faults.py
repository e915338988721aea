"""Faults of the environment through the command line: a full device, a full disk, SIGTERM, hostile names."""

from __future__ import annotations

import errno
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from workbench.cli.main import main, printable

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "spectra-demo"
DESIGN = str(DEMO / "tern3_design.toml")


def _cli(*args, **kw):
    return subprocess.run([sys.executable, "-m", "workbench.cli.main", *args], capture_output=True, text=True,
                          timeout=300, **kw)


@pytest.mark.slow
@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="needs /dev/full")
@pytest.mark.parametrize("argv", [
    ["tristimulus", str(DEMO / "studio_reflectances.csv")], ["bars"], ["primaries", "bt709"],
    ["evaluate", DESIGN], ["light", str(DEMO / "luminaire_led_export.csv")],
], ids=lambda a: a[0])
def test_stdout_on_a_full_device(argv):
    """Standard output on /dev/full: exit 2 and one error line naming the cause, no traceback."""
    with open("/dev/full", "w") as full:
        r = subprocess.run([sys.executable, "-m", "workbench.cli.main", *argv], stdout=full,
                           stderr=subprocess.PIPE, text=True, timeout=300)
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and "Exception ignored" not in r.stderr
    errors = [l for l in r.stderr.splitlines() if l.startswith("error:")]
    assert errors == ["error: cannot write the output: No space left on device"]


class TestDiskFull:
    @pytest.mark.slow  # draws the tolerance figures
    def test_plots_on_a_full_disk(self, tmp_path, capsys, monkeypatch):
        """A full disk while writing tolerance --plots: one line, exit 2, no PNG and no staging folder left."""
        import workbench.cli.commands.tolerance as command
        import workbench.fileio.atomic as atomic

        real = atomic.write_atomically
        calls = []

        def full(target, write):
            calls.append(target)
            if len(calls) > 2:
                raise atomic.InputFileError(f"cannot write: {os.strerror(errno.ENOSPC)}", str(target))
            return real(target, write)

        monkeypatch.setattr(command, "write_atomically", full)
        plots = tmp_path / "plots"
        code = main(["tolerance", DESIGN, "--trials", "20", "--quiet", "--no-field", "--plots", str(plots)])
        err = capsys.readouterr().err
        assert code == 2 and "No space left on device" in err and "Traceback" not in err
        assert [l for l in err.splitlines() if l.startswith("error:")] and len(calls) == 3
        assert sorted(p.name for p in tmp_path.iterdir()) == [".plots.lock"]


class TestNames:
    def test_escape_sequences_in_a_design_name(self, tmp_path, capsys):
        """A design name holding terminal escapes and a bidi override is printed with them escaped."""
        text = Path(DESIGN).read_text(encoding="utf-8")
        text = text.replace('name = "Lanternfield Tern-3, prism block rev A"',
                            'name = "\\u001b[2J\\u001b[31mevil\\u202e"')
        text = re.sub(r'file = "([^"]+)"', lambda m: f'file = "{(DEMO / m.group(1)).as_posix()}"', text)
        d = tmp_path / "d.toml"
        d.write_text(text, encoding="utf-8")
        assert main(["evaluate", str(d)]) == 0
        cap = capsys.readouterr()
        assert "\x1b" not in cap.out + cap.err and "\u202e" not in cap.out + cap.err
        assert "\\u001b[2J\\u001b[31mevil\\u202e" in cap.out

    def test_printable(self):
        """printable escapes C0/C1 controls and bidi overrides, keeps text, tabs and (unless one_line) newlines."""
        assert printable("a\x1b[0m\tb\u202ec\x9b\nd") == "a\\u001b[0m\tb\\u202ec\\u009b\nd"
        assert printable("a\nb", one_line=True) == "a\\nb"


@pytest.mark.slow
def test_sigterm_during_fit(tmp_path):
    """SIGTERM during `fit --out`: status 130, the folder absent or one complete set, no staging left."""
    out = tmp_path / "out"
    proc = subprocess.Popen([sys.executable, "-m", "workbench.cli.main", "fit", DESIGN, "--out", str(out), "--quiet"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.time() + 120
    while not any(p.name.startswith(".out.tmp-") for p in tmp_path.iterdir()):
        assert proc.poll() is None and time.time() < deadline
        time.sleep(0.05)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 130 and "Traceback" not in err
    # during the optimisation SIGTERM stops the fit, which keeps its best point and writes it (status 130);
    # later it abandons the run: either way the folder is one complete set or absent, with no staging left
    names = sorted(p.name for p in tmp_path.iterdir())
    if names == [".out.lock"]:
        assert "interrupted" in err
    else:
        from workbench.fileio.outdir import MANIFEST

        assert names == [".out.lock", "out"] and (out / MANIFEST).exists()


def test_second_run_on_a_locked_folder(tmp_path, capsys):
    """While one run holds an output folder's lock, a second run on it is refused at once."""
    from workbench.fileio.outdir import OutputFolder

    out = tmp_path / "out"
    with OutputFolder(out, option="--out", command="fit"):
        code = main(["fit", DESIGN, "--out", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "another run is writing this folder" in err


def test_sigterm_while_the_command_is_imported(monkeypatch, capsys):
    """SIGTERM already becomes 'interrupted' (status 130) while the parser imports the command's modules."""
    import importlib

    cli = importlib.import_module("workbench.cli.main")
    seen = []

    def parser_being_built(argv):
        seen.append(signal.getsignal(signal.SIGTERM))
        raise KeyboardInterrupt  # what the handler raises on SIGTERM

    before = signal.getsignal(signal.SIGTERM)
    monkeypatch.setattr(cli, "build_parser", parser_being_built)
    assert cli.main(["evaluate", DESIGN]) == 130
    assert seen == [cli._sigterm]
    assert capsys.readouterr().err == "interrupted\n"
    assert signal.getsignal(signal.SIGTERM) == before
