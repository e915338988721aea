"""Speed of the tolerance analysis (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_tolerance.py [--trials 10000] [--repeats 3]

The demo design (spectra-demo/tern3_design.toml: 8 toleranced parameters,
a two-edge splitter averaged over 32 rays × 2 polarisations, 119 samples ×
3 illuminants) read once; then ``run_tolerance`` with both matrix cases
(fixed and recalibrated) and the field shift, as ``workbench tolerance``
runs it, timed ``--repeats`` times; the median is printed against the goal
of 10 s for 10,000 trials. For comparison: one thread instead of two, the
fixed case alone, and a per-unit loop through
``DesignEvaluator.measures`` (the same numbers one unit at a time) on a
few units, scaled to the same trial count.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

GOAL_S = 10.0


def median_time(fn, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times)), times


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--trials", type=int, default=10_000)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--loop-units", type=int, default=40, help="units for the per-unit reference loop")
    args = ap.parse_args()

    import os

    from workbench import demo_dir
    from workbench.fileio.design_toml import load_design
    from workbench.analysis.evaluator import DesignEvaluator
    from workbench.analysis.tolerance import run_tolerance, sample_parameters

    design = load_design(demo_dir() / "tern3_design.toml")
    t0 = time.perf_counter()
    ev = DesignEvaluator(design)
    t_setup = time.perf_counter() - t0
    run_tolerance(design, trials=300, seed=0, progress=False, evaluator=ev)  # warm caches

    def full(**kw):
        return lambda: run_tolerance(design, trials=args.trials, seed=1, progress=False, evaluator=ev, **kw)

    t_both, runs = median_time(full(), args.repeats)
    t_one, _ = median_time(full(workers=1), args.repeats)
    t_fixed, _ = median_time(full(matrix="fixed", field=False), args.repeats)

    # the same evaluation one unit at a time (both matrix cases), for the ratio
    s = sample_parameters(design, args.loop_units, 1)
    M = ev.measures().matrices

    def loop():
        for i in range(args.loop_units):
            v = {k: float(x[i]) for k, x in s.items()}
            ev.measures(v, matrices=M)
            ev.measures(v)

    t_loop_few, _ = median_time(loop, 1)
    t_loop = t_loop_few / args.loop_units * args.trials

    print(f"demo design, {args.trials:,} trials, {os.cpu_count()} cores; evaluator set-up {t_setup:.2f} s (once)")
    print(f"  both matrix cases + field shift, 2 threads  median {t_both:7.2f} s  "
          f"(runs: {', '.join(f'{t:.2f}' for t in runs)})  goal ≤ {GOAL_S:g} s: "
          f"{'met' if t_both <= GOAL_S else 'NOT met'} ({t_both / GOAL_S:.2f} of the goal)")
    print(f"  the same, 1 thread                          median {t_one:7.2f} s  (threads gain ×{t_one / t_both:.2f})")
    print(f"  fixed matrix only, no field                 median {t_fixed:7.2f} s")
    print(f"  per-unit loop through measures() (est.)            {t_loop:7.1f} s  "
          f"(from {args.loop_units} units; batched is ×{t_loop / t_both:.0f} faster)")
    print(f"  per trial: {1e3 * t_both / args.trials:.3f} ms batched")


if __name__ == "__main__":
    main()
