"""The notebooks as files: valid nbformat 4.5 with unique cell ids, stored without outputs."""

import json
import warnings

import nbformat
import pytest

from workbench import notebooks_dir

NOTEBOOKS = sorted(notebooks_dir().glob("*.ipynb"))


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_file_is_valid(path):
    """nbformat validates the file without a warning (every cell has an id, as nbformat 4.5 requires)."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        nb = nbformat.read(path, as_version=4)
        nbformat.validate(nb)
    ids = [c["id"] for c in json.loads(path.read_text(encoding="utf-8"))["cells"]]
    assert len(ids) == len(set(ids))


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_is_stored_cleared(path):
    """No outputs or execution counts are stored: the notebook opens as the walkthrough, run by the user."""
    cells = json.loads(path.read_text(encoding="utf-8"))["cells"]
    code = [c for c in cells if c["cell_type"] == "code"]
    assert code
    assert all(c.get("outputs") == [] and c.get("execution_count") is None for c in code)
