"""Colour-separation optics workbench."""

from pathlib import Path

__version__ = "0.1.0"


def demo_dir() -> Path:
    """The folder of the invented demo scenario (``spectra-demo/`` beside the package)."""
    return Path(__file__).resolve().parents[1] / "spectra-demo"
