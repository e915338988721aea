"""Shared test set-up: a non-interactive plotting backend, quiet colour-science and shared fixtures.

Fixtures
--------
``demo_path``
    The folder of the invented demo scenario (:func:`workbench.demo_dir`), session-wide.
``demo_design_path``, ``demo_design``
    The demo design file and the design loaded from it (a frozen value, safe to share).
``fitted_demo``
    ``workbench fit`` run once per session on the demo design, into a temporary folder:
    a :class:`FittedDemo` with the exit status, the output folder and the fitted design file.
``out_dir``
    A fresh, not yet existing output folder inside the test's own temporary folder (the
    commands write their output folder as one unit).

Markers
-------
``slow`` marks the browser, notebook, wheel and long Monte Carlo or fit tests;
``uv run pytest -m "not slow"`` is the quick run (DEVELOPERS.md).
"""

from __future__ import annotations

import os
import warnings
from dataclasses import dataclass
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")

import pytest


@pytest.fixture(autouse=True)
def _quiet_reference_library():
    """colour-science warns on every reshape; the checks compare numbers, not warnings."""
    try:
        from colour.utilities import ColourRuntimeWarning, ColourUsageWarning
    except ImportError:  # pragma: no cover
        yield
        return
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ColourRuntimeWarning)
        warnings.simplefilter("ignore", ColourUsageWarning)
        yield


@pytest.fixture(scope="session")
def demo_path() -> Path:
    """The demo scenario's folder."""
    from workbench import demo_dir

    return demo_dir()


@pytest.fixture(scope="session")
def demo_design_path(demo_path) -> Path:
    """The demo design file, ``tern3_design.toml``."""
    return demo_path / "tern3_design.toml"


@pytest.fixture(scope="session")
def demo_design(demo_design_path):
    """The demo design, loaded once."""
    from workbench.fileio.design_toml import load_design

    return load_design(demo_design_path)


@dataclass(frozen=True)
class FittedDemo:
    """What ``workbench fit`` on the demo design left behind."""

    exit_status: int
    out: Path

    @property
    def design_path(self) -> Path:
        return self.out / "design.toml"


@pytest.fixture(scope="session")
def fitted_demo(tmp_path_factory, demo_design_path) -> FittedDemo:
    """``workbench fit DEMO --out DIR --quiet``, run once per session."""
    from workbench.cli.main import main

    out = tmp_path_factory.mktemp("fitted-demo") / "out"
    return FittedDemo(main(["fit", str(demo_design_path), "--out", str(out), "--quiet"]), out)


@pytest.fixture
def out_dir(tmp_path) -> Path:
    """An output folder that does not exist yet, inside the test's temporary folder."""
    return tmp_path / "out"
