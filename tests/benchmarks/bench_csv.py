"""Benchmark: reading a large wide CSV of spectra (100,000 spectra × 81 wavelengths).

Run: ``uv run python tests/benchmarks/bench_csv.py [SPECTRA]``. Writes an
invented table (uniform random reflectances, 380-780 nm at 5 nm, values with
four decimals) to a temporary folder, then reads it in a fresh process with
:func:`workbench.fileio.spectra_csv.read_spectra_csv` and prints the time,
the CPU time (``time.process_time``), the peak resident memory of that process and its increase over the
process before reading (``resource.getrusage`` ``ru_maxrss``), each also as
a ratio to the file size. Targets: ≤ 2 s and ≤ 4 × the file size.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

READ = r"""
import json, resource, sys, time
import numpy, pandas
from workbench.fileio import spectra_csv
from workbench.fileio.spectra_csv import read_spectra_csv
if sys.argv[2] == "cell":
    spectra_csv._FAST_MIN_BYTES = 1 << 62
rss = lambda: resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
before = rss()
t, c = time.perf_counter(), time.process_time()
s = read_spectra_csv(sys.argv[1])
dt, cpu = time.perf_counter() - t, time.process_time() - c
print(json.dumps({"seconds": dt, "cpu": cpu, "rss_before": before, "rss_peak": rss(), "shape": list(s.values.shape)}))
"""


def write_table(path: Path, spectra: int) -> None:
    rng = np.random.default_rng(1)
    wl = np.arange(380, 781, 5)
    values = rng.random((wl.size, spectra)).round(4)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("wavelength_nm," + ",".join(f"s{i}" for i in range(spectra)) + "\n")
        for w, row in zip(wl.tolist(), values):
            fh.write(f"{w}," + ",".join(map(repr, row.tolist())) + "\n")


def main() -> None:
    spectra = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "many.csv"
        write_table(path, spectra)
        size = path.stat().st_size
        results = {}
        for path_kind in ("bulk", "cell"):
            out = subprocess.run([sys.executable, "-c", READ, str(path), path_kind], check=True,
                                 capture_output=True, text=True).stdout
            results[path_kind] = json.loads(out)
    mib = 2 ** 20
    print(f"file: {spectra} spectra × 81 wavelengths, {size / mib:.1f} MiB")
    for path_kind, label in (("bulk", "bulk path (pandas C parser)"), ("cell", "cell-by-cell path")):
        r = results[path_kind]
        grow = r["rss_peak"] - r["rss_before"]
        print(f"{label}: {r['seconds']:.2f} s wall, {r['cpu']:.2f} s CPU (target ≤ 2 s; ratio "
              f"{r['seconds'] / 2:.2f} wall, {r['cpu'] / 2:.2f} CPU); peak RSS {r['rss_peak'] / mib:.0f} MiB "
              f"= {r['rss_peak'] / size:.2f} × file; growth while reading {grow / mib:.0f} MiB = "
              f"{grow / size:.2f} × file (target ≤ 4)")
    b, c = results["bulk"], results["cell"]
    print(f"bulk vs cell: {c['cpu'] / b['cpu']:.1f} × less CPU, "
          f"{(c['rss_peak'] - c['rss_before']) / (b['rss_peak'] - b['rss_before']):.1f} × less memory growth "
          f"(interpreter, numpy and pandas before reading: {b['rss_before'] / mib:.0f} MiB; on a shared machine "
          "the CPU time is the steadier figure)")
    r = b
    print(f"shape read: {tuple(r['shape'])}")


if __name__ == "__main__":
    main()
