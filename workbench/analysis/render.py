"""A camera judged over spectral images and large spectral sets, in memory or out of core on Dask.

Inputs are reflectance (radiance factor) 0-1 with the spectrum on the last
axis: a spectral image ``(height, width, bands)`` or a spectral set
``(N, bands)``. For every pixel or spectrum R(λ) under the scene light E(λ)
the pipeline of :mod:`workbench.analysis.camera` is evaluated with the same
definitions as :class:`workbench.analysis.camera.ColourBench`:

1. raw camera RGB = Σ S(λ) R(λ) E(λ) Δλ;
2. white balance on the perfect diffuser under E, then the camera's 3×3
   matrix: display-linear RGB of the camera's primaries, white (1, 1, 1);
3. truth: the CIE XYZ of R under E (perfect diffuser Y = 1) adapted to the
   display white by the linear Bradford transform
   (:func:`workbench.analysis.camera.bradford_matrix`);
4. both to CIELAB against the display white (Y = 100) and their CIEDE2000
   difference ΔE00 (:func:`workbench.colorimetry.coordinates.delta_E_CIE2000`).

Everything linear is folded into one weight matrix W (bands, 6) built once
per camera, light and wavelength grid: its first three columns give raw
RGB, its last three the adapted truth XYZ (white Y = 100). A block of
spectra is then one matrix product plus the colour maths on (rows, 3)
arrays; blocks of :data:`SUB_BLOCK` rows keep the temporaries in cache. The
in-memory path and the Dask path run the same block function, so their
results agree to rounding (bit for bit when the blocks coincide).

Out of core, a cube (:mod:`workbench.fileio.spectral_cube`) is read from ``.npy`` (memory-mapped a chunk at a time;
each chunk's map is dropped once it is evaluated, so only the chunks in
flight are resident) or from Zarr
(``dask.array.from_zarr``), chunked along its first axis only (each chunk
holds whole spectra and, for images, whole image rows), and evaluated one
task per chunk on the local threaded scheduler or on a
``dask.distributed`` cluster; the per-chunk results (ΔE00 float64 and, for
images, two 8-bit sRGB images) are gathered in order. Memory in use is
about the chunks in flight plus the results (8 bytes per pixel for ΔE00,
6 more for the two images). The Dask path lives in
:mod:`workbench.analysis.render_dask`.

The cube's wavelengths come from ``START:STOP:STEP`` (nm) or from a sidecar
JSON file beside it (``scene.npy`` → ``scene.json``; ``scene.zarr`` →
``scene.json``) holding ``"wavelengths_nm"``: a list of numbers, or
``{"start": …, "stop": …, "step": …}``. A cube on another grid than the
camera's is resampled to the camera grid by the CIE 167:2005 rules
(:func:`workbench.model.spectra.resampling_matrix`), folded into W and said in
the notes; extrapolation only when asked.

Display-ready images encode display-linear ITU-R BT.709 RGB (white = 1;
other display primaries are taken through XYZ with a Bradford adaptation
to D65) with the sRGB transfer function of IEC 61966-2-1:1999, clipped to
0-1 first and rounded to 8 bits.

References
----------
CIE 15:2004 § 7 (summation). CIE 142-2001 (ΔE00). CIE 167:2005
(resampling). IEC 61966-2-1:1999 (sRGB transfer). ITU-R BT.709-6.
"""

from __future__ import annotations

import math
import os
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from workbench.analysis.camera import Camera, bradford_matrix
from workbench.colorimetry.cie import cmfs_on, observer_label
from workbench.colorimetry.coordinates import XYZ_to_Lab, delta_E_CIE2000
from workbench.colorimetry.primaries import primaries_named
from workbench.errors import WorkbenchError
from workbench.fileio.spectral_cube import SUB_BLOCK, describe_grid
from workbench.model.spectra import check_wavelengths, is_uniform, resampling_matrix

__all__ = [
    "BatchPipeline",
    "SpectraEvaluation",
    "RenderResult",
    "srgb_encode",
    "to_srgb8",
    "render_in_memory",
    "combine_blocks",
    "RenderBlock",
]

#: Rows per matrix product inside a block (the skinny product is fastest in cache).
MATMUL_ROWS = 2048

# --------------------------------------------------------------------------
# sRGB encoding
# --------------------------------------------------------------------------


def srgb_encode(linear) -> np.ndarray:
    """sRGB transfer function (IEC 61966-2-1:1999) of linear values (...) in 0-1 → 0-1.

    V = 12.92 L for L ≤ 0.0031308, else 1.055 L^(1/2.4) − 0.055. Values
    outside 0-1 are not clipped here (see :func:`to_srgb8`).

    >>> srgb_encode([0.0, 0.18, 1.0]).round(4).tolist()
    [0.0, 0.4614, 1.0]

    References
    ----------
    IEC 61966-2-1:1999, *Multimedia systems and equipment - Colour measurement
    and management - Part 2-1: Default RGB colour space - sRGB*.
    docs/methods.md §19.
    """
    L = np.asarray(linear, dtype=float)
    with np.errstate(invalid="ignore"):
        hi = 1.055 * np.power(np.maximum(L, 0.0031308), 1 / 2.4) - 0.055
    return np.where(L <= 0.0031308, 12.92 * L, hi)


def to_srgb8(linear) -> np.ndarray:
    """8-bit sRGB codes (uint8) of display-linear BT.709 RGB (..., 3), white = 1.

    Clipped to 0-1, encoded by :func:`srgb_encode`, × 255 and rounded to the
    nearest code; NaN becomes 0.

    References
    ----------
    IEC 61966-2-1:1999.
    docs/methods.md §19.

    Examples
    --------
    >>> to_srgb8([0.18, 1.0, 0.0]).tolist()  # 18 % grey is code 118
    [118, 255, 0]
    """
    L = np.clip(np.nan_to_num(np.asarray(linear, dtype=float), nan=0.0), 0.0, 1.0)
    return np.rint(srgb_encode(L) * 255.0).astype(np.uint8)


# --------------------------------------------------------------------------
# The pipeline: weights once, then blocks
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class SpectraEvaluation:
    """Every quantity of the pipeline for a batch of spectra (leading shape ``...``).

    ``raw_RGB`` (..., 3) Σ S R E Δλ; ``camera_RGB`` (..., 3) after white
    balance (the white is 1, 1, 1); ``display_RGB`` (..., 3) display-linear
    RGB of the camera's primaries after the matrix; ``camera_Lab`` and
    ``true_Lab`` (..., 3) against the display white; ``true_XYZ`` (..., 3)
    the adapted truth with the display white at Y = 100; ``delta_E00``
    (...) CIEDE2000.
    """

    raw_RGB: np.ndarray
    camera_RGB: np.ndarray
    display_RGB: np.ndarray
    camera_Lab: np.ndarray
    true_XYZ: np.ndarray
    true_Lab: np.ndarray
    delta_E00: np.ndarray


@dataclass(frozen=True, eq=False)
class RenderBlock:
    """What one block of spectra gives for a render (see :meth:`BatchPipeline.render_block`)."""

    delta_E00: np.ndarray                 # (...) float64
    truth_sRGB8: np.ndarray | None        # (..., 3) uint8
    camera_sRGB8: np.ndarray | None       # (..., 3) uint8
    clipped_truth: int
    clipped_camera: int
    nonfinite: int
    first_nonfinite: int                  # flat index in the block, -1 if none
    max_Y: float                          # largest truth Y / Y of the perfect diffuser


class BatchPipeline:
    """One camera under one light, ready to evaluate any number of reflectance spectra.

    Parameters
    ----------
    camera : Camera
        Sensitivities (3, n) on a uniform grid, matrix and display primaries.
    illuminant : (n,) array_like
        The scene light's relative SPD on the camera's grid (any scale: the
        white balance and the truth normalise it).
    illuminant_name : str, optional
        Picks the camera's per-illuminant matrix when it has one by that name,
        and labels the notes.
    wavelengths : (m,) array_like, optional
        The grid of the spectra to be evaluated (nm); default the camera's.
        Another grid is resampled to the camera's (CIE 167:2005), folded
        into the weights.
    extrapolation : {'none', 'constant'}
        For a data grid that does not cover the camera's.

    Notes
    -----
    W = [Wᵀ_raw; Wᵀ_truth]ᵀ (m, 6) with, on the camera grid,
    W_raw = diag(E) Sᵀ Δλ and W_truth = 100 diag(E) X̄ Aᵀ / (Eᵀȳ), A the
    Bradford matrix from the light's white to the display white N·(1,1,1)
    (then the resampling matrix Pᵀ on the left for another grid). The
    camera's XYZ (display white Y = 100) is raw·Kᵀ with
    K = 100 N M diag(1/raw_white).

    References
    ----------
    CIE 15:2004 § 7; CIE 142-2001; Lam (1985), Bradford; IEC 61966-2-1:1999.
    docs/methods.md §§9, 19.
    """

    def __init__(self, camera: Camera, illuminant, *, illuminant_name: str | None = None,
                 wavelengths=None, extrapolation: str = "none"):
        wl_c = check_wavelengths(camera.wavelengths, what="camera wavelengths")
        if not is_uniform(wl_c):
            raise WorkbenchError("the camera's wavelengths must be a uniform grid (summation)")
        S = np.asarray(camera.sensitivities, dtype=float)
        if S.shape != (3, wl_c.size):
            raise WorkbenchError(f"camera sensitivities must be shaped (3, {wl_c.size}) (got {S.shape})")
        E = np.asarray(illuminant, dtype=float)
        if E.shape != (wl_c.size,):
            raise WorkbenchError(f"illuminant must have {wl_c.size} values on the camera grid "
                                 f"(got shape {E.shape})")
        if not np.all(np.isfinite(E)) or np.any(E < 0) or not np.any(E > 0):
            raise WorkbenchError("illuminant must be finite, ≥ 0 and not all zero")
        step = float(wl_c[1] - wl_c[0])
        cmfs = cmfs_on(wl_c, camera.observer).values                  # (n, 3)
        N = camera.primaries.matrix_RGB_to_XYZ
        display_white = N.sum(axis=1)                                   # Y = 1
        M = np.asarray(camera.matrix_for(illuminant_name), dtype=float)
        white_raw = E @ (S.T * step)                                    # (3,)
        if np.any(white_raw <= 0):
            raise WorkbenchError("a channel records nothing of the white under this light; "
                                 "cannot white-balance")
        XYZ_white = E @ cmfs
        A = bradford_matrix(XYZ_white / XYZ_white[1], display_white)
        W_raw = E[:, None] * (S.T * step)                               # (n, 3)
        W_truth = (E[:, None] * cmfs / XYZ_white[1]) @ A.T * 100.0      # (n, 3)
        notes = [
            f"camera {camera.name}: summation at {step:g} nm over {wl_c[0]:g}-{wl_c[-1]:g} nm, "
            f"{observer_label(camera.observer)}",
            "white balance on the perfect diffuser under the scene light; matrix "
            f"{camera.matrix_method}" + (f" for {illuminant_name}" if illuminant_name and
                                         illuminant_name in dict(camera.per_illuminant) else ""),
            f"truth adapted to the display white ({camera.primaries.white_name}) by the linear "
            "Bradford transform; CIELAB against the display white; ΔE00 CIEDE2000 (CIE 142-2001)",
        ]
        if wavelengths is None:
            wl = wl_c
            P = None
        else:
            wl = check_wavelengths(wavelengths, what="data wavelengths")
            if wl.size == wl_c.size and np.allclose(wl, wl_c, rtol=0, atol=1e-9):
                wl = wl_c
                P = None
            else:
                if extrapolation not in ("none", "constant"):
                    raise WorkbenchError(f"extrapolation must be none or constant (got {extrapolation!r})")
                P, used = resampling_matrix(wl, wl_c, extrapolation=extrapolation)  # (n_c, m)
                notes.append(
                    f"data on {describe_grid(wl)} resampled to the camera grid {describe_grid(wl_c)} by "
                    + {"sprague": "Sprague interpolation", "cubic-spline": "not-a-knot cubic spline",
                       "linear": "linear interpolation"}[used]
                    + " (CIE 167:2005)"
                    + (", extended with the end values" if extrapolation == "constant"
                       and (wl[0] > wl_c[0] or wl[-1] < wl_c[-1]) else "")
                )
        W = np.concatenate([W_raw, W_truth], axis=1)
        if P is not None:
            W = P.T @ W
        self.camera = camera
        self.illuminant_name = illuminant_name
        self.wavelengths = wl
        self.camera_wavelengths = wl_c
        self.illuminant = E
        self.weights = np.ascontiguousarray(W)                          # (m, 6)
        self.white_raw = white_raw
        self.matrix = M
        self.adaptation = A
        self.matrix_RGB_to_XYZ = N
        self.white_Lab = 100.0 * display_white
        self.K = 100.0 * N @ M @ np.diag(1.0 / white_raw)               # raw → camera XYZ (Y_w = 100)
        bt709 = primaries_named("ITU-R BT.709")
        to_d65 = bradford_matrix(display_white, bt709.matrix_RGB_to_XYZ.sum(axis=1))
        #: XYZ (display white Y = 100) → linear BT.709 for the images
        self.XYZ_to_image = bt709.matrix_XYZ_to_RGB @ to_d65 / 100.0
        self.notes = tuple(notes)

    @property
    def bands(self) -> int:
        return int(self.wavelengths.size)

    def _check(self, R) -> np.ndarray:
        R = np.asarray(R)
        if R.ndim == 0 or R.shape[-1] != self.bands:
            raise WorkbenchError(f"spectra must have {self.bands} values on the last axis "
                                 f"(got shape {R.shape})")
        if R.dtype.kind != "f":
            raise WorkbenchError(f"spectra must be float32 or float64 reflectance 0-1 (got {R.dtype})")
        return R

    # -- every quantity, in memory -------------------------------------------------
    def evaluate(self, R) -> SpectraEvaluation:
        """Every quantity of the pipeline for reflectances ``R`` (..., m), 0-1.

        Returns
        -------
        SpectraEvaluation
            Arrays with the leading shape of ``R``.
        """
        R = self._check(R)
        X = np.asarray(R, dtype=float) @ self.weights
        raw = X[..., :3]
        C = raw / self.white_raw
        display = C @ self.matrix.T
        lab_c = XYZ_to_Lab(100.0 * display @ self.matrix_RGB_to_XYZ.T, self.white_Lab)
        XYZ_t = X[..., 3:]
        lab_t = XYZ_to_Lab(XYZ_t, self.white_Lab)
        return SpectraEvaluation(raw, C, display, lab_c, XYZ_t, lab_t, delta_E_CIE2000(lab_c, lab_t))

    # -- what a render needs, block by block ---------------------------------------
    def render_block(self, R, *, images: bool = True, workers: int = 1) -> RenderBlock:
        """ΔE00 (and 8-bit sRGB images) of reflectances ``R`` (..., m), 0-1.

        Works through :data:`SUB_BLOCK` spectra at a time — one product with
        :attr:`weights`, then CIELAB and ΔE00 — on ``workers`` threads
        (numpy releases the GIL). Spectra with a non-finite value come out
        as NaN and are counted.
        """
        R = self._check(R)
        lead = R.shape[:-1]
        flat = R.reshape(-1, self.bands)
        m = flat.shape[0]
        de = np.empty(m)
        t8 = np.empty((m, 3), np.uint8) if images else None
        c8 = np.empty((m, 3), np.uint8) if images else None
        starts = range(0, m, SUB_BLOCK)
        if workers > 1 and len(starts) > 1:
            per = -(-len(starts) // (4 * workers))          # a few tasks per worker
            groups = [starts[i:i + per] for i in range(0, len(starts), per)]
            with ThreadPoolExecutor(workers) as pool:
                counts = list(pool.map(lambda g: [self._rows(flat, s, de, t8, c8) for s in g], groups))
            counts = [c for g in counts for c in g]
        else:
            counts = [self._rows(flat, s, de, t8, c8) for s in starts]
        first_bad = next((s + c[3] for s, c in zip(starts, counts) if c[3] >= 0), -1)
        return RenderBlock(
            de.reshape(lead),
            None if t8 is None else t8.reshape(lead + (3,)),
            None if c8 is None else c8.reshape(lead + (3,)),
            sum(c[0] for c in counts), sum(c[1] for c in counts), sum(c[2] for c in counts),
            first_bad, max((c[4] for c in counts), default=-math.inf),
        )

    def _rows(self, flat, s, de, t8, c8):
        """Evaluate rows s … s + SUB_BLOCK of ``flat`` into the outputs; returns the counts."""
        e = min(flat.shape[0], s + SUB_BLOCK)
        clip = [0, 0]
        X = np.empty((e - s, 6))
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            for q in range(s, e, MATMUL_ROWS):           # float32 rows are taken to float64
                X[q - s:q - s + MATMUL_ROWS] = flat[q:min(e, q + MATMUL_ROWS)] @ self.weights
            XYZ_t = X[:, 3:]
            XYZ_c = X[:, :3] @ self.K.T
            d = delta_E_CIE2000(XYZ_to_Lab(XYZ_c, self.white_Lab), XYZ_to_Lab(XYZ_t, self.white_Lab))
            de[s:e] = d
            # a NaN or ±inf anywhere in a spectrum reaches its ΔE00 as NaN (finite data give finite ΔE00)
            finite = np.isfinite(d)
            nb = int(finite.size - np.count_nonzero(finite))
            first = int(np.argmin(finite)) if nb else -1
            Y = XYZ_t[finite, 1] if nb else XYZ_t[:, 1]
            max_Y = float(np.max(Y)) / 100.0 if Y.size else -math.inf
            if t8 is not None:
                for k, (XYZ, out) in enumerate(((XYZ_t, t8), (XYZ_c, c8))):
                    lin = XYZ @ self.XYZ_to_image.T
                    outside = ((lin < 0) | (lin > 1)).any(axis=1)
                    clip[k] = int(np.count_nonzero(outside & finite if nb else outside))
                    out[s:e] = to_srgb8(lin)
        return clip[0], clip[1], nb, first, max_Y



# --------------------------------------------------------------------------
# Results of a render
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class RenderResult:
    """ΔE00 per pixel or spectrum and the display images of a whole cube.

    ``delta_E00`` has the cube's leading shape (NaN where a spectrum had a
    non-finite value); ``truth_sRGB8`` and ``camera_sRGB8`` (..., 3) uint8,
    or None for a spectral set; ``clipped_*`` count pixels with a linear
    BT.709 component outside 0-1 before clipping; ``max_Y`` the largest
    truth Y relative to the perfect diffuser; ``chunks`` how many chunks
    were evaluated.
    """

    delta_E00: np.ndarray
    truth_sRGB8: np.ndarray | None
    camera_sRGB8: np.ndarray | None
    clipped_truth: int
    clipped_camera: int
    nonfinite: int
    first_nonfinite: int
    max_Y: float
    chunks: int
    seconds: float
    notes: tuple[str, ...] = field(default=())

    @property
    def count(self) -> int:
        return int(self.delta_E00.size)

    def stats(self) -> dict[str, float]:
        """ΔE00 mean, p95 and max over the finite pixels (p95: linear interpolation, numpy default)."""
        d = self.delta_E00.ravel()
        if self.nonfinite:
            d = d[np.isfinite(d)]
        if d.size == 0:
            return {"mean": math.nan, "p95": math.nan, "max": math.nan}
        return {"mean": float(np.mean(d)), "p95": float(np.percentile(d, 95)), "max": float(np.max(d))}

    def first_nonfinite_index(self) -> tuple[int, ...] | None:
        """Index (in the cube's leading shape) of the first spectrum with a non-finite value."""
        if self.first_nonfinite < 0:
            return None
        return tuple(int(i) for i in np.unravel_index(self.first_nonfinite, self.delta_E00.shape))


def combine_blocks(blocks: list[RenderBlock], offsets: list[int], images: bool, seconds: float,
             notes) -> RenderResult:
    first = -1
    for b, off in zip(blocks, offsets):
        if b.first_nonfinite >= 0:
            first = off + b.first_nonfinite
            break
    cat = (lambda xs: xs[0] if len(xs) == 1 else np.concatenate(xs, axis=0))
    return RenderResult(
        cat([b.delta_E00 for b in blocks]),
        cat([b.truth_sRGB8 for b in blocks]) if images else None,
        cat([b.camera_sRGB8 for b in blocks]) if images else None,
        sum(b.clipped_truth for b in blocks),
        sum(b.clipped_camera for b in blocks),
        sum(b.nonfinite for b in blocks),
        first,
        max((b.max_Y for b in blocks), default=-math.inf),
        len(blocks),
        seconds,
        tuple(notes),
    )


def render_in_memory(pipeline: BatchPipeline, R, *, images: bool | None = None,
                     workers: int | None = None) -> RenderResult:
    """The render of a cube held in memory: ``R`` (h, w, m) image or (N, m) set, reflectance 0-1.

    ``images`` defaults to True for a 3-D cube. One call of
    :meth:`BatchPipeline.render_block` over the whole array on ``workers``
    threads (default: every CPU).
    """
    R = pipeline._check(R)
    images = (R.ndim == 3) if images is None else images
    workers = workers or os.cpu_count() or 1
    t0 = time.perf_counter()
    b = pipeline.render_block(R, images=images, workers=workers)
    return combine_blocks([b], [0], images, time.perf_counter() - t0, pipeline.notes)

