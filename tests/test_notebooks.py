"""Every notebook runs headlessly from top to bottom with no error output."""


import nbformat
import pytest
from nbclient import NotebookClient

from workbench import notebooks_dir

pytestmark = pytest.mark.slow  # each notebook starts a kernel and runs the analyses end to end

NOTEBOOKS = sorted(notebooks_dir().glob("*.ipynb"))


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_runs(path, tmp_path):
    """The notebook executes without edits and shows no error and at least one figure."""
    nb = nbformat.read(path, as_version=4)
    NotebookClient(nb, timeout=300, kernel_name="python3", resources={"metadata": {"path": str(tmp_path)}}).execute()
    outputs = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])]
    assert not [o for o in outputs if o.output_type == "error"]
    assert any({"image/png", "image/svg+xml"} & set(o.get("data", {})) for o in outputs)


def test_there_are_notebooks():
    """The lab command has notebooks to open."""
    assert NOTEBOOKS
