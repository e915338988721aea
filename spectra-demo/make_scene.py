"""Generate the invented spectral scene of spectra-demo/ (deterministic), or a large one for benchmarks.

The scene is INVENTED: a small "set" in the fictional Lanternfield studio
whose every pixel is a reflectance (0-1, 380-780 nm at 5 nm, 81 bands) put
together from open sample spectra — the 14 CIE 13.3 test colour samples and
the 99 CIE 224:2017 colour evaluation samples (via colour-science) — and
the demo's own invented studio reflectances, with a soft spotlight falloff
and a little seeded noise. It is meant to be rendered under the demo
design's luminaires::

    uv run python spectra-demo/make_scene.py            # rewrites scene_small.npy / .json
    uv run workbench render spectra-demo/tern3_design.toml spectra-demo/scene_small.npy \\
        --out /tmp/render --illuminant stage-led

Layout of the 64 × 48 image (width × height): a chart of 4 × 6 patches
(TCS01-TCS14 and ten CES samples, 7 × 7 pixels with 1-pixel gaps) on a
neutral wall at the top left; a grey ramp (flat reflectances 0.03-0.90) to
its right; a vertical blend between two CES samples on the right edge; and
along the bottom a "costume" whose pixels mix three of the studio
reflectances in smoothly varying proportions. The whole frame is multiplied
by a spotlight falloff (1 at the centre, 0.55 in the corners).

Large sets for benchmarks (never committed; default under /tmp)::

    uv run python spectra-demo/make_scene.py --large /tmp/lanternfield_large.npy \\
        --spectra 10000000 --dtype float32

write (N, 81) convex mixtures of three open samples each, times a shading
factor 0.2-1, block by block (out of core), with their sidecar JSON. The
free space on the target's file system is checked first.

Output files: ``NAME.npy`` (C order) and ``NAME.json`` (the sidecar the
``workbench render`` command reads: ``wavelengths_nm`` as start/stop/step
in nm, and a description).
"""

from __future__ import annotations

import argparse
import json
import shutil
import sys
from pathlib import Path

import numpy as np

SEED = 20240517
HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
WIDTH, HEIGHT = 64, 48
START, STOP, STEP = 380, 780, 5

sys.path.insert(0, str(ROOT))


def wavelengths() -> np.ndarray:
    return np.arange(START, STOP + STEP / 2, STEP, dtype=float)


def open_samples(wl):
    """(TCS01-14 (14, 81), CES01-99 (99, 81), studio (6, 81)) reflectances on the grid."""
    from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3
    from workbench.fileio.spectra_csv import read_spectra_csv

    tcs = tcs_cie_13_3(wl).values
    ces = ces_cie_224(wl).values
    studio = read_spectra_csv(HERE / "studio_reflectances.csv", kind="reflectance").resample(wl).values
    return tcs, ces, np.clip(studio, 0.0, 1.0)


def sidecar_text(wl, description: str, **extra) -> str:
    data = {
        "wavelengths_nm": {"start": int(wl[0]), "stop": int(wl[-1]), "step": int(wl[1] - wl[0])},
        "quantity": "reflectance (radiance factor) 0-1",
        "description": description,
        **extra,
    }
    return json.dumps(data, indent=1, ensure_ascii=False) + "\n"


def small_scene() -> np.ndarray:
    """The 48 × 64 × 81 scene, float32."""
    rng = np.random.default_rng(SEED)
    wl = wavelengths()
    tcs, ces, studio = open_samples(wl)
    n = wl.size
    yy, xx = np.mgrid[0:HEIGHT, 0:WIDTH].astype(float)

    # neutral wall: the mean of the CES samples, scaled to a mid reflectance
    wall = ces.mean(axis=0)
    wall = 0.45 * wall / wall.max()
    img = np.broadcast_to(wall, (HEIGHT, WIDTH, n)).copy()

    # chart: 4 rows x 6 columns of 7 x 7 patches, 1 px gaps, from (1, 1)
    chart = np.concatenate([tcs, ces[[4, 14, 24, 34, 44, 54, 64, 74, 84, 94]]], axis=0)
    for k in range(24):
        r, c = divmod(k, 6)
        y0, x0 = 1 + 8 * r, 1 + 8 * c
        img[y0:y0 + 7, x0:x0 + 7] = chart[k]

    # grey ramp: 8 flat steps down a column beside the chart
    for k, v in enumerate(np.linspace(0.03, 0.90, 8)):
        img[1 + 4 * k:1 + 4 * k + 4, 50:55] = v

    # vertical blend between two CES samples on the right edge
    t = (yy[:33, 57:63] / 32.0)[..., None]
    img[:33, 57:63] = (1 - t) * ces[17] + t * ces[71]

    # costume along the bottom: three studio reflectances in smoothly varying shares
    band = slice(34, 47)
    y, x = yy[band], xx[band]
    w = np.stack([
        1.2 + np.sin(x / 7.0) * np.cos(y / 5.0),
        1.2 + np.cos(x / 11.0 + 1.0),
        1.2 + np.sin((x + y) / 9.0 + 2.0),
    ], axis=-1)
    w /= w.sum(axis=-1, keepdims=True)
    img[band] = w @ studio[[0, 2, 4]]

    # spotlight falloff and a little measurement-like noise
    r2 = ((xx - WIDTH / 2) / (WIDTH / 2)) ** 2 + ((yy - HEIGHT / 2) / (HEIGHT / 2)) ** 2
    shade = 1.0 - 0.45 * r2 / 2.0
    img *= shade[..., None]
    img += rng.normal(0.0, 0.002, img.shape)
    return np.clip(img, 0.0, 1.0).astype(np.float32)


def write_small() -> None:
    from workbench.fileio.atomic import write_text_atomically

    img = small_scene()
    target = HERE / "scene_small.npy"
    tmp = target.with_name(".scene_small.npy.tmp")
    with open(tmp, "wb") as fh:
        np.save(fh, img, allow_pickle=False)
    tmp.replace(target)
    write_text_atomically(HERE / "scene_small.json", sidecar_text(
        wavelengths(),
        "INVENTED Lanternfield studio scene, 48 x 64 pixels (height x width), made by "
        "spectra-demo/make_scene.py from open sample spectra (CIE 13.3 TCS, CIE 224:2017 CES) "
        "and the demo's invented studio reflectances",
        layout="image (height, width, bands)", dtype="float32", seed=SEED))
    print(f"wrote {target} {img.shape} float32 and scene_small.json", file=sys.stderr)


def write_large(path: Path, count: int, dtype: str, block: int = 250_000) -> None:
    """(count, 81) mixtures of three open samples × shading 0.2-1, written block by block."""
    wl = wavelengths()
    tcs, ces, _ = open_samples(wl)
    pool = np.concatenate([tcs, ces], axis=0)
    dt = np.dtype(dtype)
    need = count * wl.size * dt.itemsize
    path.parent.mkdir(parents=True, exist_ok=True)
    free = shutil.disk_usage(path.parent).free
    if need > 0.9 * free:
        raise SystemExit(f"error: {path.parent}: {need / 1e9:.2f} GB needed but {free / 1e9:.2f} GB "
                         "free; ask for fewer --spectra")
    rng = np.random.default_rng(SEED + 1)
    tmp = path.with_name(f".{path.name}.tmp")
    out = np.lib.format.open_memmap(tmp, mode="w+", dtype=dt, shape=(count, wl.size))
    try:
        from tqdm.auto import tqdm

        for s in tqdm(range(0, count, block), desc="writing", unit="block", file=sys.stderr):
            e = min(count, s + block)
            k = e - s
            idx = rng.integers(0, pool.shape[0], size=(k, 3))
            w = rng.random((k, 3))
            w /= w.sum(axis=1, keepdims=True)
            shade = 0.2 + 0.8 * rng.random((k, 1))
            R = (w[:, 0:1] * pool[idx[:, 0]] + w[:, 1:2] * pool[idx[:, 1]]
                 + w[:, 2:3] * pool[idx[:, 2]]) * shade
            out[s:e] = R
        out.flush()
        del out
        tmp.replace(path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    side = path.with_name(path.stem + ".json")
    side.write_text(sidecar_text(
        wl, f"INVENTED benchmark set: {count} convex mixtures of three open samples (CIE 13.3 TCS, "
            "CIE 224:2017 CES) times a shading factor 0.2-1, made by spectra-demo/make_scene.py",
        layout="set (N, bands)", dtype=dt.name, seed=SEED + 1), encoding="utf-8")
    print(f"wrote {path} ({count}, {wl.size}) {dt.name}, {need / 1e9:.2f} GB, and {side.name}",
          file=sys.stderr)


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--large", metavar="PATH.npy", type=Path,
                    help="write a large spectral set there instead of the small scene (use /tmp)")
    ap.add_argument("--spectra", type=int, default=10_000_000, help="spectra in the large set")
    ap.add_argument("--dtype", choices=("float32", "float64"), default="float32")
    args = ap.parse_args(argv)
    if args.large is None:
        write_small()
        return
    if args.large.resolve().is_relative_to(ROOT):
        raise SystemExit("error: --large: write large sets outside the repository (e.g. /tmp)")
    if args.spectra < 1:
        raise SystemExit("error: --spectra must be at least 1")
    write_large(args.large, args.spectra, args.dtype)


if __name__ == "__main__":
    main()
