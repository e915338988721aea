"""Out of core on Dask: a camera judged over a spectral cube one chunk at a time.

:func:`render_dask` evaluates a ``dask.array`` cube (chunked along its first
axis) one task per chunk with the block function of
:class:`workbench.analysis.render.BatchPipeline`, on the local threaded
scheduler or on a ``dask.distributed`` cluster (:func:`client_for`), and
gathers the per-chunk results in order into a
:class:`workbench.analysis.render.RenderResult`; :func:`delta_e00_dask`
gives the lazy ΔE00 array. dask and distributed are imported on first use
(:func:`load_dask`, :func:`load_distributed`). Moved out of ``render.py``
unchanged; see that module for the pipeline and its references.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from workbench.analysis.progress import progress_bar
from workbench.analysis.render import BatchPipeline, RenderBlock, RenderResult, combine_blocks
from workbench.errors import WorkbenchError

__all__ = ["load_dask", "load_distributed", "client_for", "render_dask", "delta_e00_dask"]


def _render_chunk(pipeline: BatchPipeline, block, images: bool) -> RenderBlock:
    return pipeline.render_block(block, images=images)


def load_dask():
    """The dask package with ``dask.array``, ``dask.delayed`` and ``dask.callbacks`` loaded."""
    # Late: dask (~0.3 s) serves only out-of-core work; the in-memory render needs numpy alone.
    import dask.array

    return dask


def load_distributed():
    """The ``distributed`` package (optional: only a cluster scheduler needs it); a one-line error when missing."""
    try:
        import distributed  # late: optional, and heavy; only a cluster scheduler needs it
    except ImportError:  # pragma: no cover
        raise WorkbenchError("a cluster scheduler needs the 'distributed' package") from None
    return distributed


class _TaskBar:
    """A dask local-scheduler callback that moves a tqdm bar on each finished chunk."""

    def __init__(self, bar, prefix: str):
        outer = self

        class _CB(load_dask().callbacks.Callback):
            def _posttask(self, key, result, dsk, state, worker_id):
                name = key[0] if isinstance(key, tuple) else key
                if isinstance(name, str) and name.startswith(outer.prefix):
                    outer.bar.update(1)

        self.bar = bar
        self.prefix = prefix
        self.callback = _CB()


def _progress_bar(total: int, enabled: bool, desc: str):
    return progress_bar(total=total, desc=desc, unit="chunk", disable=not enabled, file=sys.stderr,
                leave=True, dynamic_ncols=True)


def render_dask(pipeline: BatchPipeline, cube, *, images: bool | None = None, scheduler="threads",
                progress: bool = True, desc: str = "rendering") -> RenderResult:
    """The render of a dask array ``cube`` (h, w, m) or (N, m), one task per chunk.

    Parameters
    ----------
    pipeline : BatchPipeline
    cube : dask.array.Array
        Chunked along the first axis only (every chunk holds whole spectra;
        other axes are rechunked to one chunk when they are not).
    images : bool, optional
        Default True for a 3-D cube.
    scheduler : 'threads', 'sync', a ``distributed.Client`` or a scheduler address
        ``'threads'`` is dask's local threaded scheduler; a Client or an
        address (``tcp://host:8786``) runs the same tasks on that cluster
        (the cube's files must be readable by its workers).
    progress : bool
        A tqdm bar on stderr counting finished chunks.

    Returns
    -------
    RenderResult
        Equal to :func:`render_in_memory` on the same numbers (to rounding;
        bit for bit in practice, the block function being the same).

    Ctrl-C (KeyboardInterrupt) stops the work: futures on a cluster are
    cancelled and the interrupt propagates; nothing is returned.
    """
    dask = load_dask()
    if not isinstance(cube, dask.array.Array):
        raise WorkbenchError("render_dask needs a dask.array (see SpectralCube.to_dask)")
    if cube.ndim not in (2, 3) or cube.shape[-1] != pipeline.bands:
        raise WorkbenchError(f"the cube must be (N, {pipeline.bands}) or (h, w, {pipeline.bands}) "
                             f"(got shape {cube.shape})")
    images = (cube.ndim == 3) if images is None else images
    if any(len(c) > 1 for c in cube.chunks[1:]):
        cube = cube.rechunk({i: -1 for i in range(1, cube.ndim)})
    blocks = cube.to_delayed().ravel()
    offsets = list(np.cumsum([0] + [c * int(np.prod(cube.shape[1:-1], dtype=int))
                                    for c in cube.chunks[0]])[:-1])
    prefix = f"render-chunk-{dask.base.tokenize(cube.name, images, id(pipeline))}"
    p = dask.delayed(pipeline, name=f"pipeline-{prefix}", traverse=False)
    tasks = [dask.delayed(_render_chunk, pure=True)(p, b, images, dask_key_name=f"{prefix}-{i}")
             for i, b in enumerate(blocks)]
    t0 = time.perf_counter()
    bar = _progress_bar(len(tasks), progress, desc)
    try:
        client = client_for(scheduler)
        if client is None:
            tb = _TaskBar(bar, prefix)
            with tb.callback:
                results = list(dask.compute(*tasks, scheduler=scheduler, optimize_graph=True))
        else:
            futures = client.compute(tasks)
            try:
                with client.as_current():
                    for _ in load_distributed().as_completed(futures):
                        bar.update(1)
                results = client.gather(futures)
            except BaseException:
                client.cancel(futures)
                raise
            finally:
                if client is not scheduler:
                    client.close()
    finally:
        bar.close()
    return combine_blocks(results, offsets, images, time.perf_counter() - t0, pipeline.notes)


def client_for(scheduler):
    """None for a local scheduler name, else a distributed Client (made from an address)."""
    if scheduler in ("threads", "sync", "synchronous", "single-threaded"):
        return None
    Client = load_distributed().Client
    if isinstance(scheduler, Client):
        return scheduler
    if isinstance(scheduler, str):
        try:
            return Client(scheduler, timeout=10, set_as_default=False)
        except (OSError, TimeoutError) as err:
            raise WorkbenchError(f"--scheduler: cannot reach the dask scheduler at {scheduler!r} "
                                 f"({err})") from None
    raise WorkbenchError(f"scheduler must be 'threads', a distributed Client or an address "
                         f"(got {scheduler!r})")


def delta_e00_dask(pipeline: BatchPipeline, cube):
    """ΔE00 of every spectrum of a dask array ``cube`` (..., m) as a lazy dask array (...).

    The same block function as the render, chunk by chunk
    (``dask.array.map_blocks``); compute it on any scheduler.
    """
    da = load_dask().array
    if cube.shape[-1] != pipeline.bands:
        raise WorkbenchError(f"the cube must have {pipeline.bands} bands on the last axis "
                             f"(got shape {cube.shape})")
    if len(cube.chunks[-1]) > 1:
        cube = cube.rechunk({cube.ndim - 1: -1})
    return da.map_blocks(lambda b: pipeline.render_block(b, images=False).delta_E00, cube,
                         drop_axis=cube.ndim - 1, dtype=float)
