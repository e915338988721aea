"""Speed of the tristimulus engine (run on demand, never in the test suite).

    uv run python tests/benchmarks/bench_tristimulus.py [--spectra 1000000]

One run, the same random data for all three: a batch of spectra × 81 bands
(380-780 nm at 5 nm) to XYZ through the workbench (cached weighting matrix,
one matrix product), through colour-science's ``msds_to_XYZ`` (integration),
and a plain copy of the input array (the memory-bandwidth floor). Prints the
medians and the ratios. Goal: ≥ 10× the reference library, at most the
time of the copy; the same for float32 input, which stays float32.
"""

from __future__ import annotations

import argparse
import time
import warnings

import numpy as np


def median_time(fn, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--spectra", type=int, default=1_000_000)
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()

    import colour

    from workbench.model.spectra import grid
    from workbench.colorimetry.tristimulus import object_weights

    warnings.simplefilter("ignore")
    wl = grid(380, 780, 5)
    rng = np.random.default_rng(0)
    R = rng.random((args.spectra, wl.size))
    w = object_weights(wl, illuminant="D65")  # built once, cached

    shape = colour.SpectralShape(380, 780, 5)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    ill = colour.SDS_ILLUMINANTS["D65"].copy().align(shape)

    t_ours = median_time(lambda: w.apply(R), args.repeats)
    t_copy = median_time(lambda: R.copy(), args.repeats)
    t_ref = median_time(
        lambda: colour.msds_to_XYZ(R, cmfs, ill, method="Integration", shape=shape), max(1, args.repeats // 2)
    )
    ours = w.apply(R[:1000])
    ref = colour.msds_to_XYZ(R[:1000], cmfs, ill, method="Integration", shape=shape)
    print(f"{args.spectra:,} spectra x {wl.size} bands, float64 ({R.nbytes / 1e6:.0f} MB), median of {args.repeats}")
    print(f"  workbench (weighting matrix)    {t_ours * 1e3:9.1f} ms")
    print(f"  colour-science msds_to_XYZ      {t_ref * 1e3:9.1f} ms")
    print(f"  plain copy of the input         {t_copy * 1e3:9.1f} ms")
    print(f"  speed-up over colour-science    {t_ref / t_ours:9.1f} x   (goal >= 10)")
    print(f"  time relative to the copy       {t_ours / t_copy:9.2f} x   (goal <= 1)")
    print(f"  max relative difference (1,000 spectra): {np.max(np.abs(ours - ref) / np.abs(ref)):.2e}")
    R32 = R.astype(np.float32)
    t32 = median_time(lambda: w.apply(R32), args.repeats)
    t32_copy = median_time(lambda: R32.copy(), args.repeats)
    x32 = w.apply(R32)
    x64 = w.apply(R)
    print(f"float32 input ({R32.nbytes / 1e6:.0f} MB), kept float32 (result {x32.dtype})")
    print(f"  workbench (weighting matrix)    {t32 * 1e3:9.1f} ms")
    print(f"  plain copy of the input         {t32_copy * 1e3:9.1f} ms")
    print(f"  time relative to the copy       {t32 / t32_copy:9.2f} x   (goal <= 1)")
    print(f"  max relative difference to float64: {np.max(np.abs(x32 - x64) / np.abs(x64)):.2e}")


if __name__ == "__main__":
    main()
