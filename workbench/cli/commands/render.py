"""``workbench render DESIGN.toml CUBE --out DIR``: a camera design over a spectral image or set.

CUBE is a reflectance cube (0-1, spectrum on the last axis): a ``.npy``
file or a Zarr array, shaped (height, width, bands) for an image or
(N, bands) for a spectral set. Its wavelengths come from
``--wavelengths START:STOP:STEP`` (nm) or from the sidecar JSON beside it
(``scene.npy`` → ``scene.json``, key ``wavelengths_nm``: a list, or
``{"start", "stop", "step"}``). The cube is read out of core with
dask.array in chunks sized from the memory available (``--chunk-mb`` to
choose), on the local threaded scheduler or, with ``--scheduler ADDRESS``,
on a dask.distributed cluster.

Writes into DIR as one unit (:class:`workbench.fileio.outdir.OutputFolder`: validated
and locked before reading the cube, written into a staging folder and swapped in at
the end, so a kill leaves the old set or the new one): ``truth.png`` and ``camera.png``
(images only: display-linear BT.709 RGB, white = 1, clipped to 0-1, sRGB
transfer of IEC 61966-2-1, 8 bits), ``delta_e00.png`` (images only: the
ΔE00 map with its colour bar), ``delta_e00.npy`` (ΔE00 per pixel or
spectrum, float64) and, last, ``summary.json`` (ΔE00 mean, p95, max; grid,
illuminant, chunking, method). Ctrl-C stops cleanly (status 130) and
writes nothing.
"""

from __future__ import annotations

import math
import os
import socket
import struct
from pathlib import Path

import numpy as np
import psutil

from workbench import plots  # its modules (and matplotlib) load on first use, when a figure is drawn
from workbench.analysis.evaluator import load_camera
from workbench.analysis.render import BatchPipeline
from workbench.analysis.render_dask import load_dask, load_distributed, render_dask
from workbench.cli.commands._output import notice, to_json
from workbench.colorimetry.cie import illuminant_on
from workbench.errors import InputFileError, RangeCoverageError, WorkbenchError
from workbench.fileio.atomic import write_atomically, write_text_atomically
from workbench.fileio.design_toml import load_design
from workbench.fileio.limits import check_count, check_regular_file, how_to_raise, limits, shorten
from workbench.fileio.outdir import OutputFolder
from workbench.fileio.plausible import REFLECTANCE_RANGE
from workbench.fileio.spectral_cube import auto_chunk_bytes, describe_grid, open_cube, sidecar_path

NAME = "render"
FILES = ("truth.png", "camera.png", "delta_e00.png", "delta_e00.npy", "summary.json")

IMAGE_ENCODING = ("display-linear ITU-R BT.709 RGB (display white = 1; other display primaries "
                  "through XYZ with a Bradford adaptation to D65), clipped to 0-1, sRGB transfer "
                  "function (IEC 61966-2-1:1999), rounded to 8 bits")


def register(subparsers) -> None:
    p = subparsers.add_parser(
        NAME,
        help="render a spectral image or set through a camera design: images, ΔE00 map and summary",
        description=__doc__.splitlines()[0].replace("``", ""),
    )
    p.add_argument("design", metavar="DESIGN.toml",
                   help="design file (docs/design-file.md) or a CSV of three sensitivities R, G, B")
    p.add_argument("cube", metavar="CUBE", help="reflectance cube: .npy file or .zarr array")
    p.add_argument("--out", metavar="DIR", required=True, help="folder for the images and summary.json")
    p.add_argument("--wavelengths", metavar="START:STOP:STEP",
                   help="the cube's wavelengths in nm, e.g. 380:780:5 (default: the sidecar JSON)")
    p.add_argument("--illuminant", metavar="NAME", default="D65",
                   help="scene light: an [[illuminants]] name of the design or a CIE name (default D65)")
    p.add_argument("--extrapolate", choices=("none", "constant"), default="none",
                   help="extend a cube that does not cover the camera's grid with its end values "
                        "(CIE 167; default none: refuse)")
    p.add_argument("--chunk-mb", metavar="N", type=str, default=None,
                   help="chunk size in MiB (default: from the memory available, 4-128 MiB)")
    p.add_argument("--scheduler", metavar="threads|ADDRESS", default="threads",
                   help="dask's local threaded scheduler (default) or a dask.distributed scheduler "
                        "address such as tcp://10.0.0.5:8786")
    p.set_defaults(run=run)


def _chunk_mb(text: str | None) -> float | None:
    if text is None:
        return None
    try:
        v = float(text)
    except ValueError:
        v = math.nan
    if not (math.isfinite(v) and 0 < v <= 65536):
        raise WorkbenchError(f"--chunk-mb must be a number of MiB > 0 and ≤ 65536 (got {shorten(text, 40)!r})")
    return v


def _illuminant(design_path: Path, camera, name: str):
    """(label, values on the camera grid, matrix key or None, notes) of ``--illuminant``."""
    names: list[str] = []
    if design_path.suffix.lower() == ".toml":
        design = load_design(design_path)
        names = [i.name for i in design.illuminants]
        if name in names:
            label, values, notes = design.illuminant_values(name)
            values = np.asarray(values, dtype=float)
            if values.shape != camera.wavelengths.shape:
                raise WorkbenchError(f"--illuminant {name}: not on the camera's grid")
            return label, values, name, tuple(notes)
    try:
        label, tab = illuminant_on(camera.wavelengths, name)
    except WorkbenchError:
        have = f"one of the design's illuminants ({', '.join(names)}) or " if names else ""
        raise WorkbenchError(f"--illuminant: unknown {name!r}; expected {have}a CIE name such as "
                             "A, D50, D65, FL2") from None
    return f"CIE {label}", np.asarray(tab.values, dtype=float), label, (tab.note,)


def _save_npy(path: Path, a: np.ndarray) -> None:
    write_atomically(path, lambda fh: np.save(fh, a, allow_pickle=False))


#: Seconds to wait for a dask scheduler to answer before giving up.
SCHEDULER_TIMEOUT_S = 5.0


def parse_scheduler_address(text: str) -> tuple[str, str, int] | None:
    """``None`` for 'threads', else (scheme, host, port) of a ``tcp://`` or ``tls://`` address.

    Raises
    ------
    WorkbenchError
        Any other form (``inproc://``, ``file://``, a bare host, a port outside 1-65535).
    """
    if text == "threads":
        return None
    bad = WorkbenchError(f"--scheduler must be 'threads' or a dask scheduler address tcp://HOST:PORT "
                         f"or tls://HOST:PORT (got {shorten(text, 60)!r})")
    scheme, sep, rest = text.partition("://")
    if not sep or scheme not in ("tcp", "tls") or "/" in rest or "@" in rest:
        raise bad
    host, colon, port = rest.rpartition(":")
    if host.startswith("[") and host.endswith("]"):
        host = host[1:-1]
    if not colon or not host or not port.isdigit() or not 1 <= int(port) <= 65535:
        raise bad
    return scheme, host, int(port)


def probe_scheduler(scheme: str, host: str, port: int, *, timeout: float = SCHEDULER_TIMEOUT_S) -> None:
    """Check that ``host:port`` accepts a connection within ``timeout`` s and, for tcp://, greets like a
    dask scheduler (its first message is a small length-prefixed handshake naming ``compression``).

    The dask scheduler protocol is unauthenticated: point it only at a cluster you trust.

    Raises
    ------
    WorkbenchError
        One line: cannot connect, no answer, or not a dask scheduler.
    """
    where = f"--scheduler {scheme}://{host}:{port}"
    try:
        sock = socket.create_connection((host, port), timeout=timeout)
    except socket.timeout:
        raise WorkbenchError(f"{where}: no connection within {timeout:g} s") from None
    except OSError as err:
        raise WorkbenchError(f"{where}: cannot connect ({err.strerror or err})") from None
    with sock:
        if scheme != "tcp":
            return
        sock.settimeout(timeout)
        data = b""
        try:
            while len(data) < 64:
                block = sock.recv(256)
                if not block:
                    break
                data += block
        except socket.timeout:
            pass
        except OSError as err:
            raise WorkbenchError(f"{where}: the connection failed ({err.strerror or err})") from None
    if len(data) < 8:
        raise WorkbenchError(f"{where}: not a dask scheduler (it sent {len(data)} bytes in {timeout:g} s; "
                             "a scheduler greets at once)")
    (length,) = struct.unpack("<Q", data[:8])
    if not (16 <= length <= 1 << 20) or b"compression" not in data:
        raise WorkbenchError(f"{where}: not a dask scheduler (its first bytes {shorten(repr(data[:16]), 40)} "
                             "are not a dask handshake)")


def _scheduler(text: str):
    """(scheduler for render_dask, description, worker threads, client to close or None)."""
    parsed = parse_scheduler_address(text)
    if parsed is None:
        n = os.cpu_count() or 1
        return "threads", f"dask local threaded scheduler ({n} threads)", n, None
    probe_scheduler(*parsed)
    try:
        client = load_distributed().Client(text, timeout=SCHEDULER_TIMEOUT_S, set_as_default=False)
    except (OSError, TimeoutError, ValueError) as err:
        raise WorkbenchError(f"--scheduler {text}: cannot connect to the dask scheduler "
                             f"({shorten(str(err), 80)})") from None
    threads = sum(client.nthreads().values()) or 1
    return client, f"dask.distributed at {text} ({len(client.nthreads())} workers, {threads} threads)", \
        threads, client


def run(args) -> int:
    chunk_mb = _chunk_mb(args.chunk_mb)
    parse_scheduler_address(args.scheduler)
    folder = OutputFolder(args.out, option="--out", command="render", names=FILES)
    folder._validate()
    design_path = Path(args.design)
    check_regular_file(design_path)
    cube_path = Path(args.cube)
    if cube_path.suffix.lower() == ".zarr" or cube_path.is_dir():
        check_regular_file(cube_path, allow_dir=True)
    else:
        check_regular_file(cube_path)
    if args.wavelengths is None and cube_path.suffix:
        sc = sidecar_path(cube_path)
        if os.path.lexists(sc):
            check_regular_file(sc)
            if os.stat(sc).st_size > limits().design_bytes:
                raise InputFileError(f"larger than the limit of {limits().design_mb:g} MiB; "
                                     f"{how_to_raise('design_mb')}", str(sc))
    cube = open_cube(args.cube, wavelengths=args.wavelengths)


    camera = load_camera(design_path)
    label, E, key, ill_notes = _illuminant(design_path, camera, args.illuminant)
    try:
        pipeline = BatchPipeline(camera, E, illuminant_name=key, wavelengths=cube.wavelengths,
                                 extrapolation=args.extrapolate)
    except RangeCoverageError:
        wl, wc = cube.wavelengths, camera.wavelengths
        raise InputFileError(
            f"the cube covers {wl[0]:g}-{wl[-1]:g} nm but the camera needs {wc[0]:g}-{wc[-1]:g} nm; "
            "add --extrapolate constant to extend it with its end values (CIE 167)", cube.path) from None

    scheduler, sched_text, threads, client = _scheduler(args.scheduler)
    try:
        with folder:
            return _render(args, folder, cube, camera, label, E, key, ill_notes, pipeline, design_path,
                           chunk_mb, scheduler, sched_text, threads, client)
    finally:
        if client is not None:
            client.close()


def _render(args, out, cube, camera, label, E, key, ill_notes, pipeline, design_path,
            chunk_mb, scheduler, sched_text, threads, client) -> int:
    try:
        if chunk_mb is None:
            avail = int(psutil.virtual_memory().available)
            chunk_bytes = auto_chunk_bytes(threads, available=avail, total=cube.nbytes)
            rule = (f"from the memory available: {avail / 2**20:.0f} MiB / (8 × {threads} threads) "
                    f"(psutil), at most the cube's {cube.nbytes / 2**20:.1f} MiB / (4 × {threads}), "
                    "within 4-128 MiB")
        else:
            chunk_bytes = int(chunk_mb * 2 ** 20)
            rule = "--chunk-mb"
        darr, rows = cube.to_dask(chunk_bytes)
        pixels = rows * int(np.prod(cube.shape[1:-1], dtype=np.int64))
        check_count(pixels, "chunk_pixels", "pixels per chunk",
                    where="--chunk-mb" if chunk_mb is not None else "render")
        _check_cube_values(darr, cube, scheduler)
        result = render_dask(pipeline, darr, scheduler=scheduler, desc=f"render {Path(cube.path).name}")
    finally:
        pass

    if result.nonfinite:
        idx = result.first_nonfinite_index()
        at = (f"pixel (row {idx[0]}, column {idx[1]})" if len(idx) == 2 else f"spectrum {idx[0]}")
        many = f"{result.nonfinite} spectra hold" if result.nonfinite > 1 else "1 spectrum holds"
        raise InputFileError(f"{many} non-finite values (NaN or inf); the first is {at}; "
                             "expected finite reflectances 0-1", cube.path)
    if result.max_Y > 1.5:
        notice(f"the brightest pixel has Y = {result.max_Y:.3g} × the perfect diffuser; "
               "reflectances are taken as 0-1 (is the cube in percent?)")

    stats = result.stats()
    written = []
    if cube.layout == "image":
        images = plots.images  # imports matplotlib now: images are being drawn
        images.save_rgb8_png(result.truth_sRGB8, out / "truth.png",
                      description=f"truth under {label}: {IMAGE_ENCODING}")
        images.save_rgb8_png(result.camera_sRGB8, out / "camera.png",
                      description=f"{camera.name} under {label}: {IMAGE_ENCODING}")
        ax = images.plot_delta_e_map(result.delta_E00, title=(
            f"{camera.name} under {label}: ΔE00 mean {stats['mean']:.2f}, p95 {stats['p95']:.2f}, "
            f"max {stats['max']:.2f}"))
        images.save_figure(ax.figure, out / "delta_e00.png")
        written += ["truth.png", "camera.png", "delta_e00.png"]
    _save_npy(out / "delta_e00.npy", result.delta_E00)
    written.append("delta_e00.npy")

    summary = {
        "design": camera.name,
        "design_file": str(design_path),
        "cube": cube.path,
        "format": cube.format,
        "layout": cube.layout,
        "shape": list(cube.shape),
        "dtype": cube.dtype.name,
        "pixels": result.count,
        "grid": _grid_text(cube.wavelengths),
        "wavelengths_from": cube.wavelengths_from,
        "camera_grid": _grid_text(camera.wavelengths),
        "illuminant": label,
        "display": f"{camera.primaries.name} (white {camera.primaries.white_name})",
        "delta_E00": {**stats, "unit": "ΔE00 (CIEDE2000, k_L = k_C = k_H = 1)",
                      "over": "every pixel" if cube.layout == "image" else "every spectrum",
                      "p95_method": "95th percentile, linear interpolation between order statistics"},
        "clipped_fraction": ({"truth": result.clipped_truth / result.count,
                              "camera": result.clipped_camera / result.count,
                              "meaning": "pixels with a linear BT.709 component outside 0-1 before "
                                         "clipping for the PNG"}
                             if cube.layout == "image" else None),
        "max_Y_relative": result.max_Y,
        "chunking": {"chunk_mb": round(chunk_bytes / 2 ** 20, 3), "rule": rule,
                     "rows_per_chunk": rows, "axis": "first axis only (whole spectra, whole image rows)",
                     "chunks": result.chunks, "scheduler": sched_text},
        "elapsed_s": round(result.seconds, 3),
        "images": ({"truth": "truth.png", "camera": "camera.png", "delta_e00_map": "delta_e00.png",
                    "encoding": IMAGE_ENCODING} if cube.layout == "image" else None),
        "arrays": {"delta_e00": "delta_e00.npy (float64, the cube's leading shape)"},
        "method": list(pipeline.notes) + [
            "raw RGB = Σ S·R·E·Δλ; one (bands, 6) weight matrix for raw RGB and the adapted truth "
            "XYZ, applied chunk by chunk",
        ],
        "notes": list(ill_notes),
    }
    write_text_atomically(out / "summary.json", to_json(summary) + "\n")
    written.append("summary.json")
    out.commit()
    out = out.target
    print(f"ΔE00 over {result.count} {'pixels' if cube.layout == 'image' else 'spectra'} "
          f"(CIEDE2000, {camera.name} under {label} vs truth): mean {stats['mean']:.4f}, "
          f"p95 {stats['p95']:.4f}, max {stats['max']:.4f}")
    notice(f"wrote {', '.join(written)} to {out} ({result.chunks} chunks of {rows} rows, "
           f"{sched_text}, {result.seconds:.2f} s)")
    return 0


def _check_cube_values(darr, cube, scheduler) -> None:
    """Refuse a cube with reflectances below −0.1 or above 10; notice small negatives and values above 1.

    The rule of :mod:`workbench.fileio.plausible`, counted in one pass over the cube (chunk by chunk).
    """
    dask = load_dask()
    da = dask.array
    lo, hi = REFLECTANCE_RANGE
    finite = da.isfinite(darr)
    masked = da.where(finite, darr, 0)
    counts = (da.sum(masked < lo), da.sum(masked > hi), da.sum(masked < 0), da.sum(masked > 1),
              da.min(masked), da.max(masked))
    kwargs = {"scheduler": scheduler} if isinstance(scheduler, str) else {}
    if not isinstance(scheduler, str):
        kwargs = {"scheduler": scheduler.get}
    with np.errstate(invalid="ignore"):
        below, above, neg, over, vmin, vmax = (x.item() if hasattr(x, "item") else x
                                               for x in dask.compute(*counts, **kwargs))
    if below:
        raise InputFileError(f"{below} reflectance values below {lo:g} (the lowest {vmin:g}); expected "
                             f"reflectance 0-1 (small negatives, {lo:g} to 0, are accepted with a notice)",
                             cube.path)
    if above:
        raise InputFileError(f"{above} reflectance values above {hi:g} (the largest {vmax:g}); expected "
                             "reflectance 0-1 (is the cube in percent?)", cube.path)
    if neg:
        notice(f"{cube.path}: {neg} reflectance values below 0 (the lowest {vmin:.3g}) used as written "
               "(measurement noise?); not clipped")
    if over:
        notice(f"{cube.path}: {over} reflectance values above 1 (the largest {vmax:.3g}) used as written")


def _grid_text(wl) -> str:
    return describe_grid(np.asarray(wl, dtype=float))

