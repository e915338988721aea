"""Benchmark: one design evaluation, and the demo fit.

Run on demand:  uv run python tests/benchmarks/bench_fit.py

1. One evaluation of the demo design — chain → sensitivities → white balance
   → least-squares matrix → ΔE00 for the 99 CIE 224 samples × 3 illuminants
   (D65, A, the demo LED) — median time on a 5 nm and a 1 nm grid, with a
   splitter edge moved before every call (so the chain really recomputes),
   against a straightforward version built from colour-science calls
   (tests/colour_reference.py) on the same sensitivities. Goals: ≤ 1 ms
   (5 nm) and ≤ 3 ms (1 nm).
2. The demo fit (`fit_design` on spectra-demo/tern3_design.toml): time,
   ν and mean ΔE00 over the 99 CIE 224 samples under D65, A and the LED,
   before and after. Goals: ≤ 5 s, ν ≥ 0.97, mean ΔE00 ≤ 1.0.
"""

from __future__ import annotations

import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))

from colour_reference import evaluate_with_colour  # noqa: E402
from workbench.fileio.design_toml import load_design  # noqa: E402
from workbench.analysis.evaluator import DesignEvaluator  # noqa: E402
from workbench.analysis.fit import fit_design  # noqa: E402

DEMO = ROOT / "spectra-demo" / "tern3_design.toml"


def bench_design(step: int, folder: Path) -> Path:
    """The demo design with only the 99 CIE 224 samples, on a ``step`` nm grid."""
    text = DEMO.read_text()
    text = text.replace("step_nm = 5", f"step_nm = {step}")
    for block in ('[[samples]]\nname = "tcs"\nsource = "cie-13.3"\n\n',
                  '[[samples]]\nname = "studio"\nsource = "csv"\nfile = "studio_reflectances.csv"\n\n'):
        text = text.replace(block, "")
    text = text.replace("[fit.weights]\ntcs = 1.0\nces = 1.0\nstudio = 2.0\n", "")
    p = folder / f"bench_{step}nm.toml"
    p.write_text(text)
    return p


def time_evaluation(ev: DesignEvaluator, repeats: int = 300) -> list[float]:
    rng = np.random.default_rng(0)
    edges = rng.uniform(520, 545, repeats)
    times = []
    for e in edges:
        t0 = time.perf_counter()
        S = ev.sensitivities({"prism.blue_green_nm": float(e)})
        r = ev.bench.evaluate(S, "least-squares", "shared")
        r.delta_E00.mean()
        times.append(time.perf_counter() - t0)
    return times


def main() -> None:
    work = Path(tempfile.mkdtemp(prefix="bench-fit-"))
    for f in DEMO.parent.glob("*.csv"):
        shutil.copy(f, work / f.name)
    print("1. one evaluation: chain → sensitivities → balance → matrix → ΔE00, 99 samples × 3 illuminants")
    for step, goal in ((5, 1.0), (1, 3.0)):
        ev = DesignEvaluator(load_design(bench_design(step, work)))
        K = len(ev.bench.sample_names)
        J = len(ev.bench.illuminant_names)
        ours = statistics.median(time_evaluation(ev)) * 1e3
        S = ev.sensitivities()
        ills = {n: ev.bench.E[j] for j, n in enumerate(ev.bench.illuminant_names)}
        ref_times = []
        for _ in range(3):
            t0 = time.perf_counter()
            ref = evaluate_with_colour(ev.wavelengths, S, ev.bench.R, ills)
            ref_times.append(time.perf_counter() - t0)
        ref_ms = statistics.median(ref_times) * 1e3
        agree = float(np.max(np.abs(ev.bench.evaluate(S, "least-squares", "per-illuminant").delta_E00 - ref)))
        print(f"   {step} nm grid ({ev.wavelengths.size} bands, {K} samples × {J} illuminants): "
              f"workbench {ours:.3f} ms median (goal ≤ {goal:g} ms), colour-science loop {ref_ms:.1f} ms, "
              f"ratio {ref_ms / ours:.0f}×; per-illuminant ΔE00 agree to {agree:.1e}")

    print("2. the demo fit (spectra-demo/tern3_design.toml, its own [fit] settings)")
    d = load_design(DEMO)
    times, res = [], None
    for _ in range(3):
        t0 = time.perf_counter()
        res = fit_design(d, progress=False)
        times.append(time.perf_counter() - t0)
    print(f"   {res.status_name}: {res.message}; {res.evaluations} evaluations; "
          f"median {statistics.median(times):.2f} s of 3 (goal ≤ 5 s)")
    # the headline figures over the 99 CIE 224 samples only, under D65, A and the LED
    ev = DesignEvaluator(load_design(bench_design(5, work)))
    values = {p["name"]: p["value"] for p in res.parameters}
    for label, m in (("before", ev.measures()), ("after", ev.measures(values))):
        per = {k: v["mean"] for k, v in m.delta_E00.items()}
        overall = float(np.mean(m.per_sample))
        print(f"   {label}: ν = {m.vora_value:.4f} (D65 both sides); mean ΔE00 "
              + ", ".join(f"{k} {v:.3f}" for k, v in per.items())
              + f"; over all three {overall:.3f} (goal ν ≥ 0.97, ≤ 1.0)")
    m = ev.measures(values, scope="per-illuminant")
    print("   after, one least-squares matrix per illuminant instead of one shared: mean ΔE00 "
          + ", ".join(f"{k} {v['mean']:.3f}" for k, v in m.delta_E00.items())
          + f"; over all three {float(np.mean(m.per_sample)):.3f}")
    shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
