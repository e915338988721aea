"""Benchmark: the fit's global search on a realistic problem of our own (not the demo).

Run on demand:  uv run python tests/benchmarks/bench_fit_global.py [--reference-seconds S] [--reference COST]

The problem: a three-sensor camera with a silicon-like sensor QE, a lens
with a UV roll-off, a smooth IR-cut edge, a two-edge dichroic splitter and
edge trims per channel (red: a long-pass and a short-pass; green: a long-
and a short-pass; blue: a band-pass) — 17 free parameters — judged by the
RMS ΔE00 (``mean-delta-e00`` objective) of the 99 CIE 224:2017 samples
under CIE D65, CIE A and an invented phosphor-white LED, one least-squares
matrix per illuminant, target ITU-R BT.709. The curves are written by this
script (analytic, invented); nothing here is demo or brand data.

1. ``fit_design`` with the multi-start global search from five different
   start points (the file's values and four seeded random points in the
   bounds), each with the same seed and budget, and from the file's values
   with three other seeds: fit time (wall and CPU), evaluations, cost and
   the gap to the reference.
2. The reference: long independent searches over the same objective —
   scipy's differential evolution (population 15 × n, seeded) for
   ``--reference-seconds`` (default 90 s), then the fit's local solver
   from its best point, and the local solver alone from
   ``--reference-local-starts`` random points (default 20) — unless
   ``--reference COST`` gives a cost found before. The best of all is the
   reference.

Goal: every start within 0.5 % of the reference cost in ≤ 2 s fit time
(2 cores).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from workbench.analysis.evaluator import DesignEvaluator  # noqa: E402
from workbench.analysis.fit import fit_design  # noqa: E402
from workbench.analysis.fit_objective import Objective  # noqa: E402
from workbench.fileio.design_toml import load_design  # noqa: E402

DESIGN = """\
# an invented camera for the global-search benchmark (tests/benchmarks/bench_fit_global.py)
schema = 1
name = "benchmark camera, 17 free parameters"
observer = 2

[grid]
start_nm = 380
stop_nm = 780
step_nm = 5

[target]
kind = "primaries"
name = "ITU-R BT.709"

[[chain]]
name = "lens"
type = "measured"
file = "lens.csv"

[[chain]]
name = "ir-cut"
type = "short-pass"
center_nm = { value = 670.0, min = 630.0, max = 710.0, free = true }
width_nm = { value = 15.0, min = 5.0, max = 40.0, free = true }

[[chain]]
name = "splitter"
type = "dichroic-splitter"
order = "blue-first"
blue_green_nm = { value = 505.0, min = 475.0, max = 535.0, free = true }
green_red_nm = { value = 590.0, min = 560.0, max = 625.0, free = true }
blue_green_width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }
green_red_width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }

[[chain]]
name = "red-low"
type = "long-pass"
paths = ["R"]
center_nm = { value = 585.0, min = 550.0, max = 630.0, free = true }
width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }

[[chain]]
name = "red-high"
type = "short-pass"
paths = ["R"]
center_nm = { value = 690.0, min = 640.0, max = 760.0, free = true }
width_nm = { value = 25.0, min = 8.0, max = 80.0, free = true }

[[chain]]
name = "green-low"
type = "long-pass"
paths = ["G"]
center_nm = { value = 490.0, min = 450.0, max = 530.0, free = true }
width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }

[[chain]]
name = "green-high"
type = "short-pass"
paths = ["G"]
center_nm = { value = 610.0, min = 570.0, max = 660.0, free = true }
width_nm = { value = 25.0, min = 8.0, max = 80.0, free = true }

[[chain]]
name = "blue-band"
type = "band-pass"
paths = ["B"]
low_nm = { value = 410.0, min = 385.0, max = 440.0, free = true }
high_nm = { value = 500.0, min = 460.0, max = 540.0, free = true }
width_nm = { value = 20.0, min = 8.0, max = 60.0, free = true }

[[chain]]
name = "sensor"
type = "sensor-qe"
file = "qe.csv"
column = "qe"

[[samples]]
name = "ces"
source = "cie-224"

[[illuminants]]
name = "D65"
cie = "D65"

[[illuminants]]
name = "A"
cie = "A"

[[illuminants]]
name = "led"
file = "led.csv"

[fit]
objective = "mean-delta-e00"
illuminants = ["D65", "A", "led"]
matrix = "least-squares"
matrix_scope = "per-illuminant"
global_start = "multi-start"
starts = 64
seed = 7
max_evaluations = 6000
"""


def write_problem(folder: Path) -> Path:
    """The curves (invented, analytic) and the design file; returns the design's path."""
    wl = np.arange(350.0, 1001.0, 5.0)
    # silicon-like QE: weak in the blue, broad peak near 600 nm, falling into the infrared
    qe = 0.62 * np.exp(-0.5 * ((wl - 610.0) / 170.0) ** 2) * (1 - np.exp(-(wl - 330.0) / 60.0))
    lens = 0.93 / (1 + np.exp(-(wl - 405.0) / 9.0))
    led = (np.exp(-0.5 * ((wl - 452.0) / 10.0) ** 2)
           + 0.95 * np.exp(-0.5 * ((wl - 565.0) / 55.0) ** 2) + 0.3 * np.exp(-0.5 * ((wl - 640.0) / 30.0) ** 2))
    for name, col, values in (("qe.csv", "qe", qe), ("lens.csv", "lens", lens), ("led.csv", "led", led)):
        rows = "\n".join(f"{w:g},{v:.6f}" for w, v in zip(wl, np.clip(values, 0, None)))
        (folder / name).write_text(f"wavelength_nm,{col}\n{rows}\n")
    p = folder / "camera.toml"
    p.write_text(DESIGN)
    return p


def reference_search(design, seconds: float, seed: int = 1) -> float:
    """Differential evolution over the fit's own objective for ``seconds``, then the fit's local solver."""
    from scipy.optimize import differential_evolution

    ev = DesignEvaluator(design)
    obj = Objective(ev)
    lo, hi = ev.lower, ev.upper
    t0 = time.perf_counter()
    best = {"cost": np.inf, "x": None}

    def cost(U):
        X = lo + np.atleast_2d(U.T) * (hi - lo)
        r = obj(X)
        c = np.sum(r * r, axis=-1)
        i = int(np.argmin(c))
        if c[i] < best["cost"]:
            best["cost"], best["x"] = float(c[i]), X[i].copy()
        return c

    def enough(*_args, **_kw):
        return time.perf_counter() - t0 > seconds

    differential_evolution(cost, [(0.0, 1.0)] * len(lo), seed=seed, vectorized=True, updating="deferred",
                           popsize=15, maxiter=100000, tol=0, polish=False, callback=enough)
    polished = design.with_values(dict(zip(ev.free, best["x"])))
    r = fit_design(polished, progress=False, evaluator=ev, global_start="none", max_evaluations=20000)
    print(f"reference: differential evolution {time.perf_counter() - t0:.0f} s, best {best['cost']:.6f}; "
          f"polished {r.cost_after:.6f} ({r.status_name})")
    return min(best["cost"], r.cost_after)


def reference_local_starts(design, n: int, seed: int = 99) -> float:
    """The fit's local solver alone from ``n`` seeded random points in the bounds: the best cost."""
    ev = DesignEvaluator(design)
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    best = np.inf
    for u in rng.random((n, len(ev.free))):
        d = design.with_values(dict(zip(ev.free, ev.lower + u * (ev.upper - ev.lower))))
        r = fit_design(d, progress=False, evaluator=ev, global_start="none", max_evaluations=20000)
        best = min(best, r.cost_after)
    print(f"reference: {n} local fits from random points, {time.perf_counter() - t0:.0f} s, best {best:.6f}")
    return best


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reference", type=float, default=None, help="a reference cost found before")
    ap.add_argument("--reference-seconds", type=float, default=90.0)
    ap.add_argument("--starts", type=int, default=5, help="start points (the file's + seeded random ones)")
    ap.add_argument("--reference-local-starts", type=int, default=20,
                    help="also local fits from this many random points as a reference (0: none)")
    args = ap.parse_args()
    folder = Path(tempfile.mkdtemp(prefix="bench-fit-global-"))
    design = load_design(write_problem(folder))
    ev = DesignEvaluator(design)
    print(f"problem: {len(ev.free)} free parameters; {len(ev.bench.sample_names)} samples × "
          f"{len(ev.bench.illuminant_names)} illuminants; matrix least-squares per illuminant; "
          f"objective RMS ΔE00")
    # warm up (imports, caches) outside the timings
    fit_design(design, progress=False, evaluator=ev, global_start="none", max_evaluations=50)
    rng = np.random.default_rng(2024)
    starts = [design] + [design.with_values(dict(zip(ev.free, ev.lower + u * (ev.upper - ev.lower))))
                         for u in rng.random((args.starts - 1, len(ev.free)))]
    results, cpu = [], []
    for i, d in enumerate(starts):
        c0 = time.process_time()
        r = fit_design(d, progress=False, evaluator=ev)
        cpu.append(time.process_time() - c0)
        results.append(r)
        a = r.after
        means = " / ".join(f"{a.delta_E00[n]['mean']:.3f}" for n in a.illuminants)
        print(f"start {i}: cost {r.cost_before:.4f} → {r.cost_after:.6f}, {r.status_name}, "
              f"{r.evaluations} evaluations, {r.seconds:.2f} s wall, {cpu[-1]:.2f} s CPU; ν {r.before.vora_value:.3f} → {a.vora_value:.3f}; "
              f"mean ΔE00 {'/'.join(a.illuminants)} {means}; {sum(1 for p in r.parameters if p['at_bound'])} at a bound")
    # other seeds of the Latin hypercube from the file's start
    for seed in (1, 2, 3):
        c0 = time.process_time()
        r = fit_design(design, progress=False, evaluator=ev, seed=seed)
        cpu.append(time.process_time() - c0)
        results.append(r)
        print(f"seed {seed}: cost {r.cost_after:.6f}, {r.status_name}, {r.evaluations} evaluations, "
              f"{r.seconds:.2f} s wall, {cpu[-1]:.2f} s CPU")
    ref = args.reference if args.reference is not None else reference_search(design, args.reference_seconds)
    if args.reference_local_starts:
        ref = min(ref, reference_local_starts(design, args.reference_local_starts))
    ref = min(ref, min(r.cost_after for r in results))
    gaps = [100 * (r.cost_after - ref) / ref for r in results]
    secs = [r.seconds for r in results]
    print(f"reference cost {ref:.6f}")
    print("gap to the reference: " + ", ".join(f"{g:.3f} %" for g in gaps) + f" (worst {max(gaps):.3f} %, goal ≤ 0.5 %)")
    print("fit time (wall): " + ", ".join(f"{s:.2f} s" for s in secs) + f" (worst {max(secs):.2f} s, goal ≤ 2 s)")
    print("fit time (CPU of this process, all threads): " + ", ".join(f"{s:.2f} s" for s in cpu)
          + " — wall time on a shared machine includes waiting for a core")
    # reproducible: the same start and seed give the same cost
    again = fit_design(starts[0], progress=False, evaluator=ev)
    print(f"seeded: start 0 again {again.cost_after:.9f} (was {results[0].cost_after:.9f}, "
          f"{'same' if again.cost_after == results[0].cost_after else 'DIFFERENT'})")


if __name__ == "__main__":
    main()
