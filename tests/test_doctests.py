"""The Examples in the package's docstrings run and print what they say.

Every module of ``workbench`` whose source holds a ``>>>`` example is one
test; its examples run with :mod:`doctest` (``NORMALIZE_WHITESPACE``), so a
docstring cannot drift from the code. Modules are found from the source
files, so a new module with examples is picked up without touching this file.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil
from pathlib import Path

import pytest

import workbench

OPTIONS = doctest.NORMALIZE_WHITESPACE | doctest.ELLIPSIS


def _modules_with_examples() -> list[str]:
    names = []
    for info in pkgutil.walk_packages(workbench.__path__, prefix="workbench."):
        spec = importlib.util.find_spec(info.name)
        origin = spec.origin if spec else None
        if origin and origin.endswith(".py") and ">>>" in Path(origin).read_text(encoding="utf-8"):
            names.append(info.name)
    return sorted(names)


MODULES = _modules_with_examples()


def test_examples_are_found():
    """The package has examples in its core modules (the collection below is not empty by accident)."""
    assert {"workbench.colorimetry.coordinates", "workbench.colorimetry.tristimulus",
            "workbench.analysis.measures"} <= set(MODULES)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    """Every example in the module's docstrings prints what the docstring shows."""
    module = importlib.import_module(name)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=OPTIONS)
    tests = [t for t in finder.find(module, name) if t.examples]
    assert tests, f"{name}: '>>>' in the source but no example found in a docstring"
    report = []
    for t in tests:
        runner.run(t, out=report.append)
    result = runner.summarize(verbose=False)
    assert result.failed == 0, "".join(report)
