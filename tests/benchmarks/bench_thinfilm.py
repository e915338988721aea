"""Speed of the thin-film engine (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_thinfilm.py [--repeats 50]

The same work for all: a 40-layer stack (alternating 2.35 / 1.46 with random
thicknesses) × 81 wavelengths (380-780 nm at 5 nm) × 7 angles (0-30° inside
glass 1.52) × s and p, onto glass 1.52.

* workbench ``stack_response`` (R and T; and with all 40 thickness derivatives),
* the same for a periodic stack of 41 layers, (0.5L H 0.5L)^20 at one
  reference wavelength (its repeated block raised to its power), and with
  its 41 derivatives, and with its derivatives over the 16 rays of an f/2
  cone at 25° (the call a recipe refinement makes at every evaluation),
* the 40-layer stack with derivatives when its layers absorb a little
  (k = 1e-4: the complex path),
* the same per stack inside a batch of 100 stacks,
* colour-science 0.4.7 ``colour.phenomena.multilayer_tmm`` (one call, both
  polarisations),
* a plain Python loop over ``tmm.coh_tmm`` (one call per wavelength, angle
  and polarisation).

Prints the best and median wall time and the ratios; also the largest
difference between the engines as a sanity check. Goal: ≤ 1 ms for one stack
without derivatives, ≥ 10× colour-science.
"""

from __future__ import annotations

import argparse
import math
import time
import warnings

import numpy as np


def timings(fn, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times), float(np.median(times))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=50)
    ap.add_argument("--layers", type=int, default=40)
    args = ap.parse_args()

    import colour
    import tmm

    from workbench.optics.stacks import cone_rays
    from workbench.optics.thinfilm import stack_response

    warnings.simplefilter("ignore")
    rng = np.random.default_rng(0)
    L = args.layers
    wl = np.linspace(380, 780, 81)
    angles = np.linspace(0, 30, 7)
    n = np.where(np.arange(L) % 2 == 0, 2.35, 1.46)
    d = rng.uniform(40, 120, L)
    N = np.broadcast_to(n[:, None], (L, wl.size))
    kw = dict(incident=1.52, substrate=1.52)

    for _ in range(3):
        stack_response(N, d, wl, angles, **kw)
    ours = timings(lambda: stack_response(N, d, wl, angles, **kw), args.repeats)
    ours_d = timings(lambda: stack_response(N, d, wl, angles, derivatives=True, **kw), max(5, args.repeats // 5))
    n_per = np.where(np.arange(41) % 2 == 0, 1.46, 2.35)
    d_per = np.where(np.arange(41) % 2 == 0, 550.0 / (4 * 1.46), 550.0 / (4 * 2.35))
    d_per[[0, -1]] /= 2.0
    N_per = np.broadcast_to(n_per[:, None], (41, wl.size))
    periodic = timings(lambda: stack_response(N_per, d_per, wl, angles, **kw), args.repeats)
    periodic_d = timings(lambda: stack_response(N_per, d_per, wl, angles, derivatives=True, **kw),
                         max(5, args.repeats // 5))
    cone = np.unique(cone_rays(25.0, 2.0, 1.52)[0])
    cone_d = timings(lambda: stack_response(N_per, d_per, wl, cone, derivatives=True, **kw), max(5, args.repeats // 5))
    N_abs = N + 1e-4j
    absorbing_d = timings(lambda: stack_response(N_abs, d, wl, angles, derivatives=True, **kw), max(5, args.repeats // 5))
    dB = rng.uniform(40, 120, (100, L))
    batch = timings(lambda: stack_response(N, dB, wl, angles, **kw), max(3, args.repeats // 10))
    ref = timings(lambda: colour.phenomena.multilayer_tmm([1.52, *n, 1.52], d, wl, angles), max(3, args.repeats // 5))

    def tmm_loop():
        out = np.empty((2, angles.size, wl.size))
        for ip, pol in enumerate("sp"):
            for ia, a in enumerate(angles):
                for iw, w in enumerate(wl):
                    out[ip, ia, iw] = tmm.coh_tmm(pol, [1.52, *n, 1.52], [np.inf, *d, np.inf],
                                                  math.radians(a), w)["R"]
        return out

    loop = timings(tmm_loop, 1)

    res = stack_response(N, d, wl, angles, **kw)
    R_c, _ = colour.phenomena.multilayer_tmm([1.52, *n, 1.52], d, wl, angles)
    diff_c = np.abs(res.R - np.transpose(R_c[:, :, 0, :], (2, 1, 0))).max()
    diff_t = np.abs(res.R - tmm_loop()).max()

    print(f"{L} layers x {wl.size} wavelengths x {angles.size} angles x 2 polarisations "
          f"(best / median of {args.repeats})")
    print(f"  workbench stack_response          {ours[0] * 1e3:8.3f} / {ours[1] * 1e3:8.3f} ms")
    print(f"  workbench with {L} derivatives     {ours_d[0] * 1e3:8.3f} / {ours_d[1] * 1e3:8.3f} ms")
    print(f"  workbench, per stack in 100       {batch[0] * 10:8.3f} / {batch[1] * 10:8.3f} ms")
    print(f"  workbench, periodic 41 layers     {periodic[0] * 1e3:8.3f} / {periodic[1] * 1e3:8.3f} ms")
    print(f"  workbench, periodic, derivatives  {periodic_d[0] * 1e3:8.3f} / {periodic_d[1] * 1e3:8.3f} ms")
    print(f"  workbench, periodic, {cone.size} cone rays {cone_d[0] * 1e3:8.3f} / {cone_d[1] * 1e3:8.3f} ms")
    print(f"  workbench, absorbing, derivatives {absorbing_d[0] * 1e3:8.3f} / {absorbing_d[1] * 1e3:8.3f} ms")
    print(f"  colour.phenomena.multilayer_tmm   {ref[0] * 1e3:8.3f} / {ref[1] * 1e3:8.3f} ms")
    print(f"  loop over tmm.coh_tmm             {loop[0] * 1e3:8.1f} ms")
    print(f"  ratio colour / workbench          {ref[0] / ours[0]:8.1f} x")
    print(f"  ratio tmm loop / workbench        {loop[0] / ours[0]:8.0f} x")
    print(f"  largest |R| difference: colour {diff_c:.1e}, tmm {diff_t:.1e}")


if __name__ == "__main__":
    main()
