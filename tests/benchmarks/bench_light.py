"""Speed of the full light report (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_light.py [--repeats 21]

One SPD (the demo LED export, 380-780 nm at 1 nm, and the irregular demo
halogen) read once, the demo camera (spectra-demo/tern3_design.toml) loaded
once; then ``light_report(spd, camera=camera)`` — CCT and Duv, CIE 13.3
Ra and R1-R14, CIE 224:2017 Rf with TM-30-18 Rg (one colour-science call
gives both), the Academy SSI, the illuminance and the camera fidelity
index over 113 samples — timed ``--repeats`` times after one warm-up call.
The median is printed against the goal of 100 ms, with the share of each
part (each timed alone the same way) so it is plain where the time goes.
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np

GOAL_MS = 100.0


def median_ms(fn, repeats: int) -> float:
    fn()  # warm-up: imports, cached grids and resampling matrices
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * float(np.median(times))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=21)
    args = ap.parse_args()
    warnings.simplefilter("ignore")

    import colour

    from workbench import demo_dir
    from workbench.analysis.evaluator import load_camera
    from workbench.analysis.light import camera_fidelity, light_report, read_light, working_spd
    from workbench.analysis.light_indices import cct_duv, colour_sd, emission_XYZ

    camera = load_camera(demo_dir() / "tern3_design.toml")
    for fname in ("luminaire_led_export.csv", "luminaire_halogen_3200K.csv"):
        spd = read_light(demo_dir() / fname)
        w = working_spd(spd)
        wl, v = w.wavelengths, w.flat()[0]
        total = median_ms(lambda: light_report(spd, camera=camera), args.repeats)
        parts = {
            "working grid (read SPD → 1/5 nm)": lambda: working_spd(spd),
            "CCT, Duv (Ohno 2013)": lambda: cct_duv(emission_XYZ(wl, v)),
            "CIE 13.3 Ra, R1-R14 (colour)": lambda: colour.colour_rendering_index(colour_sd(wl, v, "t"),
                                                                                  additional_data=True),
            "CIE 224 Rf + TM-30-18 Rg (colour)": lambda: colour.colour_fidelity_index(
                colour_sd(wl, v, "t"), additional_data=True, method="ANSI/IES TM-30-18"),
            "Academy SSI (colour)": lambda: colour.spectral_similarity_index(
                colour_sd(wl, v, "t"), colour.SDS_ILLUMINANTS["D65"].copy()),
            "camera fidelity index (113 samples)": lambda: camera_fidelity(camera, spd),
        }
        print(f"\n{fname}: {w.describe_grid()}; camera {camera.name}; median of {args.repeats}")
        print(f"  full light report with the camera check: {total:7.1f} ms  "
              f"(goal {GOAL_MS:.0f} ms: {total / GOAL_MS:.2f}× the goal)")
        for name, fn in parts.items():
            ms = median_ms(fn, args.repeats)
            print(f"  {name:<38} {ms:7.1f} ms  {ms / total:6.1%} of the report")


if __name__ == "__main__":
    main()
