"""Speed and memory of the batch pipeline in memory and out of core (run on demand, never in the tests).

    uv run python tests/benchmarks/bench_scale.py [--spectra 10000000] [--dtype float32]
        [--path /tmp/workbench_bench_scale.npy] [--chunk-mb N] [--repeats 3] [--rounds 2] [--keep]

One run (each path in fresh processes, alternated over ``--rounds``, runs
interleaved, medians and best times printed; the ratios come from runs
interleaved in one process, so that the machine's other load hits every
path alike): an invented spectral set of N spectra × 81 bands (380-780 nm at
5 nm; convex mixtures of three open samples, spectra-demo/make_scene.py
--large) is written to /tmp as .npy (float32 by default: 10⁷ spectra are
3.24 GB; the free disk and memory are checked first and N is scaled down
with a message when short). Then, each in a fresh process so that its
peak RSS is its own:

- **in memory**: the whole array loaded, a plain copy of it (the memory
  floor) against ``render_in_memory`` (ΔE00 per spectrum; numpy on all
  cores, and on one); aim: within 2× of the copy;
- **dask**: the same file memory-mapped chunk by chunk
  (``SpectralCube.to_dask``, chunk size from psutil or ``--chunk-mb``) and
  ``render_dask`` on the local threaded scheduler, timed beside the
  in-memory runs and again alone in a fresh process for its peak RSS;
  aim: ≤ 1.5× the in-memory time, with the peak RSS bounded by the chunks
  in flight plus the ΔE00 result (8 bytes per spectrum).

The camera is the invented demo design (spectra-demo/tern3_design.toml)
under CIE D65. Prints the medians, the ratios, the peak RSS and whether the
two paths gave the same ΔE00 bit for bit. The file is removed afterwards
unless ``--keep``. The machine's other load shows in the figures; rerun
when in doubt.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import os
import resource
import shutil
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
DESIGN = ROOT / "spectra-demo" / "tern3_design.toml"
BANDS = 81


def _median_time(fn, repeats):
    times = []
    out = None
    for _ in range(repeats):
        out = None                       # the previous result is freed before the next run
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times)), out


def _peak_rss() -> int:
    """Peak RSS of this process (VmHWM; ru_maxrss would carry the parent's RSS across fork + exec)."""
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024


def _rss() -> int:
    import psutil

    return int(psutil.Process().memory_info().rss)


def _pipeline():
    from workbench.colorimetry.cie import illuminant_on
    from workbench.analysis.evaluator import load_camera
    from workbench.analysis.render import BatchPipeline

    cam = load_camera(DESIGN)
    return BatchPipeline(cam, np.asarray(illuminant_on(cam.wavelengths, "D65")[1].values))


def child_memory(args) -> dict:
    from workbench.analysis.render import render_in_memory

    p = _pipeline()
    t0 = time.perf_counter()
    R = np.load(args.path)
    t_load = time.perf_counter() - t0
    base = _rss()
    workers = os.cpu_count() or 1
    from workbench.analysis.render_dask import render_dask
    from workbench.fileio.spectral_cube import auto_chunk_bytes, open_cube

    cube = open_cube(args.path)
    chunk = int(args.chunk_mb * 2 ** 20) if args.chunk_mb else auto_chunk_bytes(total=cube.nbytes)
    arr, _ = cube.to_dask(chunk)
    times = {"copy": [], "one": [], "all": [], "dask": []}
    de = None
    for _ in range(args.repeats):              # interleaved, so that other load hits all four alike
        times["copy"].append(_median_time(lambda: R.copy(), 1)[0])
        times["one"].append(_median_time(lambda: p.render_block(R, images=False).delta_E00, 1)[0])
        de = None
        t, de = _median_time(lambda: p.render_block(R, images=False, workers=workers).delta_E00, 1)
        times["all"].append(t)
        times["dask"].append(_median_time(lambda: render_dask(p, arr, progress=False).chunks, 1)[0])
    res = render_in_memory(p, R[:1000])          # the public entry point on a slice, for the record
    assert res.count == 1000
    np.save(args.path + ".mem_de.npy", de)
    return {"t_load": t_load, "times": times, "workers": workers,
            "peak_rss": _peak_rss(), "base_rss": base, "stats": {
                "mean": float(de.mean()), "p95": float(np.percentile(de, 95)), "max": float(de.max())}}


def child_dask(args) -> dict:
    from workbench.analysis.render_dask import render_dask
    from workbench.fileio.spectral_cube import auto_chunk_bytes, open_cube

    p = _pipeline()
    cube = open_cube(args.path)
    chunk = int(args.chunk_mb * 2 ** 20) if args.chunk_mb else auto_chunk_bytes(total=cube.nbytes)
    arr, rows = cube.to_dask(chunk)
    import dask  # noqa: F401  (imported before the baseline is taken)
    import distributed  # noqa: F401

    render_dask(p, arr[: rows * 2], progress=False)           # warm-up: imports and threads
    base = _rss()
    times = []
    res = None
    for _ in range(args.repeats):
        res = None
        t, res = _median_time(lambda: render_dask(p, arr, progress=False), 1)
        times.append(t)
    np.save(args.path + ".dask_de.npy", res.delta_E00)
    return {"times": times, "rows": rows, "chunk": chunk, "chunks": res.chunks, "peak_rss": _peak_rss(),
            "base_rss": base, "threads": os.cpu_count() or 1}


def _child(mode: str, args) -> dict:
    cmd = [sys.executable, __file__, "--child", mode, "--path", args.path, "--repeats", str(args.repeats)]
    if args.chunk_mb:
        cmd += ["--chunk-mb", str(args.chunk_mb)]
    out = subprocess.run(cmd, check=True, capture_output=True, text=True, cwd=ROOT)
    return json.loads(out.stdout.strip().splitlines()[-1])


def _scale_down(n: int, itemsize: int, path: Path) -> int:
    import psutil

    need = n * BANDS * itemsize
    free = shutil.disk_usage(path.parent).free
    avail = psutil.virtual_memory().available
    # disk: the file; memory: the in-memory process holds the array, a copy and its working set
    fit = min(int(0.8 * free) // (BANDS * itemsize), int(avail / 2.6) // (BANDS * itemsize))
    if fit < n:
        print(f"note: {path.parent} has {free / 1e9:.1f} GB free and {avail / 1e9:.1f} GB of memory "
              f"are available; {n:,} spectra need {need / 1e9:.2f} GB on disk and about "
              f"{2.6 * need / 1e9:.1f} GB in memory: scaled down to {fit:,} spectra", file=sys.stderr)
        return max(1, fit)
    return n


def _make(path: Path, n: int, dtype: str) -> float:
    if path.exists():
        try:
            a = np.load(path, mmap_mode="r")
            if a.shape == (n, BANDS) and a.dtype == np.dtype(dtype):
                print(f"note: reusing {path}", file=sys.stderr)
                return 0.0
        except (ValueError, OSError):
            pass
    spec = importlib.util.spec_from_file_location("make_scene", ROOT / "spectra-demo" / "make_scene.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    t0 = time.perf_counter()
    mod.write_large(path, n, dtype)
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--spectra", type=int, default=10_000_000)
    ap.add_argument("--dtype", choices=("float32", "float64"), default="float32")
    ap.add_argument("--path", default="/tmp/workbench_bench_scale.npy")
    ap.add_argument("--chunk-mb", type=float, default=None)
    ap.add_argument("--repeats", type=int, default=3, help="runs per process")
    ap.add_argument("--rounds", type=int, default=2, help="fresh processes per path, alternated")
    ap.add_argument("--keep", action="store_true", help="keep the generated file")
    ap.add_argument("--child", choices=("memory", "dask"), help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        sys.path.insert(0, str(ROOT))
        fn = child_memory if args.child == "memory" else child_dask
        print(json.dumps(fn(args)))
        return

    path = Path(args.path)
    itemsize = np.dtype(args.dtype).itemsize
    n = _scale_down(args.spectra, itemsize, path)
    t_make = _make(path, n, args.dtype)
    size = n * BANDS * itemsize
    try:
        mems, dsks = [], []
        for _ in range(args.rounds):           # alternate the two processes
            mems.append(_child("memory", args))
            dsks.append(_child("dask", args))
        a = np.load(str(path) + ".mem_de.npy")
        b = np.load(str(path) + ".dask_de.npy")
        same = bool(np.array_equal(a, b))
        diff = float(np.max(np.abs(a - b)))
    finally:
        for suffix in (".mem_de.npy", ".dask_de.npy"):
            Path(str(path) + suffix).unlink(missing_ok=True)
        if not args.keep:
            path.unlink(missing_ok=True)
            path.with_name(path.stem + ".json").unlink(missing_ok=True)

    mem, dsk = mems[-1], dsks[-1]
    samples = {k: [t for m in mems for t in m["times"][k]] for k in ("copy", "one", "all", "dask")}
    samples["dask alone"] = [t for d in dsks for t in d["times"]]
    med = {k: float(np.median(v)) for k, v in samples.items()}
    best = {k: float(np.min(v)) for k, v in samples.items()}
    peak_mem = max(m["peak_rss"] for m in mems)
    peak_dask = max(d["peak_rss"] for d in dsks)
    w, th = mem["workers"], dsk["threads"]
    gb = lambda b: b / 1e9  # noqa: E731
    print(f"{n:,} spectra x {BANDS} bands, {args.dtype} ({gb(size):.2f} GB) at {path}; camera "
          f"{DESIGN.name} under D65; ΔE00 per spectrum; {len(samples['copy'])} runs each "
          f"({args.rounds} rounds x {args.repeats}), median / best")
    if t_make:
        print(f"  written by make_scene.py --large in {t_make:.1f} s")
    print(f"  load into memory (np.load, not timed below)   {mem['t_load']:7.2f} s")
    rows_out = [("plain copy of the input", "copy"), (f"in memory, {w} threads (render_block)", "all"),
                ("in memory, 1 thread", "one"),
                (f"dask, local threads ({th}), .npy chunk by chunk", "dask"),
                ("  the same in its own process (for its RSS)", "dask alone")]
    for label, k in rows_out:
        print(f"  {label:44s} {med[k]:7.2f} s / {best[k]:6.2f} s  ({med[k] / n * 1e9:5.0f} ns/spectrum)")
    print(f"    dask: {dsk['chunks']} chunks of {dsk['rows']:,} spectra ({dsk['chunk'] / 2**20:.0f} MiB)")
    print(f"  ratio in memory ({w} threads) / copy    {med['all'] / med['copy']:5.2f} / {best['all'] / best['copy']:5.2f}"
          "   (aim <= 2)")
    print(f"  ratio in memory (1 thread) / copy     {med['one'] / med['copy']:5.2f} / {best['one'] / best['copy']:5.2f}")
    fastest = min(med["all"], med["one"])
    print(f"  ratio dask / in memory (faster of the two)  {med['dask'] / fastest:5.2f} / "
          f"{best['dask'] / min(best['all'], best['one']):5.2f}   (aim <= 1.5)")
    print(f"  peak RSS, in-memory process  {gb(peak_mem):6.2f} GB (array {gb(size):.2f} GB + its copy "
          f"+ working set; {gb(mem['base_rss']):.2f} GB after loading)")
    bound = th * 2 * dsk["chunk"] + 3 * n * 8
    work = peak_dask - dsk["base_rss"]
    print(f"  peak RSS, dask process       {gb(peak_dask):6.2f} GB: baseline {gb(dsk['base_rss']):.2f} GB + "
          f"{gb(work):.2f} GB at work (bound {gb(bound):.2f} GB = {th} threads x 2 x chunk + "
          f"3 x the ΔE00 result of {gb(n * 8):.2f} GB; the input is {gb(size):.2f} GB): "
          f"{'within' if work <= bound else 'ABOVE'} the bound")
    print(f"  same ΔE00 both paths: {'bit for bit' if same else f'max |difference| {diff:.2e}'}; "
          f"mean {mem['stats']['mean']:.4f}, p95 {mem['stats']['p95']:.4f}, max {mem['stats']['max']:.4f} ΔE00")


if __name__ == "__main__":
    main()
