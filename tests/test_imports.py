"""Start-up: the common commands import none of the heavy libraries they do not use.

Each command runs as its own process under ``python -X importtime`` (which
lists every module a process imports, on stderr); the test fails naming any
heavy module imported. Timings are in tests/benchmarks/bench_startup.py, not here.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
#: Libraries that take a large part of a second or more to import (common practice: measured with -X importtime).
HEAVY = ("colour", "matplotlib", "pandas", "dask", "distributed", "scipy.optimize", "ipywidgets", "IPython")


def imported_modules(*args: str, cwd: Path = ROOT) -> tuple[list[str], subprocess.CompletedProcess]:
    """Names of every module a ``python -m workbench ARGS`` process imports, in order."""
    proc = subprocess.run([sys.executable, "-X", "importtime", "-m", "workbench", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=300)
    names = [line.split("|")[-1].strip() for line in proc.stderr.splitlines() if line.startswith("import time:")]
    return [n for n in names if n != "package"], proc


def heavy(names: list[str], heavy=HEAVY) -> list[str]:
    """The names among ``names`` that are, or are inside, one of ``heavy``."""
    return sorted({n for n in names for h in heavy if n == h or n.startswith(h + ".")})


class TestImportedModules:
    @pytest.mark.parametrize("args", [
        ("--help",),
        ("evaluate", "spectra-demo/tern3_design.toml"),
        ("tristimulus", "spectra-demo/studio_reflectances.csv"),
        ("tristimulus", "spectra-demo/studio_reflectances.csv", "--method", "astm-e308"),
        ("primaries", "ITU-R BT.709"),
    ], ids=["help", "evaluate", "tristimulus", "tristimulus-astm", "primaries"])
    def test_no_heavy_module(self, args):
        """The command runs and imports none of colour, matplotlib, pandas, dask, scipy.optimize, ipywidgets."""
        names, proc = imported_modules(*args)
        assert proc.returncode == 0, proc.stderr[-2000:]
        assert "numpy" in names or args == ("--help",)  # the listing really is of this process
        assert heavy(names) == [], f"workbench {' '.join(args)} imported {', '.join(heavy(names))}"

    @pytest.mark.parametrize("args", [
        ("light", "spectra-demo/luminaire_led_export.csv"),
        ("light", "spectra-demo/luminaire_led_export.csv", "--camera", "spectra-demo/tern3_design.toml"),
        ("light", "spectra-demo/luminaire_halogen_3200K.csv", "--format", "json", "--ssi-reference", "D65"),
    ], ids=["led", "led-camera", "halogen-json"])
    def test_light_imports_no_colour(self, args):
        """``workbench light`` computes CCT, Ra, Rf, Rg and SSI natively: no colour, matplotlib, pandas or scipy.optimize.

        The halogen export is on an irregular grid: its not-a-knot cubic
        spline to 1 nm is numpy too (scipy.interpolate would load scipy.optimize).
        """
        names, proc = imported_modules(*args)
        assert proc.returncode == 0, proc.stderr[-2000:]
        assert "workbench.colorimetry.rendering" in names  # the indices really were computed here
        assert heavy(names) == [], f"workbench {' '.join(args)} imported {', '.join(heavy(names))}"

    def test_help_imports_no_command_module(self):
        """``--help`` lists the commands without importing their modules (nor numpy)."""
        names, proc = imported_modules("--help")
        assert proc.returncode == 0 and "tristimulus" in proc.stdout
        assert [n for n in names if n.startswith("workbench.cli.commands.")] == []
        assert "numpy" not in names

    @pytest.mark.slow  # a whole fit in a fresh interpreter
    def test_fit_without_report(self, tmp_path):
        """``fit --no-report`` uses scipy.optimize but draws nothing: no matplotlib, pandas, colour, dask."""
        names, proc = imported_modules("fit", str(ROOT / "spectra-demo/tern3_design.toml"), "--out",
                                       str(tmp_path / "out"), "--no-report", "--quiet")
        assert proc.returncode == 0, proc.stderr[-2000:]
        assert "scipy.optimize" in names
        assert heavy(names, ("colour", "matplotlib", "pandas", "dask", "ipywidgets", "scipy.stats")) == []

    @pytest.mark.slow  # a whole fit and its report in a fresh interpreter
    def test_fit_with_report(self, tmp_path):
        """``fit`` writing its HTML report draws the figures as SVG of its own: no matplotlib, pandas, colour, dask."""
        out = tmp_path / "out"
        names, proc = imported_modules("fit", str(ROOT / "spectra-demo/tern3_design.toml"), "--out", str(out),
                                       "--quiet")
        assert proc.returncode == 0, proc.stderr[-2000:]
        assert "workbench.plots.vector" in names
        page = (out / "report.html").read_text(encoding="utf-8")
        assert page.count("data:image/svg+xml;base64,") == 5
        assert heavy(names, ("colour", "matplotlib", "pandas", "dask", "ipywidgets")) == []

    @pytest.mark.slow  # imports ipywidgets in a fresh interpreter and opens the demo design
    def test_design_panel_module(self):
        """The design panel up to its first figure imports no matplotlib, scipy.optimize, scipy.stats, colour, pandas or dask."""
        code = ("from workbench import demo_dir; from workbench.widgets.design import design_panel; "
                "p = design_panel(demo_dir() / 'tern3_design.toml'); assert p.svg() and not p.error.text")
        proc = subprocess.run([sys.executable, "-X", "importtime", "-c", code],
                              cwd=ROOT, capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0, proc.stderr[-2000:]
        names = [line.split("|")[-1].strip() for line in proc.stderr.splitlines() if line.startswith("import time:")]
        assert "ipywidgets" in names and "workbench.plots.vector" in names
        assert heavy(names, ("matplotlib", "colour", "pandas", "dask", "scipy.optimize", "scipy.stats")) == []

    @pytest.mark.slow  # imports ipywidgets in a fresh interpreter and computes a stack
    def test_coating_panel_module(self):
        """The coating panel up to its first figure imports no matplotlib, scipy.optimize, scipy.stats, colour, pandas or dask."""
        code = ("from workbench.widgets.coating import coating_panel; "
                "p = coating_panel(angles='0, 30, 45'); assert p.svg() and not p.status.text")
        proc = subprocess.run([sys.executable, "-X", "importtime", "-c", code],
                              cwd=ROOT, capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0, proc.stderr[-2000:]
        names = [line.split("|")[-1].strip() for line in proc.stderr.splitlines() if line.startswith("import time:")]
        assert "ipywidgets" in names and "workbench.plots.coating_vector" in names
        assert heavy(names, ("matplotlib", "colour", "pandas", "dask", "scipy.optimize", "scipy.stats")) == []

    @pytest.mark.slow  # imports the heavy libraries in a fresh interpreter
    def test_detects_heavy(self):
        """The check itself: a process that imports pandas is caught (so the tests above can fail)."""
        proc = subprocess.run([sys.executable, "-X", "importtime", "-c", "import pandas"],
                              capture_output=True, text=True, timeout=300)
        names = [line.split("|")[-1].strip() for line in proc.stderr.splitlines()
                 if line.startswith("import time:")]
        assert "pandas" in heavy(names)


class TestCommandListing:
    def test_listing_equals_full_parser(self):
        """The --help listing read from the command sources equals the one of every parser registered in full."""
        from workbench.cli.main import build_parser

        assert build_parser(["--help"]).format_help() == build_parser().format_help()

    def test_each_command_read(self):
        """Every command's name and help are read from its source (none falls back to importing all)."""
        from workbench.cli.main import _listing, command_names

        listing = [_listing(n) for n in command_names()]
        assert all(listing) and [c for c, _ in listing] == command_names()

    def test_top_level_help_before_a_command(self):
        """``workbench -h evaluate`` lists every command, as argparse shows the top-level help first."""
        from workbench.cli.main import build_parser

        assert build_parser(["-h", "evaluate"]).format_help() == build_parser().format_help()

    def test_limit_defaults_written_out(self):
        """The --limit help gives each default as a plain number (16777216, not 1.67772e+07)."""
        from workbench.cli.main import build_parser

        text = " ".join(build_parser().format_help().split())
        assert "spectra 1000000, trials 1000000, chunk_pixels 16777216" in text
        assert "e+0" not in text

    def test_no_markup_in_command_help(self):
        """No command's --help shows reStructuredText markup (``…``) taken from a docstring."""
        import contextlib
        import io

        from workbench.cli.main import build_parser, command_names

        for name in command_names():
            out = io.StringIO()
            with contextlib.redirect_stdout(out), contextlib.suppress(SystemExit):
                build_parser([name, "--help"]).parse_args([name, "--help"])
            assert "``" not in out.getvalue(), name
