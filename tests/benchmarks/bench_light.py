"""Speed of the full light report, the workbench's own indices against colour-science's (run on demand).

    uv run python tests/benchmarks/bench_light.py [--repeats 21] [--process-runs 7]

One SPD (the demo LED export, 380-780 nm at 1 nm, and the irregular demo
halogen) read once, the demo camera (spectra-demo/tern3_design.toml) loaded
once; then

- ``light_report(spd, camera=camera)`` — CCT and Duv, CIE 13.3 Ra and
  R1-R14, CIE 224:2017 Rf with TM-30-18 Rg, the Academy SSI, the
  illuminance and the camera fidelity index over 113 samples — timed
  ``--repeats`` times after one warm-up call, against the goal of 100 ms,
  with the share of each part;
- ``light_indices(spd)`` (the workbench's numpy indices) against the same
  four computations by colour-science 0.4.7 (``colour_rendering_index``,
  ``colour_fidelity_index`` 'ANSI/IES TM-30-18', ``spectral_similarity_index``,
  ``uv_to_CCT`` 'Ohno 2013'), which the workbench called before;
- a batch of 1000 synthetic SPDs (sums of four Gaussians, 380-780 nm at
  1 nm) through ``colour_rendering_cie_13_3`` and ``colour_fidelity_cie_224``
  at once (the functions are vectorised over SPDs);
- ``workbench light`` on the demo LED as a whole process (with and without
  ``--camera``) against ``python -c "import numpy, scipy.optimize"``,
  alternating, medians of wall and CPU time.

colour-science is imported by this script after the process timings, never by the workbench.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import time
import warnings
from pathlib import Path

import numpy as np

GOAL_MS = 100.0
ROOT = Path(__file__).resolve().parents[2]


def median_ms(fn, repeats: int) -> float:
    fn()  # warm-up: imports, cached grids and resampling matrices
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * float(np.median(times))


def process_times(runs: int) -> None:
    """Whole-process wall and CPU medians, alternating, after one warm-up round."""
    py, demo = sys.executable, ROOT / "spectra-demo"
    cmds = {
        "NS: python -c 'import numpy, scipy.optimize'": [py, "-c", "import numpy, scipy.optimize"],
        "workbench light (demo LED)": [py, "-m", "workbench", "light", str(demo / "luminaire_led_export.csv")],
        "workbench light (demo LED, --camera)": [py, "-m", "workbench", "light",
                                                 str(demo / "luminaire_led_export.csv"), "--camera",
                                                 str(demo / "tern3_design.toml")],
    }
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    wall = {n: [] for n in cmds}
    cpu = {n: [] for n in cmds}
    for r in range(runs + 1):
        for name, cmd in cmds.items():
            r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            subprocess.run(cmd, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True)
            w = time.perf_counter() - t0
            r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
            if r:  # round 0 is the warm-up
                wall[name].append(w)
                cpu[name].append((r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime))
    base = list(cmds)[0]
    bw, bc = statistics.median(wall[base]), statistics.median(cpu[base])
    print(f"\nwhole processes, {runs} alternating rounds, medians (load average "
          f"{', '.join(f'{x:.1f}' for x in os.getloadavg())}):")
    for n in cmds:
        w, c = statistics.median(wall[n]), statistics.median(cpu[n])
        print(f"  {n:<46} wall {w:6.3f} s ({w / bw:4.2f}× NS)   CPU {c:6.3f} s ({c / bc:4.2f}× NS)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=21)
    ap.add_argument("--process-runs", type=int, default=7, help="rounds of the whole-process timing (0: skip)")
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    if args.process_runs:
        process_times(args.process_runs)

    from workbench import demo_dir
    from workbench.analysis.evaluator import load_camera
    from workbench.analysis.light import camera_fidelity, light_indices, light_report, read_light, working_spd
    from workbench.analysis.light_indices import cct_duv, emission_XYZ
    from workbench.colorimetry.rendering import (
        colour_fidelity_cie_224,
        colour_rendering_cie_13_3,
        spectral_similarity_index,
    )
    from workbench.colorimetry.cct import XYZ_to_uv_1960
    from workbench.colorimetry.cie import illuminant_table

    camera = load_camera(demo_dir() / "tern3_design.toml")
    t0 = time.perf_counter()
    import colour  # the reference library, for the comparison only
    colour_import_s = time.perf_counter() - t0

    def colour_sd(wl, v):
        return colour.SpectralDistribution(v, wl, interpolator=colour.algebra.LinearInterpolator)

    d65_wl, d65 = illuminant_table("D65")
    for fname in ("luminaire_led_export.csv", "luminaire_halogen_3200K.csv"):
        spd = read_light(demo_dir() / fname)
        w = working_spd(spd)
        wl, v = w.wavelengths, w.flat()[0]
        total = median_ms(lambda: light_report(spd, camera=camera), args.repeats)
        parts = {
            "working grid (read SPD → 1/5 nm)": lambda: working_spd(spd),
            "CCT, Duv (Ohno 2013)": lambda: cct_duv(emission_XYZ(wl, v)),
            "CIE 13.3 Ra, R1-R14": lambda: colour_rendering_cie_13_3(wl, v),
            "CIE 224 Rf + TM-30-18 Rg": lambda: colour_fidelity_cie_224(wl, v),
            "Academy SSI (against D65)": lambda: spectral_similarity_index(wl, v, d65_wl, d65),
            "camera fidelity index (113 samples)": lambda: camera_fidelity(camera, spd),
        }
        print(f"\n{fname}: {w.describe_grid()}; camera {camera.name}; median of {args.repeats}")
        print(f"  full light report with the camera check: {total:7.1f} ms  "
              f"(goal {GOAL_MS:.0f} ms: {total / GOAL_MS:.2f}× the goal)")
        for name, fn in parts.items():
            ms = median_ms(fn, args.repeats)
            print(f"  {name:<38} {ms:7.1f} ms  {ms / total:6.1%} of the report")
        uv = XYZ_to_uv_1960(emission_XYZ(wl, v))
        reference = {
            "CCT, Duv": lambda: colour.uv_to_CCT(uv, method="Ohno 2013"),
            "CIE 13.3 Ra, R1-R14": lambda: colour.colour_rendering_index(colour_sd(wl, v), additional_data=True),
            "CIE 224 Rf + TM-30-18 Rg": lambda: colour.colour_fidelity_index(
                colour_sd(wl, v), additional_data=True, method="ANSI/IES TM-30-18"),
            "Academy SSI (against D65)": lambda: colour.spectral_similarity_index(
                colour_sd(wl, v), colour.SDS_ILLUMINANTS["D65"].copy()),
        }
        n_ms = median_ms(lambda: light_indices(spd), args.repeats)
        c_ms = {k: median_ms(f, args.repeats) for k, f in reference.items()}
        print(f"  light_indices, workbench numpy: {n_ms:7.1f} ms; the same four by colour-science: "
              f"{sum(c_ms.values()):7.1f} ms ({sum(c_ms.values()) / n_ms:.1f}× slower), "
              + ", ".join(f"{k} {ms:.1f}" for k, ms in c_ms.items())
              + f"; plus its import once: {colour_import_s:.2f} s")

    wl = np.arange(380.0, 781.0)
    rng = np.random.default_rng(0)
    batch = 0.02 + sum(rng.uniform(0.2, 1, (1000, 1)) * np.exp(-0.5 * ((wl - rng.uniform(430, 650, (1000, 1)))
                                                                      / rng.uniform(8, 60, (1000, 1))) ** 2)
                       for _ in range(4))
    b13 = median_ms(lambda: colour_rendering_cie_13_3(wl, batch), max(3, args.repeats // 5))
    b224 = median_ms(lambda: colour_fidelity_cie_224(wl, batch), max(3, args.repeats // 5))
    print(f"\nbatch of 1000 SPDs at 1 nm: CIE 13.3 Ra {b13:.0f} ms, CIE 224 Rf + Rg {b224:.0f} ms "
          f"({(b13 + b224) / 1000:.2f} ms per SPD for both)")


if __name__ == "__main__":
    main()
