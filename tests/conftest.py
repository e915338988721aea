"""Shared test set-up: a non-interactive plotting backend and quiet colour-science."""

import os
import warnings

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
