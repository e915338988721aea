"""Spectral cubes on disk: ``.npy`` (memory-mapped) and Zarr, their wavelengths and their chunks.

A cube holds reflectance 0-1 with the spectrum on the last axis: a spectral
image ``(height, width, bands)`` or a spectral set ``(N, bands)``. Its
wavelengths come from ``START:STOP:STEP`` (nm) or from a sidecar JSON file
beside it (``scene.npy`` → ``scene.json``; ``scene.zarr`` → ``scene.json``)
holding ``"wavelengths_nm"``: a list of numbers, or
``{"start": …, "stop": …, "step": …}``. Chunks run along the first axis only
(each chunk holds whole spectra and, for images, whole image rows); see
:mod:`workbench.analysis.render` for their evaluation.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import psutil

from workbench.errors import InputFileError, WorkbenchError
from workbench.fileio.limits import shorten
from workbench.fileio.atomic import write_text_atomically
from workbench.model.spectra import check_wavelengths, grid, is_uniform
from workbench.fileio.limits import limits, read_limited
from workbench.fileio.limits import check_count
from workbench.fileio.limits import check_regular_file

__all__ = [
    "SUB_BLOCK",
    "SpectralCube",
    "open_cube",
    "parse_wavelengths",
    "sidecar_path",
    "read_sidecar",
    "write_sidecar",
    "auto_chunk_bytes",
    "rows_per_chunk",
    "describe_grid",
]

#: Rows (spectra) per block inside a chunk: keeps the colour maths in cache.
SUB_BLOCK = 8192

#: Largest chunk the automatic rule picks, bytes.
MAX_AUTO_CHUNK = 128 * 2 ** 20
#: Smallest chunk the automatic rule picks, bytes.
MIN_AUTO_CHUNK = 4 * 2 ** 20


def describe_grid(wl: np.ndarray) -> str:
    if is_uniform(wl):
        return f"{wl[0]:g}-{wl[-1]:g} nm at {wl[1] - wl[0]:g} nm"
    return f"{wl[0]:g}-{wl[-1]:g} nm ({wl.size} points, non-uniform)"



# --------------------------------------------------------------------------
# Chunk sizes
# --------------------------------------------------------------------------


def auto_chunk_bytes(workers: int | None = None, *, available: int | None = None,
                     total: int | None = None) -> int:
    """A chunk size (bytes) from the memory available now (psutil) and the cube's size.

    available / (8 · workers), within 4-128 MiB: each worker holds its chunk
    plus float64 blocks and results, and the scheduler may read one chunk
    ahead per worker; the rest is headroom. With the cube's size ``total``
    (bytes) the chunk is also kept to total / (4 · workers) (but not below
    4 MiB), so that every worker gets several chunks.
    """
    if available is None:
        available = int(psutil.virtual_memory().available)
    workers = workers or os.cpu_count() or 1
    size = min(MAX_AUTO_CHUNK, available // (8 * workers))
    if total is not None:
        size = min(size, -(-int(total) // (4 * workers)))
    return int(max(MIN_AUTO_CHUNK, size))


def rows_per_chunk(shape, itemsize: int, chunk_bytes: int) -> int:
    """Rows of the first axis per chunk so that a chunk is at most ``chunk_bytes`` (at least 1 row).

    For spectral sets larger than a :data:`SUB_BLOCK`, the row count is
    rounded down to a whole number of blocks, so that the chunks' blocks
    fall where the in-memory path's do.
    """
    row = int(np.prod(shape[1:], dtype=np.int64)) * int(itemsize)
    rows = max(1, int(chunk_bytes) // max(row, 1))
    if len(shape) == 2 and rows > SUB_BLOCK:
        rows -= rows % SUB_BLOCK
    return int(min(rows, shape[0])) if shape[0] else 1


# --------------------------------------------------------------------------
# Cubes on disk: .npy and Zarr, wavelengths from the option or a sidecar
# --------------------------------------------------------------------------


def parse_wavelengths(text: str, *, option: str = "--wavelengths") -> np.ndarray:
    """The grid ``START:STOP:STEP`` (nm, STOP included), e.g. ``380:780:5`` → 81 points."""
    parts = str(text).split(":")
    try:
        if len(parts) != 3:
            raise ValueError
        start, stop, step = (float(p) for p in parts)
        if not all(math.isfinite(v) for v in (start, stop, step)):
            raise ValueError
    except ValueError:
        raise WorkbenchError(f"{option} must be START:STOP:STEP in nm, e.g. 380:780:5 (got {text!r})") from None
    try:
        return grid(start, stop, step)
    except WorkbenchError as err:
        raise WorkbenchError(f"{option} {text!r}: {err}") from None


def sidecar_path(cube) -> Path:
    """The sidecar JSON of a cube: the same name with ``.json`` (``scene.npy`` → ``scene.json``)."""
    p = Path(cube)
    return p.with_name(p.name[: -len(p.suffix)] + ".json") if p.suffix else p.with_name(p.name + ".json")


def read_sidecar(path) -> tuple[np.ndarray, dict]:
    """Wavelengths (nm) and the whole JSON object of a sidecar file.

    The file holds an object with ``"wavelengths_nm"``: a list of numbers
    (strictly increasing) or ``{"start": …, "stop": …, "step": …}``. Other
    keys (``"quantity"``, ``"description"`` …) are kept for the report.
    """
    p = Path(path)
    if not os.path.lexists(p):
        raise InputFileError("no such sidecar file; give the wavelengths with "
                             "--wavelengths START:STOP:STEP or write this JSON file", str(p))
    raw = read_limited(p, max_bytes=limits().design_bytes, limit_name="design_mb")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as err:
        raise InputFileError(f"expected UTF-8 JSON (byte {err.start} is not UTF-8)", str(p)) from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as err:
        raise InputFileError(f"not valid JSON ({err.msg})", str(p), line=err.lineno) from None
    except RecursionError:
        raise InputFileError("not valid JSON (nested too deeply)", str(p)) from None
    except ValueError as err:  # an integer of more digits than Python converts
        raise InputFileError(f"not valid JSON ({shorten(str(err), 60)})", str(p)) from None
    if not isinstance(data, dict) or "wavelengths_nm" not in data:
        raise InputFileError("expected a JSON object with the key 'wavelengths_nm'", str(p))
    v = data["wavelengths_nm"]
    try:
        if isinstance(v, dict):
            missing = [k for k in ("start", "stop", "step") if k not in v]
            if missing:
                raise WorkbenchError(f"'wavelengths_nm' needs start, stop and step (missing {', '.join(missing)})")
            nums = [v[k] for k in ("start", "stop", "step")]
            if not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in nums):
                raise WorkbenchError("'wavelengths_nm' start, stop and step must be numbers in nm")
            try:
                start, stop, step = (float(x) for x in nums)
            except OverflowError:
                raise WorkbenchError("'wavelengths_nm' start, stop and step must be numbers in nm "
                                     "(got a number too large for a float)") from None
            wl = grid(start, stop, step)
        elif isinstance(v, list):
            if not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in v):
                raise WorkbenchError("'wavelengths_nm' must be a list of numbers in nm")
            check_count(len(v), "bands", "wavelengths", where="'wavelengths_nm'")
            try:
                arr = np.array(v, dtype=float)
            except OverflowError:
                raise WorkbenchError("'wavelengths_nm' must be numbers in nm "
                                     "(got a number too large for a float)") from None
            wl = check_wavelengths(arr, what="'wavelengths_nm'")
        else:
            raise WorkbenchError("'wavelengths_nm' must be a list of numbers or {start, stop, step} in nm")
    except WorkbenchError as err:
        raise InputFileError(str(err), str(p)) from None
    return wl, data


def write_sidecar(path, wavelengths, **extra) -> None:
    """Write a sidecar JSON (atomically) with ``wavelengths_nm`` as a list and any extra keys."""
    wl = check_wavelengths(wavelengths)
    data = {"wavelengths_nm": [float(x) if x != int(x) else int(x) for x in wl], **extra}
    write_text_atomically(path, json.dumps(data, indent=1, ensure_ascii=False) + "\n")


class _NpyChunks:
    """Array-like view of a C-ordered ``.npy`` file for ``dask.array.from_array``.

    Each ``__getitem__`` memory-maps the file (``np.load(mmap_mode='r')``)
    and returns the asked block as a view of that map, which is dropped
    with the block once its chunk is evaluated: only the chunks in flight
    are resident (as file pages, no copy). It pickles as its path, so
    cluster workers open the file themselves.
    """

    def __init__(self, path: str, shape, dtype):
        self.path = path
        self.shape = tuple(shape)
        self.dtype = np.dtype(dtype)
        self.ndim = len(self.shape)

    def __getitem__(self, key):
        return np.load(self.path, mmap_mode="r")[key]


@dataclass(frozen=True, eq=False)
class SpectralCube:
    """A spectral image (h, w, bands) or set (N, bands) on disk, reflectance 0-1.

    ``format`` is ``'npy'`` or ``'zarr'``; ``wavelengths`` (bands,) in nm
    and ``wavelengths_from`` say where they came from.
    """

    path: str
    format: str
    shape: tuple[int, ...]
    dtype: np.dtype
    wavelengths: np.ndarray
    wavelengths_from: str
    sidecar: dict = field(default_factory=dict)

    @property
    def layout(self) -> str:
        return "image" if len(self.shape) == 3 else "set"

    @property
    def pixels(self) -> int:
        return int(np.prod(self.shape[:-1], dtype=np.int64))

    @property
    def nbytes(self) -> int:
        return self.pixels * self.shape[-1] * self.dtype.itemsize

    def to_numpy(self) -> np.ndarray:
        """The whole cube in memory."""
        if self.format == "npy":
            return np.load(self.path)
        return np.asarray(_zarr_array(self.path)[...])

    def to_dask(self, chunk_bytes: int):
        """The cube as a dask array chunked along its first axis; returns ``(array, rows per chunk)``.

        Rows per chunk by :func:`rows_per_chunk`; for Zarr, rounded down to
        whole Zarr chunks along the first axis when a chunk holds more than one.
        """
        import dask.array as da  # late: dask (~0.3 s) only for out-of-core work

        rows = rows_per_chunk(self.shape, self.dtype.itemsize, chunk_bytes)
        chunks = (rows,) + self.shape[1:]
        if self.format == "npy":
            st = os.stat(self.path)
            name = "cube-" + _token(self.path, st.st_size, st.st_mtime_ns, rows)
            arr = da.from_array(_NpyChunks(self.path, self.shape, self.dtype), chunks=chunks,
                                name=name, asarray=False, fancy=False, meta=np.empty((0,) * len(self.shape), self.dtype))
        else:
            zc = int(_zarr_array(self.path).chunks[0])
            if rows > zc:                       # whole Zarr chunks per dask chunk
                rows -= rows % zc
            chunks = (rows,) + self.shape[1:]
            arr = da.from_zarr(self.path, chunks=chunks)
        return arr, rows


def _zarr_array(path):
    """A Zarr array on disk, opened read-only."""
    import zarr  # late: optional; only Zarr cubes need it

    return zarr.open_array(str(path), mode="r")


def _token(*parts) -> str:
    return hashlib.sha1(repr(parts).encode()).hexdigest()[:16]


def open_cube(path, *, wavelengths=None, option: str = "--wavelengths") -> SpectralCube:
    """Open a cube (``.npy`` file or Zarr array directory) and find its wavelengths.

    Parameters
    ----------
    path : path-like
        A ``.npy`` file (C order, float32 or float64) or a Zarr array
        (``.zarr`` directory); spectra on the last axis; 2-D (N, bands) or
        3-D (h, w, bands).
    wavelengths : str or (bands,) array_like, optional
        ``START:STOP:STEP`` in nm or an array; otherwise the sidecar JSON
        (:func:`sidecar_path`) is read.

    Raises
    ------
    InputFileError
        Naming the file (or the option) and what was expected.
    """
    p = Path(path)
    if not p.exists():
        raise InputFileError("no such file or directory", str(p))
    check_regular_file(p, allow_dir=p.is_dir() or p.suffix.lower() == ".zarr")
    if p.is_dir() or p.suffix.lower() == ".zarr":
        fmt = "zarr"
        try:
            z = _zarr_array(p)
        except Exception as err:  # zarr raises several kinds for a non-array folder
            raise InputFileError(f"expected a Zarr array (got {type(err).__name__}: {err})", str(p)) from None
        shape, dtype = tuple(z.shape), np.dtype(z.dtype)
    elif p.suffix.lower() == ".npy":
        fmt = "npy"
        try:
            mm = np.load(p, mmap_mode="r")
        except (ValueError, OSError, EOFError) as err:
            raise InputFileError(f"expected a NumPy .npy array ({err})", str(p)) from None
        if not isinstance(mm, np.ndarray):
            raise InputFileError("expected a NumPy .npy array", str(p))
        shape, dtype = tuple(mm.shape), mm.dtype
        fortran = bool(mm.flags.f_contiguous and not mm.flags.c_contiguous)
        del mm
        if fortran:
            raise InputFileError("expected a C-ordered array (got Fortran order); save it with "
                                 "np.save(path, np.ascontiguousarray(a))", str(p))
    else:
        raise InputFileError("expected a .npy file or a .zarr array directory", str(p))
    if dtype.kind != "f" or dtype.itemsize not in (4, 8):
        raise InputFileError(f"expected float32 or float64 reflectance 0-1 (got {dtype})", str(p))
    if len(shape) not in (2, 3):
        raise InputFileError(f"expected a spectral set (N, bands) or image (height, width, bands) "
                             f"(got shape {shape})", str(p))
    if 0 in shape:
        raise InputFileError(f"the cube is empty (shape {shape})", str(p))
    sidecar: dict = {}
    if wavelengths is None:
        sc = sidecar_path(p)
        wl, sidecar = read_sidecar(sc)
        source = f"sidecar {sc}"
    elif isinstance(wavelengths, str):
        wl = parse_wavelengths(wavelengths, option=option)
        source = f"{option} {wavelengths}"
    else:
        wl = check_wavelengths(wavelengths)
        source = "given"
    if wl.size != shape[-1]:
        where = source.split(" ", 1)[1] if source.startswith("sidecar") else option
        raise InputFileError(f"{shape[-1]} bands on the last axis but {where} gives {wl.size} "
                             f"wavelengths ({describe_grid(wl)})", str(p))
    return SpectralCube(str(p), fmt, shape, dtype, wl, source, sidecar)
