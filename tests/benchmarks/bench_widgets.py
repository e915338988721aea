"""Benchmark: from a slider change to the redrawn figure in the design panel (goal ≤ 100 ms).

Run on demand:  uv run python tests/benchmarks/bench_widgets.py [--repeats N]

On the demo design (spectra-demo/tern3_design.toml: 119 samples × 3
illuminants, 5 nm grid) it times, for sliders of different elements (a
splitter edge, the splitter's angle of incidence, a trim-glass thickness,
a trim-coating edge), each value moved before every call:

1. ``DesignEvaluator.measures`` alone (chain, matrix, ΔE00, noise, ν, q, SMI);
2. the figure's update: the whole picture drawn again as SVG by the
   package's own plotter (``workbench.plots.vector``);
3. the whole path as the panel runs it: setting ``slider.value`` →
   measures → figure → SVG into the Output → measures table HTML;
4. for comparison, drawing the same figure with matplotlib from scratch
   each time (new pyplot figure, two axes, all lines, legend, ``savefig``
   to PNG), the straightforward way.

Prints median and 90th percentile in ms and the ratio of (4) to (2).
"""

from __future__ import annotations

import argparse
import io
import statistics
import time
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "spectra-demo" / "tern3_design.toml"
GOAL_MS = 100.0

SLIDERS = {
    "prism.blue_green_nm": (520.0, 545.0),
    "prism.blue_green_aoi_deg": (20.0, 30.0),
    "red-trim.thickness_mm": (1.0, 3.0),
    "green-edge.center_nm": (460.0, 500.0),
}


def stats(times) -> tuple[float, float]:
    t = np.array(times) * 1000
    return float(statistics.median(t)), float(np.percentile(t, 90))


def naive_draw(m) -> bytes:
    """The figure drawn from nothing: what a plain matplotlib callback would do."""
    import matplotlib.pyplot as plt

    fig, (a, b) = plt.subplots(2, 1, sharex=True, figsize=(7.4, 5.2), dpi=84,
                               gridspec_kw={"height_ratios": (3, 1.25)})
    wl = m.wavelengths
    for i, c in enumerate(("tab:red", "tab:green", "tab:blue")):
        a.plot(wl, m.curves[i], color=c, lw=2)
        a.plot(wl, m.targets[i], color=c, ls="--")
        b.plot(wl, m.curves[i] - m.targets[i], color=c)
    a.set_ylabel("relative response")
    b.set_ylabel("camera − target")
    b.set_xlabel("wavelength λ (nm)")
    a.legend(["R", "target r̄", "G", "target ḡ", "B", "target b̄"], fontsize=8)
    fig.suptitle("design\nresponses")
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    plt.close(fig)
    return buf.getvalue()


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=40)
    args = ap.parse_args()

    from workbench.widgets.design import DesignPanel

    t0 = time.perf_counter()
    panel = DesignPanel(DEMO)
    print(f"panel opened in {time.perf_counter() - t0:.2f} s (imports included, "
          f"reads the demo data); {len(panel.sliders)} sliders")
    ev = panel.evaluator
    fig = panel.figure
    print(f"{'slider':28s} {'measures':>16s} {'figure+SVG':>16s} {'whole path':>16s}   (median / p90 ms)")
    whole_all = []
    fig_all = []
    for key, (lo, hi) in SLIDERS.items():
        values = np.linspace(lo, hi, args.repeats)
        base = panel.values()
        tm, tf, tw = [], [], []
        for v in values:
            vals = dict(base, **{key: float(v)})
            t = time.perf_counter()
            m = ev.measures(vals)
            tm.append(time.perf_counter() - t)
            t = time.perf_counter()
            fig.update(m.curves)
            tf.append(time.perf_counter() - t)
        for v in values[::-1]:
            t = time.perf_counter()
            panel.sliders[key].value = float(v)
            tw.append(time.perf_counter() - t)
        panel.reset()
        whole_all += tw
        fig_all += tf
        (m1, m9), (f1, f9), (w1, w9) = stats(tm), stats(tf), stats(tw)
        print(f"{key:28s} {m1:7.1f} / {m9:6.1f} {f1:7.1f} / {f9:6.1f} {w1:7.1f} / {w9:6.1f}")
    naive = []
    for _ in range(max(5, args.repeats // 4)):
        t = time.perf_counter()
        naive_draw(panel.measures)
        naive.append(time.perf_counter() - t)
    w1, w9 = stats(whole_all)
    f1, _ = stats(fig_all)
    n1, n9 = stats(naive)
    print(f"the figure drawn with matplotlib from scratch each time (pyplot + savefig): {n1:.1f} / {n9:.1f} ms")
    print(f"the panel's SVG figure is {n1 / f1:.1f}× faster than that")
    verdict = "meets" if w9 <= GOAL_MS else "MISSES"
    print(f"slider → redrawn figure, all sliders: median {w1:.1f} ms, p90 {w9:.1f} ms — {verdict} the "
          f"{GOAL_MS:.0f} ms goal (ratio p90/goal {w9 / GOAL_MS:.2f})")


if __name__ == "__main__":
    main()
