"""The demo scenario and the notebooks found from a checkout and from an installed wheel."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

import workbench
from test_golden import _compare
from workbench import demo_dir, is_packaged, notebooks_dir
from workbench.cli.commands.lab import WORKING_COPY, default_notebook_dir
from workbench.errors import WorkbenchError

ROOT = Path(__file__).resolve().parents[1]
GOLDEN = Path(__file__).resolve().parent / "data" / "golden" / "demo_evaluate.json"


@pytest.fixture
def installed(tmp_path, monkeypatch):
    """A fake installed package folder holding ``_demo`` and ``_notebooks``, with no source tree beside it."""
    pkg = tmp_path / "site-packages" / "workbench"
    shutil.copytree(ROOT / "spectra-demo", pkg / "_demo")
    shutil.copytree(ROOT / "notebooks", pkg / "_notebooks")
    monkeypatch.setattr(workbench, "_PACKAGE", pkg)
    return pkg


class TestDemoDir:
    def test_checkout_first(self):
        """From a checkout the source tree's spectra-demo/ is used."""
        assert demo_dir() == ROOT / "spectra-demo"
        assert (demo_dir() / "tern3_design.toml").is_file()

    def test_packaged_copy(self, installed):
        """Without a source tree the copy inside the package is used."""
        assert demo_dir() == installed / "_demo"
        assert is_packaged(demo_dir())

    def test_neither(self, tmp_path, monkeypatch):
        """No demo anywhere is one error line naming both places."""
        pkg = tmp_path / "lib" / "workbench"
        pkg.mkdir(parents=True)
        monkeypatch.setattr(workbench, "_PACKAGE", pkg)
        with pytest.raises(WorkbenchError) as e:
            demo_dir()
        assert str(e.value) == (f"'spectra-demo' not found: expected {tmp_path / 'lib' / 'spectra-demo'} "
                                f"(a checkout) or {pkg / '_demo'} (an installed wheel)")


class TestNotebooksDir:
    def test_checkout(self, tmp_path):
        """From a checkout ``workbench lab`` opens the source tree's notebooks/ and copies nothing."""
        assert notebooks_dir() == ROOT / "notebooks"
        assert default_notebook_dir(cwd=tmp_path) == (ROOT / "notebooks", None)
        assert not (tmp_path / WORKING_COPY).exists()

    def test_installed_working_copy(self, installed, tmp_path):
        """From a wheel the packaged notebooks are copied once to ./workbench-notebooks, then reused."""
        here = tmp_path / "work"
        here.mkdir()
        root, notice = default_notebook_dir(cwd=here)
        assert root == here / WORKING_COPY and notice == f"copied the workbench's notebooks to {root}"
        assert sorted(p.name for p in root.glob("*.ipynb")) == sorted(p.name for p in (ROOT / "notebooks").glob("*.ipynb"))
        (root / "01-spectra-and-tristimulus.ipynb").write_text("{}")  # the user's edits stay
        assert default_notebook_dir(cwd=here) == (root, None)
        assert (root / "01-spectra-and-tristimulus.ipynb").read_text() == "{}"


def _run(cmd, **kw):
    env = {k: v for k, v in os.environ.items() if k not in ("VIRTUAL_ENV", "PYTHONPATH", "UV_PROJECT_ENVIRONMENT")}
    return subprocess.run([str(c) for c in cmd], capture_output=True, text=True, env=env, **kw)


def _check(r, what):
    assert r.returncode == 0, f"{what} failed ({r.returncode}):\n{r.stdout[-2000:]}\n{r.stderr[-2000:]}"
    return r


@pytest.mark.slow  # builds the wheel and installs it with its dependencies into a fresh venv
class TestInstalledWheel:
    def test_evaluate_on_the_packaged_demo(self, tmp_path):
        """The built wheel, installed in a fresh venv, evaluates its packaged demo from outside the repository."""
        uv = shutil.which("uv")
        if uv is None:
            pytest.skip("uv is not on PATH (the wheel test builds and installs with uv)")
        dist = tmp_path / "dist"
        _check(_run([uv, "build", "--wheel", "-o", dist], cwd=ROOT), "uv build")
        (wheel,) = dist.glob("workbench-*.whl")
        # the project's locked dependencies, installed from the uv cache when they are there
        req = tmp_path / "requirements.txt"
        req.write_text(_check(_run([uv, "export", "--frozen", "--no-dev", "--no-emit-project", "--no-hashes"],
                                   cwd=ROOT), "uv export").stdout)
        venv = tmp_path / "venv"
        _check(_run([uv, "venv", venv, "--python", sys.executable], cwd=tmp_path), "uv venv")
        python = venv / ("Scripts/python.exe" if os.name == "nt" else "bin/python")
        install = [uv, "pip", "install", "--python", python, "-r", req, wheel]
        r = _run(install + ["--offline"], cwd=tmp_path)
        if r.returncode != 0:  # not all in the cache: let uv fetch what is missing
            _check(_run(install, cwd=tmp_path), "uv pip install")
        elsewhere = tmp_path / "elsewhere"
        elsewhere.mkdir()
        demo = Path(_check(_run([python, "-c", "import workbench; print(workbench.demo_dir())"], cwd=elsewhere),
                           "demo_dir").stdout.strip())
        assert demo.is_relative_to(venv) and demo.name == "_demo"
        workbench_cli = venv / ("Scripts/workbench.exe" if os.name == "nt" else "bin/workbench")
        out = _check(_run([workbench_cli, "evaluate", demo / "tern3_design.toml", "--format", "json"], cwd=elsewhere),
                     "workbench evaluate")
        got = json.loads(out.stdout)
        expected = json.loads(GOLDEN.read_text())
        assert got.pop("file") == str(demo / "tern3_design.toml")
        expected.pop("file")
        _compare(expected, got)  # every figure as pinned from the source tree (tests/test_golden.py)
