"""Progress bars of long work: the fit, the tolerance trials and batch rendering."""

from __future__ import annotations

__all__ = ["progress_bar"]


def progress_bar(**options):
    """A tqdm bar that suits where it runs (a terminal or a notebook); ``options`` go to ``tqdm``."""
    # Late: tqdm.auto pulls in asyncio (and ipywidgets in a notebook); only long work shows a bar,
    # so the command line's start-up does not pay for it.
    from tqdm.auto import tqdm

    return tqdm(**options)
