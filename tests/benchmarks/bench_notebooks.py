"""Benchmark: each notebook run headless, cell by cell, against a kernel that only imports numpy and scipy.

Run on demand:  uv run python tests/benchmarks/bench_notebooks.py [--runs 3] [--only 03 04] [--cells]

Each notebook in ``notebooks/`` is run by nbclient as ``tests/test_notebooks.py``
runs it (a fresh ``python3`` kernel, a temporary working folder). The rounds
alternate the notebooks and the baseline, so a busy machine slows them
alike; medians over the rounds are printed.

- **baseline (B)**: a notebook of one cell, ``import numpy, scipy.optimize``,
  run the same way (kernel start, the cell, shutdown);
- **total**: from creating the client to the kernel shut down (what
  ``tests/test_notebooks.py`` waits for), with its ratio to B;
- **kernel**: starting the kernel until it answers (``setup_kernel``);
- **CPU**: the CPU time (user + system) of the kernel process from its
  start to the last cell's reply — steadier than wall time on a shared
  machine, with its ratio to B's;
- **cells**: the sum of the per-cell times nbclient records with
  ``record_timing=True`` (cell metadata ``execution``: from
  ``iopub.execute_input`` to ``shell.execute_reply``), and with ``--cells``
  every code cell's time, its CPU time (the kernel's ``time.process_time()``
  asked between cells) and first line.

The design panel's first figure (notebook 02, the cell that builds
``design_panel``): the time of that cell in the kernel, i.e. from the
kernel starting the cell (``iopub.execute_input``) to its reply. The panel
draws its figure (SVG) into its ``Output`` widget while it is built,
so when the reply comes the figure is in the widget state the cell
displays; the browser's own rendering of the widget is not included.
In-process (``--panel``), a fresh Python times the same cell's parts:
the imports, the panel up to the first picture put into its ``Output`` and
the panel complete.

Python's bytecode caches matter here more than anywhere: a kernel that
compiles matplotlib, pandas and colour-science from source takes seconds
longer. ``PYTHONDONTWRITEBYTECODE`` is removed from the kernels'
environment (as on a user's machine) and a warm-up process imports the
notebooks' modules once before the rounds, so the caches exist.

Aims (issue 16; medians on a quiet 2-core machine, not timed tests): each
notebook ≤ 6 s headless, the design panel's first figure ≤ 1 s after its
cell starts.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import nbformat
from nbclient import NotebookClient

ROOT = Path(__file__).resolve().parents[2]
NOTEBOOKS = ROOT / "notebooks"
BASELINE = "baseline: import numpy, scipy.optimize"
PANEL_NOTEBOOK = "02-camera-design.ipynb"

PANEL_SNIPPET = r"""
import json, sys, time
t0 = time.perf_counter()
from workbench import demo_dir
import workbench.widgets.design as wd
t1 = time.perf_counter()
first = []
_show = wd.show_svg
def show_svg(*a, **k):
    _show(*a, **k)
    if not first:
        first.append(time.perf_counter())
wd.show_svg = show_svg
panel = wd.design_panel(demo_dir() / "tern3_design.toml")
t2 = time.perf_counter()
assert panel.svg() is not None and not panel.error.text, panel.error.text
print(json.dumps({"imports": t1 - t0, "first_png": first[0] - t0, "panel": t2 - t0}))
"""


WARM_UP = ("import ipykernel.kernelapp, IPython, numpy, scipy.optimize, scipy.interpolate, pandas, "
           "matplotlib.pyplot, matplotlib_inline.backend_inline, ipywidgets, tqdm.auto, colour, "
           "workbench.widgets.design, workbench.widgets.light, workbench.widgets.tolerance, "
           "workbench.widgets.primaries, workbench.widgets.coating, workbench.analysis.light, "
           "workbench.analysis.tolerance, workbench.analysis.fit, workbench.analysis.recipe")


def _stamp(text: str) -> float:
    return dt.datetime.fromisoformat(text.replace("Z", "+00:00")).timestamp()


def _kernel_cpu(client) -> float:
    """CPU seconds (user + system) the kernel process has used so far; NaN when it cannot be read."""
    try:
        import psutil

        cpu = psutil.Process(client.km.provisioner.process.pid).cpu_times()
        return cpu.user + cpu.system
    except Exception:  # noqa: BLE001 - a figure for the table only
        return float("nan")


def _cell_cpu(client) -> float:
    """The kernel's CPU seconds (``time.process_time``, all its threads), asked between cells (not timed)."""
    reply = client.wait_for_reply(client.kc.execute("", silent=True, store_history=False,
                                                    user_expressions={"t": "__import__('time').process_time()"}))
    return float(reply["content"]["user_expressions"]["t"]["data"]["text/plain"])


def run_notebook(nb) -> dict:
    """Run one notebook (a NotebookNode, changed in place); wall times in seconds and per-cell times."""
    client = NotebookClient(nb, timeout=600, kernel_name="python3", record_timing=True,
                            resources={"metadata": {"path": tempfile.mkdtemp(prefix="bench-nb-")}})
    t0 = time.perf_counter()
    with client.setup_kernel():
        t1 = time.perf_counter()
        client.wait_for_reply(client.kc.kernel_info())
        cell_cpu = {}
        for index, cell in enumerate(nb.cells):
            before = _cell_cpu(client) if cell.cell_type == "code" else None
            client.execute_cell(cell, index)
            if before is not None:
                cell_cpu[index] = _cell_cpu(client) - before
        t2 = time.perf_counter()
        cpu = _kernel_cpu(client)
    t3 = time.perf_counter()
    cells = []
    for i, cell in enumerate(nb.cells):
        ex = cell.get("metadata", {}).get("execution")
        if cell.cell_type != "code" or not ex:
            continue
        seconds = _stamp(ex["shell.execute_reply"]) - _stamp(ex["iopub.execute_input"])
        errors = [o for o in cell.get("outputs", []) if o.get("output_type") == "error"]
        first = next((ln for ln in cell.source.splitlines() if ln.strip() and not ln.startswith("%")), "")
        cells.append({"index": i, "seconds": seconds, "cpu": cell_cpu.get(i, float("nan")), "first_line": first,
                      "error": bool(errors)})
    return {"total": t3 - t0, "kernel": t1 - t0, "run": t2 - t1, "shutdown": t3 - t2, "cpu": cpu,
            "cells": cells, "cell_sum": sum(c["seconds"] for c in cells)}


def baseline_notebook():
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell("import numpy, scipy.optimize")]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    return nb


def panel_in_process() -> dict:
    out = subprocess.run([sys.executable, "-c", PANEL_SNIPPET], capture_output=True, text=True, check=True,
                         cwd=tempfile.mkdtemp(prefix="bench-panel-"))
    return json.loads(out.stdout.strip().splitlines()[-1])


def med(values) -> float:
    return float(statistics.median(values))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=3, help="rounds (each runs every notebook and the baseline)")
    ap.add_argument("--only", nargs="*", default=None, help="notebook name prefixes, e.g. 03 04")
    ap.add_argument("--cells", action="store_true", help="print every code cell's time")
    ap.add_argument("--panel", action="store_true", help="also time the design panel in a fresh process")
    args = ap.parse_args()

    os.environ.pop("PYTHONDONTWRITEBYTECODE", None)
    subprocess.run([sys.executable, "-c", WARM_UP], check=True)
    paths = sorted(NOTEBOOKS.glob("*.ipynb"))
    if args.only:
        paths = [p for p in paths if any(p.name.startswith(o) for o in args.only)]
    results: dict[str, list[dict]] = {BASELINE: [], **{p.name: [] for p in paths}}
    panel_runs: list[dict] = []
    for r in range(args.runs):
        for name in results:
            nb = baseline_notebook() if name == BASELINE else nbformat.read(NOTEBOOKS / name, as_version=4)
            res = run_notebook(nb)
            bad = [c["index"] for c in res["cells"] if c["error"]]
            if bad:
                print(f"warning: {name} cells {bad} raised an error", file=sys.stderr)
            results[name].append(res)
            print(f"  round {r + 1}: {name} {res['total']:.2f} s", file=sys.stderr, flush=True)
        if args.panel:
            panel_runs.append(panel_in_process())

    base = med([x["total"] for x in results[BASELINE]])
    print(f"\nmedians of {args.runs} rounds (wall time, s); B = {base:.2f} s ({BASELINE}, kernel start "
          f"{med([x['kernel'] for x in results[BASELINE]]):.2f} s)")
    base_cpu = med([x["cpu"] for x in results[BASELINE]])
    print(f"kernel CPU of B: {base_cpu:.2f} s")
    print(f"{'notebook':34s} {'total':>7s} {'÷ B':>6s} {'CPU':>6s} {'÷ B':>6s} {'kernel':>7s} {'cells':>7s} "
          f"{'shutdown':>8s}  slowest cell")
    for name, runs in results.items():
        if name == BASELINE:
            continue
        total = med([x["total"] for x in runs])
        per_cell = {c["index"]: med([[d for d in x["cells"] if d["index"] == c["index"]][0]["seconds"]
                                     for x in runs]) for c in runs[0]["cells"]}
        per_cpu = {c["index"]: med([[d for d in x["cells"] if d["index"] == c["index"]][0]["cpu"]
                                    for x in runs]) for c in runs[0]["cells"]}
        slow = max(per_cell, key=per_cell.get)
        cpu = med([x["cpu"] for x in runs])
        print(f"{name:34s} {total:7.2f} {total / base:6.2f} {cpu:6.2f} {cpu / base_cpu:6.2f} "
              f"{med([x['kernel'] for x in runs]):7.2f} "
              f"{med([x['cell_sum'] for x in runs]):7.2f} {med([x['shutdown'] for x in runs]):8.2f}  "
              f"[{slow}] {per_cell[slow]:.2f} s")
        if args.cells:
            for c in runs[0]["cells"]:
                print(f"    [{c['index']:2d}] {per_cell[c['index']]:6.2f} s  CPU {per_cpu[c['index']]:5.2f} s  "
                      f"{c['first_line'][:70]}")
    if PANEL_NOTEBOOK in results:
        runs = results[PANEL_NOTEBOOK]
        nb = nbformat.read(NOTEBOOKS / PANEL_NOTEBOOK, as_version=4)
        idx = next(i for i, c in enumerate(nb.cells) if c.cell_type == "code" and "design_panel(" in c.source)
        t = med([[c for c in x["cells"] if c["index"] == idx][0]["seconds"] for x in runs])
        print(f"\ndesign panel, first figure: {t:.2f} s from the start of cell [{idx}] of {PANEL_NOTEBOOK} to its "
              "reply (the figure in the widget state; aim ≤ 1 s)")
    if panel_runs:
        print("design panel in a fresh process (s): imports {:.2f}, first picture in the Output {:.2f}, panel built "
              "{:.2f}".format(*(med([p[k] for p in panel_runs]) for k in ("imports", "first_png", "panel"))))


if __name__ == "__main__":
    main()
