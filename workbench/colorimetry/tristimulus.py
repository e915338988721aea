"""CIE tristimulus values through precomputed weighting matrices.

A weighting matrix ``W`` (n_λ, 3) folds the colour-matching functions, the
illuminant, the wavelength step and the normalising constant into one array,
so the tristimulus values of any batch of spectra on that grid are a single
matrix product, ``XYZ = values @ W``. Matrices are computed once per (grid,
observer, illuminant, method) and cached.

Scales (one, stated): reflectance and transmittance are fractions 0-1, and
the perfect reflecting diffuser has Y = 100. Relative emission spectra are
normalised to Y = 100; absolute ones (W·m⁻²·nm⁻¹, W·sr⁻¹·m⁻²·nm⁻¹) give Y in
lx or cd·m⁻² with K_m = 683 lm/W.

Methods
-------
``'integration'`` (default)
    CIE 15:2004 § 7.1 summation on the data's own uniform grid:
    X = k Σ S(λ) R(λ) x̄(λ) Δλ, k = 100 / Σ S(λ) ȳ(λ) Δλ.
``'astm-e308'``
    ASTM E308-15: for 10 and 20 nm data, the Table 5-style weighting factors
    (computed by ASTM E2022 from the 1 nm functions and illuminant, over
    360-780 nm, then with the weights outside the data's range added to the
    end points; our own code, equal bit for bit to colour-science's); for 1 and 5 nm data, summation as above over 360-780 nm.
    The 1 nm illuminant for E2022 is A from its formula, D65 linearly
    interpolated (as the CIE's 1 nm table is) and any other table by Sprague
    interpolation, which reproduces the E308 whites of C and D50.

References
----------
CIE 15:2004, *Colorimetry*, 3rd ed., § 7.
ASTM E308-15, *Standard Practice for Computing the Colors of Objects by Using
the CIE System*.
ASTM E2022-11, *Standard Practice for Calculation of Weighting Factors for
Tristimulus Integration*.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property, lru_cache

import numpy as np

from workbench.colorimetry.cie import canonical_illuminant
from workbench.colorimetry.cie import cmfs_on, illuminant_on, observer_key, observer_label
from workbench.colorimetry.coordinates import XYZ_to_xy
from workbench.errors import RangeCoverageError, WorkbenchError
from workbench.model.spectra import Spectra, grid, is_uniform

__all__ = [
    "METHODS",
    "K_M",
    "REQUIRED_RANGE",
    "Weights",
    "object_weights",
    "emission_weights",
    "Tristimulus",
    "tristimulus",
    "extend_to_required",
]

METHODS = ("integration", "astm-e308")
#: Maximum luminous efficacy for photopic vision, lm/W (CIE 15:2004).
K_M = 683.0
#: The least range a colour computation needs, nm (CIE 15:2004 § 7.2: at least
#: 380-780 nm for abridged summation).
REQUIRED_RANGE = (380.0, 780.0)
_ASTM_RANGE = (360.0, 780.0)
#: Rows per block when a large batch goes through :meth:`Weights.apply` (≈2.6 MB of 81-band float64).
APPLY_BLOCK_ROWS = 4096


@dataclass(frozen=True, eq=False)
class Weights:
    """A weighting matrix and how it was made.

    ``W`` is (n, 3), read-only; ``XYZ = values @ W``. For object colours it
    includes k (white Y = 100); for emission it is x̄ȳz̄·Δλ (no k).
    """

    wavelengths: np.ndarray
    W: np.ndarray
    observer: str
    illuminant: str | None
    method: str
    notes: tuple[str, ...] = field(default=())

    def apply(self, values) -> np.ndarray:
        """Tristimulus values of ``values`` (..., n) as (..., 3).

        Parameters
        ----------
        values : (..., n) array_like
            float32 values are kept in float32 (no float64 copy of the input
            is made) and give float32 XYZ, computed with ``W`` rounded to
            float32: relative error about 1e-6 of each X, Y, Z (24-bit
            mantissa over an n-term sum; measured ≤ 1e-6 on 81-band random
            reflectances). Anything else is computed in float64.

        Notes
        -----
        Large batches go through the product in blocks of
        :data:`APPLY_BLOCK_ROWS` rows written into one output array: the
        time stays about that of one copy of the input, where one product
        over the whole batch leaves the BLAS library splitting a tall, thin
        product across threads (up to 3× slower on a busy 2-core machine,
        tests/benchmarks/bench_tristimulus.py). The two agree to rounding
        (measured ≤ 2e-13 relative on 1e6 × 81 float64).
        """
        v = np.asarray(values)
        if v.dtype != np.float32:
            v = np.asarray(v, dtype=float)
        n = self.W.shape[0]
        if v.ndim == 0 or v.shape[-1] != n:
            raise WorkbenchError(
                f"values have {v.shape[-1] if v.ndim else 0} wavelengths but the weights {n}"
            )
        W = self.W if v.dtype == np.float64 else self._W32
        if v.size <= APPLY_BLOCK_ROWS * n:
            return v @ W
        flat = v.reshape(-1, n)
        out = np.empty((flat.shape[0], 3), dtype=v.dtype)
        for i in range(0, flat.shape[0], APPLY_BLOCK_ROWS):
            np.matmul(flat[i:i + APPLY_BLOCK_ROWS], W, out=out[i:i + APPLY_BLOCK_ROWS])
        return out.reshape(v.shape[:-1] + (3,))

    @cached_property
    def _W32(self) -> np.ndarray:
        W = self.W.astype(np.float32)
        W.setflags(write=False)
        return W

    @property
    def white(self) -> np.ndarray:
        """XYZ of the perfect reflecting diffuser (object weights only)."""
        return self.W.sum(axis=0)


def _method_key(method: str) -> str:
    m = str(method).strip().lower().replace("_", "-").replace(" ", "-")
    m = {"astm": "astm-e308", "astme308": "astm-e308", "e308": "astm-e308"}.get(m, m)
    if m not in METHODS:
        raise WorkbenchError(f"method must be integration or astm-e308 (got {method!r})")
    return m


def _uniform_step(wl: np.ndarray, what: str) -> float:
    if not is_uniform(wl):
        raise WorkbenchError(
            f"{what} must be on a uniform grid for CIE summation (got {wl.size} unevenly "
            "spaced points); resample first (cubic spline, CIE 167)"
        )
    return float(wl[1] - wl[0])


@lru_cache(maxsize=128)
def _object_weights(key: bytes, observer: str, illuminant_key, method: str) -> Weights:
    wl = np.frombuffer(key, dtype=float)
    step = _uniform_step(wl, "data")
    if method == "integration" or step in (1.0, 5.0):
        return _integration_weights(wl, step, observer, illuminant_key, method)
    return _astm_weights(wl, step, observer, illuminant_key)


def _integration_weights(wl, step, observer, illuminant_key, method) -> Weights:
    if method == "astm-e308":
        return _astm_summation_weights(wl, step, observer, illuminant_key)
    cm = cmfs_on(wl, observer)
    name, ill = illuminant_on(wl, _illuminant_from_key(illuminant_key))
    notes = [cm.note, ill.note, f"summation at {step:g} nm (CIE 15:2004 § 7.1)"]
    Sx = ill.values[:, None] * cm.values * step
    W = (100.0 / Sx[:, 1].sum()) * Sx
    W.setflags(write=False)
    return Weights(wl, W, observer, name, method, tuple(notes))


def _fold_into_ends(W_full: np.ndarray, wl_full: np.ndarray, wl: np.ndarray) -> np.ndarray:
    """Weights on ``wl`` with the rows of ``W_full`` outside it added to its end points."""
    i0 = int(np.flatnonzero(np.isclose(wl_full, wl[0]))[0])
    i1 = int(np.flatnonzero(np.isclose(wl_full, wl[-1]))[0])
    W = W_full[i0:i1 + 1].copy()
    W[0] += W_full[:i0].sum(axis=0)
    W[-1] += W_full[i1 + 1:].sum(axis=0)
    return W


def _astm_summation_weights(wl, step, observer, illuminant_key) -> Weights:
    """ASTM E308 for 1 and 5 nm data: summation over 360-780 nm, ends folded in."""
    lo, hi = _ASTM_RANGE
    if wl[0] < lo or wl[-1] > hi or (wl[0] - lo) % step or (hi - wl[-1]) % step:
        raise WorkbenchError(
            f"ASTM E308 at {step:g} nm needs data within {lo:g}-{hi:g} nm on whole {step:g} nm "
            f"steps (got {wl[0]:g}-{wl[-1]:g} nm); use --method integration"
        )
    full = grid(lo, hi, step)
    cm = cmfs_on(full, observer)
    name, ill = illuminant_on(full, _illuminant_from_key(illuminant_key)) if not isinstance(
        illuminant_key, tuple) else (None, None)
    if ill is None:
        raise WorkbenchError(
            "ASTM E308 needs the illuminant over 360-780 nm; with a measured illuminant use "
            "--method integration"
        )
    Sx = ill.values[:, None] * cm.values * step
    W = (100.0 / Sx[:, 1].sum()) * Sx
    notes = [cm.note, ill.note, f"ASTM E308 at {step:g} nm: summation over {lo:g}-{hi:g} nm"]
    if wl[0] != lo or wl[-1] != hi:
        W = _fold_into_ends(W, full, wl)
        notes.append(f"weights outside {wl[0]:g}-{wl[-1]:g} nm added to the end points (ASTM E308)")
    W.setflags(write=False)
    return Weights(wl, W, observer, name, "astm-e308", tuple(notes))


def _lagrange(r: float, n: int) -> np.ndarray:
    """Lagrange interpolating coefficients (n,) at ``r`` for the nodes 0, 1, …, n − 1 (ASTM E2022 § 6)."""
    out = []
    for j in range(n):
        c = None
        for i in range(n):
            if i != j:
                term = (r - i) / (j - i)
                c = term if c is None else c * term
        out.append(c)
    return np.array(out)


def _e2022_coefficients(interval: int, inner: bool) -> np.ndarray:
    """(interval − 1, 4 or 3) Lagrange coefficients of an inner (cubic, 4 nodes) or end (quadratic) interval."""
    r = np.linspace(1 / interval, 1 - 1 / interval, interval - 1)
    return np.array([_lagrange(x, 4) for x in r + 1]) if inner else np.array([_lagrange(x, 3) for x in r])


def _e2022_weights(Y: np.ndarray, S: np.ndarray, interval: int) -> np.ndarray:
    """ASTM E2022-11 weighting factors (m, 3) at ``interval`` nm from 1 nm x̄ȳz̄ ``Y`` (n, 3) and SPD ``S`` (n,).

    Each 1 nm product S·x̄ between two measurement points is shared among
    the neighbouring points by Lagrange interpolation (cubic inside, quadratic
    in the first and last interval); normalised to Y = 100 for the perfect
    diffuser. The same sums in the same order as colour-science's
    ``tristimulus_weighting_factors_ASTME2022`` (tested equal).
    """
    W = S[::interval, None] * Y[::interval, :]
    c_c = _e2022_coefficients(interval, inner=False)
    c_b = _e2022_coefficients(interval, inner=True)
    w_c = len(Y)
    r_c = c_b.shape[0]
    w_lif = w_c - (w_c - 1) % interval - 1 - r_c
    i_c = W.shape[0]
    i_cm = i_c - 1
    for i in range(3):
        for h in range(r_c):                                    # first interval
            for g in range(3):
                W[g, i] = W[g, i] + c_c[h, g] * S[h + 1] * Y[h + 1, i]
        for h in range(r_c):                                    # last interval
            for g in range(i_cm, i_cm - 3, -1):
                W[g, i] = W[g, i] + c_c[r_c - h - 1, i_cm - g] * S[h + w_lif] * Y[h + w_lif, i]
        for h in range(i_c - 3):                                # inner intervals
            for g in range(r_c):
                w_i = (r_c + 1) * (h + 1) + 1 + g
                for k in range(4):
                    W[h + k, i] = W[h + k, i] + c_b[g, k] * S[w_i] * Y[w_i, i]
        for h in range(w_c - (w_c - 1) % interval, w_c):        # an incomplete last interval
            W[i_cm, i] = W[i_cm, i] + S[h] * Y[h, i]
    return W * (100 / np.sum(W, axis=0)[1])


def _astm_weights(wl, step, observer, illuminant_key) -> Weights:
    if step not in (10.0, 20.0) or wl[0] % 10 or wl[-1] % 10:
        raise WorkbenchError(
            "ASTM E308 needs data at 1, 5, 10 or 20 nm, and 10/20 nm data starting and "
            f"ending on a multiple of 10 nm (got {wl[0]:g}-{wl[-1]:g} nm at {step:g} nm); "
            "use --method integration"
        )
    lo, hi = _ASTM_RANGE
    if wl[0] < lo or wl[-1] > hi:
        raise WorkbenchError(
            f"ASTM E308 weights cover {lo:g}-{hi:g} nm (got data {wl[0]:g}-{wl[-1]:g} nm); "
            "restrict the data to that range or use --method integration"
        )
    wl1 = grid(lo, hi, 1)
    cm1 = cmfs_on(wl1, observer).values
    if isinstance(illuminant_key, tuple):
        raise WorkbenchError(
            "ASTM E308 weights need a 1 nm illuminant over 360-780 nm; with a measured "
            "illuminant use --method integration"
        )
    # The 1 nm illuminant for E2022: A from its formula, D65 by linear
    # interpolation (the CIE's own 1 nm D65 table is that), every other table
    # by Sprague (CIE 167), which reproduces the published E308 whites of C
    # and D50.
    name = canonical_illuminant(illuminant_key)
    how = "linear" if name in ("D65", "A") else "sprague"
    name, ill1 = illuminant_on(wl1, name, interpolation=how)
    interval = int(step)
    W = _e2022_weights(np.array(cm1, dtype=float), np.array(ill1.values, dtype=float), interval)
    notes = [
        f"{observer_label(observer)} colour-matching functions, tabulated values",
        f"{ill1.note}, at 1 nm for ASTM E2022",
        f"ASTM E308 weighting factors at {step:g} nm (ASTM E2022 over {lo:g}-{hi:g} nm)",
    ]
    end = lo + step * math.floor((hi - lo) / step)
    if (wl[0], wl[-1]) != (lo, end):
        # ASTM E308 § 7.3: the weights outside the data's range added to its end points, one by one.
        first = int((wl[0] - lo) / step)
        for i in range(first):
            W[first] += W[i]
        last = int((end - wl[-1]) / step)
        for i in range(last):
            W[-last - 1] += W[-i - 1]
        W = W[first:-last or None]
        notes.append(
            f"weights outside {wl[0]:g}-{wl[-1]:g} nm added to the end points (ASTM E308 § 7.3)"
        )
    W = np.array(W, dtype=float)
    W.setflags(write=False)
    return Weights(wl, W, observer, name, "astm-e308", tuple(notes))


def _illuminant_key(illuminant):
    """A hashable key for the weight caches: the name, or the SPD's bytes."""
    if isinstance(illuminant, Spectra):
        return ("spd", illuminant.wavelengths.tobytes(), illuminant.values.tobytes(),
                illuminant.names, illuminant.source)
    return str(illuminant)


def _illuminant_from_key(key):
    if isinstance(key, tuple):
        _, wl, v, names, source = key
        return Spectra(np.frombuffer(wl), np.frombuffer(v), names, "emission", "relative", (), source)
    return key


def object_weights(wavelengths, *, illuminant="D65", observer="2", method="integration") -> Weights:
    """Weighting matrix for object colours (reflectance or transmittance 0-1).

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
        The data's uniform grid.
    illuminant : str or Spectra
        CIE name or a single measured SPD on the same grid.
    observer : {'2', '10'}
    method : {'integration', 'astm-e308'}

    Returns
    -------
    Weights
        ``W`` (n, 3) with ``W.sum(axis=0)`` the white XYZ (Y = 100).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.
    ASTM E308-15, *Standard Practice for Computing the Colors of Objects by Using
    the CIE System*.
    ASTM E2022-11, *Standard Practice for Calculation of Weighting Factors for
    Tristimulus Integration*.
    docs/methods.md §3.

    Examples
    --------
    >>> w = object_weights(grid(360, 780, 10), illuminant="D65", method="astm-e308")
    >>> [round(float(v), 3) for v in w.white]  # ASTM E308-15, Table 5 (D65, 2°)
    [95.047, 100.0, 108.883]
    """
    wl = np.asarray(wavelengths, dtype=float)
    return _object_weights(wl.tobytes(), observer_key(observer), _illuminant_key(illuminant), _method_key(method))


@lru_cache(maxsize=64)
def _emission_weights(key: bytes, observer: str) -> Weights:
    wl = np.frombuffer(key, dtype=float)
    step = _uniform_step(wl, "emission data")
    cm = cmfs_on(wl, observer)
    W = cm.values * step
    W.setflags(write=False)
    return Weights(wl, W, observer, None, "integration",
                   (cm.note, f"summation at {step:g} nm (CIE 15:2004 § 7.1)"))


def emission_weights(wavelengths, *, observer="2") -> Weights:
    """Weighting matrix x̄ȳz̄·Δλ for emission spectra (no normalisation).

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.1.
    docs/methods.md §3.
    """
    wl = np.asarray(wavelengths, dtype=float)
    return _emission_weights(wl.tobytes(), observer_key(observer))


def extend_to_required(spectra: Spectra, *, required=REQUIRED_RANGE) -> Spectra:
    """Extend uniform ``spectra`` with their end values to cover ``required`` nm.

    The grid keeps its step; new points repeat the nearest value (constant
    extrapolation, CIE 167:2005), and the note says which part was added.

    References
    ----------
    CIE 167:2005 (constant extrapolation).
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.2 (380-780 nm).
    docs/methods.md §1.
    """
    wl = spectra.wavelengths
    step = _uniform_step(wl, "data")
    lo = wl[0] - step * max(0, math.ceil((wl[0] - required[0]) / step - 1e-9))
    hi = wl[-1] + step * max(0, math.ceil((required[1] - wl[-1]) / step - 1e-9))
    if lo == wl[0] and hi == wl[-1]:
        return spectra
    return spectra.resample(grid(lo, hi, step), extrapolation="constant")


@dataclass(frozen=True, eq=False)
class Tristimulus:
    """Tristimulus values of a set of spectra, with how they were computed.

    ``XYZ`` is (..., 3) following the spectra's leading shape; ``white`` is
    the XYZ of the perfect reflecting diffuser (object colours) or None
    (emission). ``notes`` lists the reading, resampling, table and method
    notes in order.
    """

    names: tuple[str, ...]
    XYZ: np.ndarray
    white: np.ndarray | None
    observer: str
    illuminant: str | None
    method: str
    absolute: bool
    notes: tuple[str, ...]

    @property
    def xy(self) -> np.ndarray:
        return XYZ_to_xy(self.XYZ)

    def describe_method(self) -> str:
        obs = observer_label(self.observer)
        if self.illuminant is None:
            scale = "absolute, K_m = 683 lm/W" if self.absolute else "relative, Y = 100"
            return f"emission, {obs}, {self.method}, {scale}"
        return f"{self.illuminant}, {obs}, {self.method}, perfect diffuser Y = 100"


def tristimulus(
    spectra: Spectra,
    *,
    illuminant="D65",
    observer="2",
    method: str = "integration",
    extrapolation: str = "none",
    absolute: bool | None = None,
) -> Tristimulus:
    """CIE XYZ of ``spectra``.

    Parameters
    ----------
    spectra : Spectra
        Reflectance or transmittance (0-1, under ``illuminant``) or emission
        (``illuminant`` ignored). On a uniform grid; must cover 380-780 nm
        (CIE 15:2004) unless ``extrapolation='constant'``.
    illuminant : str or Spectra
    observer : {'2', '10'}
    method : {'integration', 'astm-e308'}
    extrapolation : {'none', 'constant'}
        ``'none'`` raises :class:`RangeCoverageError` when the data do not
        cover 380-780 nm; ``'constant'`` extends them with their end values
        (CIE 167:2005) and says so in the notes.
    absolute : bool, optional
        Emission only: ``True`` gives Y = 683 Σ S ȳ Δλ (lx or cd·m⁻² for
        absolute SPDs); ``False`` normalises each spectrum to Y = 100.
        Default: absolute when the units are not ``'relative'``.

    Returns
    -------
    Tristimulus

    References
    ----------
    CIE 15:2004, *Colorimetry*, 3rd ed., § 7.
    ASTM E308-15, *Standard Practice for Computing the Colors of Objects by Using
    the CIE System*.
    ASTM E2022-11, *Standard Practice for Calculation of Weighting Factors for
    Tristimulus Integration*.
    docs/methods.md §3.

    Examples
    --------
    >>> wl = grid(380, 780, 5)
    >>> t = tristimulus(Spectra(wl, np.ones(wl.size)), illuminant="D65")
    >>> t.XYZ.round(3).tolist()  # the perfect diffuser: D65's white, 5 nm summation over 380-780 nm
    [95.043, 100.0, 108.88]
    """
    if not isinstance(spectra, Spectra):
        raise WorkbenchError(f"spectra must be a Spectra (got {type(spectra).__name__})")
    method = _method_key(method)
    if extrapolation not in ("none", "constant"):
        raise WorkbenchError(f"extrapolation must be none or constant (got {extrapolation!r})")
    s = spectra
    lo, hi = REQUIRED_RANGE
    if not s.covers(lo, hi):
        if extrapolation != "constant":
            where = f"{s.source}: " if s.source else ""
            raise RangeCoverageError(
                f"{where}data cover {s.wavelengths[0]:g}-{s.wavelengths[-1]:g} nm but "
                f"colorimetry needs {lo:g}-{hi:g} nm (CIE 15:2004); allow constant "
                "extrapolation (CIE 167) with --extrapolate constant"
            )
        s = extend_to_required(s)
    notes = list(s.notes)
    if s.kind == "emission":
        w = emission_weights(s.wavelengths, observer=observer)
        raw = w.apply(s.values)
        if absolute is None:
            absolute = s.units.strip().lower() not in ("relative", "1", "")
        if absolute:
            XYZ = K_M * raw
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                XYZ = 100.0 * raw / raw[..., 1:2]
        notes += list(w.notes)
        notes.append(
            "absolute: X = 683 lm/W · Σ S x̄ Δλ" if absolute else "relative: each spectrum scaled to Y = 100"
        )
        return Tristimulus(s.names, XYZ, None, w.observer, None, w.method, bool(absolute), tuple(notes))
    if s.kind == "sensitivity":
        raise WorkbenchError("tristimulus values are for reflectance, transmittance or emission (got sensitivity)")
    w = object_weights(s.wavelengths, illuminant=illuminant, observer=observer, method=method)
    notes += list(w.notes)
    return Tristimulus(s.names, w.apply(s.values), w.white, w.observer, w.illuminant, w.method, False, tuple(notes))
