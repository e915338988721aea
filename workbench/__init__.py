"""Colour-separation optics workbench."""

from pathlib import Path

from workbench.errors import WorkbenchError

__version__ = "0.1.0"

_PACKAGE = Path(__file__).resolve().parent


def _data_folder(source_tree: str, packaged: str) -> Path:
    """The source tree's folder when running from a checkout, else the copy packaged in the wheel."""
    for folder in (_PACKAGE.parent / source_tree, _PACKAGE / packaged):
        if folder.is_dir():
            return folder
    raise WorkbenchError(
        f"'{source_tree}' not found: expected {_PACKAGE.parent / source_tree} (a checkout) or "
        f"{_PACKAGE / packaged} (an installed wheel)"
    )


def demo_dir() -> Path:
    """The folder of the invented demo scenario.

    ``spectra-demo/`` of the source tree when the package runs from a checkout
    (or an editable install); otherwise the copy the wheel carries as
    ``workbench/_demo``.
    """
    return _data_folder("spectra-demo", "_demo")


def notebooks_dir() -> Path:
    """The folder of the workbench's notebooks: ``notebooks/`` of the source tree, else ``workbench/_notebooks``."""
    return _data_folder("notebooks", "_notebooks")


def is_packaged(folder: Path) -> bool:
    """Whether ``folder`` lies inside the installed package (read-only in spirit: copy before writing)."""
    return Path(folder).resolve().is_relative_to(_PACKAGE)
