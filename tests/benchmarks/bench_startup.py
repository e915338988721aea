"""Benchmark: each command as a whole process, against importing numpy (and scipy.optimize) in the same run.

Run on demand:  uv run python tests/benchmarks/bench_startup.py [--runs 9]

What a user waits for is the whole process: Python's start, the imports,
the work and the output. Each command below runs as its own process; the
rounds alternate every command and both baselines (hyperfine-style), so
a busy machine slows them alike, and medians are printed, as wall time and
as CPU time (user + system of the child; steadier on a shared machine),
with their ratios to

- ``python -c "import numpy"`` (N) and
- ``python -c "import numpy, scipy.optimize"`` (NS).

Aims (ratios of medians; not timed tests):

- ``workbench --help`` ≤ 1.5 N
- ``workbench evaluate spectra-demo/tern3_design.toml`` ≤ 1.5 NS
- ``workbench fit spectra-demo/tern3_design.toml --out DIR`` (report included) ≤ 2.5 NS
- the report itself (``write_fit_report`` after the fit, in the same
  process) ≤ 0.3 s; shown split into the import of the report module
  (with its SVG plotter, workbench.plots.vector; no matplotlib), the
  noise-against-accuracy points (three matrix rules, before and after)
  and the figures drawn and embedded as SVG.

One warm-up round comes first (it also writes Python's bytecode caches,
which ``PYTHONDONTWRITEBYTECODE`` is removed from the children's
environment for, as on a user's machine).
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "spectra-demo"
PY = sys.executable

REPORT_SNIPPET = r"""
import json, sys, time
from workbench.fileio.design_toml import load_design
from workbench.analysis.fit import fit_design
from workbench.analysis.evaluator import DesignEvaluator
design = load_design(sys.argv[1])
result = fit_design(design, progress=False)
ev = DesignEvaluator(result.start_design)
w0, c0 = time.perf_counter(), time.process_time()
from workbench.report import fit_report as fr
w1, c1 = time.perf_counter(), time.process_time()
points = fr.noise_accuracy_points(result, ev)
w2, c2 = time.perf_counter(), time.process_time()
figs = fr.fit_report_figures(result, ev, points=points)
images = [fr._data_uri(f) for f in figs.values()]
w3, c3 = time.perf_counter(), time.process_time()
print(json.dumps({"import": [w1 - w0, c1 - c0], "points": [w2 - w1, c2 - c1], "figures": [w3 - w2, c3 - c2],
                  "report": [w3 - w0, c3 - c0]}))
"""


def commands(out: Path) -> dict[str, list[str]]:
    wb = [PY, "-m", "workbench"]
    return {
        "N: python -c 'import numpy'": [PY, "-c", "import numpy"],
        "NS: python -c 'import numpy, scipy.optimize'": [PY, "-c", "import numpy, scipy.optimize"],
        "workbench --help": wb + ["--help"],
        "workbench evaluate (demo)": wb + ["evaluate", str(DEMO / "tern3_design.toml")],
        "workbench fit (demo, report)": wb + ["fit", str(DEMO / "tern3_design.toml"), "--out", str(out / "a"),
                                              "--quiet"],
        "workbench fit (demo, --no-report)": wb + ["fit", str(DEMO / "tern3_design.toml"), "--out",
                                                   str(out / "b"), "--quiet", "--no-report"],
        "workbench tristimulus (studio set)": wb + ["tristimulus", str(DEMO / "studio_reflectances.csv")],
        "workbench primaries ITU-R BT.709": wb + ["primaries", "ITU-R BT.709"],
        "workbench light (demo LED)": wb + ["light", str(DEMO / "luminaire_led_export.csv")],
    }


def run_once(cmd: list[str], env: dict) -> tuple[float, float]:
    """Wall and CPU seconds (user + system) of one process."""
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(cmd)} failed ({proc.returncode}): {proc.stderr.decode()[-500:]}")
    return wall, (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=9, help="rounds (default 9)")
    ap.add_argument("--report-runs", type=int, default=5, help="runs of the in-process report timing (default 5)")
    args = ap.parse_args()
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    with tempfile.TemporaryDirectory() as tmp:
        cmds = commands(Path(tmp))
        names = list(cmds)
        for name in names:  # warm-up: bytecode caches, disk cache
            run_once(cmds[name], env)
        wall: dict[str, list[float]] = {n: [] for n in names}
        cpu: dict[str, list[float]] = {n: [] for n in names}
        for r in range(args.runs):
            order = names[r % len(names):] + names[:r % len(names)]  # rotate, so no command always runs first
            for name in order:
                w, c = run_once(cmds[name], env)
                wall[name].append(w)
                cpu[name].append(c)
        rep: dict[str, list[list[float]]] = {}
        for _ in range(args.report_runs):
            proc = subprocess.run([PY, "-c", REPORT_SNIPPET, str(DEMO / "tern3_design.toml")], cwd=ROOT, env=env,
                                  capture_output=True, text=True, check=True)
            for k, v in json.loads(proc.stdout.strip().splitlines()[-1]).items():
                rep.setdefault(k, []).append(v)

    med_w = {n: statistics.median(v) for n, v in wall.items()}
    med_c = {n: statistics.median(v) for n, v in cpu.items()}
    N, NS = names[0], names[1]
    print(f"{len(names)} commands × {args.runs} alternating rounds (after one warm-up round); medians; "
          f"Python {sys.version.split()[0]}, {os.cpu_count()} CPUs, load average "
          f"{', '.join(f'{x:.1f}' for x in os.getloadavg())}")
    print(f"{'command':40s} {'wall s':>7s} {'×N':>6s} {'×NS':>6s} {'CPU s':>7s} {'×N':>6s} {'×NS':>6s}")
    for n in names:
        print(f"{n:40s} {med_w[n]:7.3f} {med_w[n] / med_w[N]:6.2f} {med_w[n] / med_w[NS]:6.2f} "
              f"{med_c[n]:7.3f} {med_c[n] / med_c[N]:6.2f} {med_c[n] / med_c[NS]:6.2f}")
    print("\nthe report in-process after the fit (median of "
          f"{args.report_runs}; wall / CPU s): " + ", ".join(
              f"{k} {statistics.median(x[0] for x in v):.3f} / {statistics.median(x[1] for x in v):.3f}"
              for k, v in rep.items()))

    def verdict(ratio, aim):
        return f"{ratio:.2f} (aim ≤ {aim}) {'met' if ratio <= aim else 'NOT met'}"

    report_w = statistics.median(x[0] for x in rep["report"])
    report_c = statistics.median(x[1] for x in rep["report"])
    figs_c = statistics.median(x[1] for x in rep["figures"])
    print("\naims (wall ratio; CPU ratio):")
    print(f"  --help / N:              {verdict(med_w[names[2]] / med_w[N], 1.5)}; "
          f"{verdict(med_c[names[2]] / med_c[N], 1.5)}")
    print(f"  evaluate / NS:           {verdict(med_w[names[3]] / med_w[NS], 1.5)}; "
          f"{verdict(med_c[names[3]] / med_c[NS], 1.5)}")
    print(f"  fit with report / NS:    {verdict(med_w[names[4]] / med_w[NS], 2.5)}; "
          f"{verdict(med_c[names[4]] / med_c[NS], 2.5)}")
    print(f"  report itself:           {report_w:.3f} s wall, {report_c:.3f} s CPU (aim ≤ 0.3 s); "
          f"its figures {figs_c:.3f} s CPU")


if __name__ == "__main__":
    main()
