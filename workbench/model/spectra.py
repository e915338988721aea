"""The spectral data model and resampling.

One model serves every stage: a wavelength vector in nanometres, strictly
increasing, and values shaped ``(..., n_λ)`` (spectra on the last axis, any
leading shape), with names, a kind and units. Every change to the numbers
(unit conversion, resampling, extrapolation) is recorded in ``notes`` so the
reader of a result can see how it was made; nothing is resampled or
extrapolated unless asked.

Resampling is linear in the values, so each method is a matrix built once
per (source grid, target grid, method, extrapolation) and cached; resampling a
batch of spectra is one matrix product. The interpolation operators
themselves (Sprague, linear, not-a-knot cubic spline) are in
:mod:`workbench.model.interpolation`; band averaging, the choice of method,
exact nodes, extrapolation and the cache are here.

References
----------
CIE 167:2005, *Recommended practice for tabulating spectral data for use in
colour computations* (Sprague interpolation for uniform data, cubic spline
for non-uniform data, constant extrapolation).
Sprague, T. B. (1880). Explanation of a new formula for interpolation.
*Journal of the Institute of Actuaries*, 22, 270-285.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import lru_cache
from typing import Literal

import numpy as np

from workbench.errors import RangeCoverageError, WorkbenchError
from workbench.fileio.limits import check_count, check_step
from workbench.model.interpolation import linear_matrix, spline_matrix, sprague_matrix

__all__ = [
    "format_range",
    "KINDS",
    "INTERPOLATION_METHODS",
    "EXTRAPOLATION_POLICIES",
    "Spectra",
    "grid",
    "is_uniform",
    "resampling_matrix",
    "band_matrix",
    "coarsening_method",
    "resample_values",
    "check_wavelengths",
]

KINDS = ("reflectance", "transmittance", "emission", "sensitivity")
Kind = Literal["reflectance", "transmittance", "emission", "sensitivity"]

INTERPOLATION_METHODS = ("auto", "sprague", "cubic-spline", "linear", "band")
EXTRAPOLATION_POLICIES = ("none", "constant", "zero")

#: Relative tolerance on the step for calling a grid uniform.
_UNIFORM_RTOL = 1e-9


def grid(start: float, stop: float, step: float) -> np.ndarray:
    """Return the uniform wavelength grid ``start, start+step, ..., stop`` in nm.

    ``stop`` is included; ``(stop - start)`` must be a whole number of steps.

    >>> grid(400, 420, 10).tolist()
    [400.0, 410.0, 420.0]
    """
    if not step > 0:
        raise WorkbenchError(f"grid step must be > 0 nm (got {step})")
    check_step(start, stop, step)
    n = (stop - start) / step
    if n < 1 or abs(n - round(n)) > 1e-9:
        raise WorkbenchError(
            f"grid {start}-{stop} nm is not a whole number of {step} nm steps"
        )
    return start + step * np.arange(round(n) + 1, dtype=float)


def is_uniform(wavelengths: np.ndarray) -> bool:
    """True when the wavelengths are equally spaced (to 1e-9 of the step)."""
    wl = np.asarray(wavelengths, dtype=float)
    if wl.size < 2:
        return False
    d = np.diff(wl)
    return bool(np.all(np.abs(d - d[0]) <= _UNIFORM_RTOL * abs(d[0]) + 1e-12))


def check_wavelengths(wavelengths, *, what: str = "wavelengths", min_points: int = 3) -> np.ndarray:
    """Return the wavelengths as a float array, or raise naming the fault."""
    wl = np.asarray(wavelengths, dtype=float)
    if wl.ndim != 1:
        raise WorkbenchError(f"{what} must be a 1-D vector in nm (got shape {wl.shape})")
    if wl.size < min_points:
        raise WorkbenchError(f"{what} must hold at least {min_points} points (got {wl.size})")
    if not np.all(np.isfinite(wl)):
        raise WorkbenchError(f"{what} must be finite numbers in nm")
    check_count(wl.size, "bands", "wavelengths", where=what)
    d = np.diff(wl)
    if np.any(d <= 0):
        i = int(np.argmax(d <= 0))
        raise WorkbenchError(
            f"{what} must be strictly increasing (got {wl[i]:g} then {wl[i + 1]:g} nm "
            f"at positions {i + 1}-{i + 2})"
        )
    return wl


def format_range(wl: np.ndarray) -> str:
    """A grid as text: '380-780 nm at 5 nm' (uniform) or its first and last wavelength and count."""
    if is_uniform(wl):
        return f"{wl[0]:g}-{wl[-1]:g} nm at {wl[1] - wl[0]:g} nm"
    return f"{wl[0]:g}-{wl[-1]:g} nm ({wl.size} points, non-uniform)"


# --------------------------------------------------------------------------
# Resampling operators
# --------------------------------------------------------------------------

def band_matrix(x: np.ndarray, xt: np.ndarray) -> np.ndarray:
    """Rows averaging data on ``x`` over a triangular band-pass at each ``xt`` (m, n).

    The band of ``xt[i]`` rises linearly from ``xt[i-1]`` to 1 at ``xt[i]``
    and falls to 0 at ``xt[i+1]`` (at the ends the neighbouring step is
    mirrored): on a uniform output grid a triangle whose full width at half
    maximum is the step. Each row is ∫ T(λ) f(λ) dλ / ∫ T(λ) dλ for the
    piecewise-linear f through the data, integrated exactly (on each
    interval between data points and triangle knots the product is
    quadratic, so Simpson's rule is exact), over the part of the band the
    data cover.

    References
    ----------
    CIE 167:2005, *Recommended practice for tabulating spectral data for use
    in colour computations* (triangular band-pass of width equal to the
    interval; from memory). ASTM E2729-09, *Standard practice for
    rectification of spectrophotometric bandpass differences*. docs/methods.md §1.
    """
    m = xt.size
    d = np.diff(xt)
    left = np.concatenate([[d[0] if m > 1 else 1.0], d])
    right = np.concatenate([d, [d[-1] if m > 1 else 1.0]])
    M = np.zeros((m, x.size))
    for i in range(m):
        a, c, b = xt[i] - left[i], xt[i], xt[i] + right[i]
        lo, hi = max(a, x[0]), min(b, x[-1])
        if hi <= lo:
            continue
        knots = np.unique(np.concatenate([[lo, hi], x[(x > lo) & (x < hi)], [c] if lo < c < hi else []]))
        p, q = knots[:-1], knots[1:]
        mid = 0.5 * (p + q)

        def tri(t):
            return np.where(t <= c, (t - a) / (c - a), (b - t) / (b - c))

        w = (q - p) / 6.0
        row = (w * tri(p)) @ linear_matrix(x, p) + (4 * w * tri(mid)) @ linear_matrix(x, mid) \
            + (w * tri(q)) @ linear_matrix(x, q)
        M[i] = row / row.sum()
    return M


def coarsening_method(wavelengths, target, preference: str = "interpolation") -> str:
    """``'band'`` when ``preference`` is ``'band'`` and the data are at least as fine as ``target``, else ``'auto'``.

    A design (``[grid] resampling = "band"``) asks for band averaging; data
    coarser than the grid can only be interpolated.
    """
    if preference != "band":
        return "auto"
    x = np.asarray(wavelengths, dtype=float)
    xt = np.asarray(target, dtype=float)
    if x.size < 2 or xt.size < 2:
        return "auto"
    return "band" if np.max(np.diff(x)) <= np.min(np.diff(xt)) + 1e-9 else "auto"


@lru_cache(maxsize=256)
def _cached_matrix(x_key: bytes, xt_key: bytes, method: str, extrapolation: str):
    x = np.frombuffer(x_key, dtype=float)
    xt = np.frombuffer(xt_key, dtype=float)
    inside = (xt >= x[0] - 1e-9) & (xt <= x[-1] + 1e-9)
    xi = np.clip(xt, x[0], x[-1])
    if method == "band":
        M = band_matrix(x, xt)
    elif method == "sprague":
        M = sprague_matrix(x, xi)
    elif method == "cubic-spline":
        M = spline_matrix(x, xi)
    else:
        M = linear_matrix(x, xi)
    # Exact nodes reproduce the data exactly (guards against rounding).
    idx = np.searchsorted(x, xt)
    exact = (idx < x.size) & (np.abs(x[np.minimum(idx, x.size - 1)] - xt) <= 1e-9)
    for r in np.flatnonzero(exact & (method != "band")):
        M[r] = 0.0
        M[r, idx[r]] = 1.0
    if extrapolation == "zero":
        M[~inside] = 0.0
    elif extrapolation == "constant":
        below = xt < x[0]
        above = xt > x[-1]
        M[below] = 0.0
        M[below, 0] = 1.0
        M[above] = 0.0
        M[above, -1] = 1.0
    M.setflags(write=False)
    return M


def resampling_matrix(
    wavelengths,
    target,
    *,
    method: str = "auto",
    extrapolation: str = "none",
) -> tuple[np.ndarray, str]:
    """Return the matrix ``M`` with ``values @ M.T`` resampled, and the method used.

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
        Source grid, strictly increasing.
    target : (m,) array_like, nm
        Target grid, strictly increasing.
    method : {'auto', 'sprague', 'cubic-spline', 'linear', 'band'}
        ``'auto'`` chooses Sprague for uniform data with at least 6 points and
        a not-a-knot cubic spline otherwise (CIE 167:2005). ``'band'``
        averages over each output band with a triangular band-pass
        (:func:`band_matrix`), for coarsening a finely sampled export: it
        keeps the energy in each band where point sampling would alias
        narrow lines.
    extrapolation : {'none', 'constant', 'zero'}
        ``'none'`` raises :class:`RangeCoverageError` when the target reaches
        outside the source; ``'constant'`` repeats the end values (CIE
        167:2005); ``'zero'`` sets them to 0 (for a filter, only when asked).

    Returns
    -------
    M : (m, n) ndarray, read-only
    method : str
        The method actually used (``'auto'`` resolved).

    References
    ----------
    Sprague, T. B. (1880). Explanation of a new formula for interpolation.
    *J. Inst. Actuaries* 22, 270-285.
    CIE 167:2005, *Recommended practice for tabulating spectral data for use
    in colour computations*.
    docs/methods.md §1.
    """
    x = check_wavelengths(wavelengths, what="source wavelengths")
    xt = check_wavelengths(target, what="target wavelengths", min_points=1)
    if method not in INTERPOLATION_METHODS:
        raise WorkbenchError(
            f"method must be one of {', '.join(INTERPOLATION_METHODS)} (got {method!r})"
        )
    if extrapolation not in EXTRAPOLATION_POLICIES:
        raise WorkbenchError(
            f"extrapolation must be one of {', '.join(EXTRAPOLATION_POLICIES)} "
            f"(got {extrapolation!r})"
        )
    if method == "auto":
        method = "sprague" if (is_uniform(x) and x.size >= 6) else "cubic-spline"
    if method == "sprague":
        if not is_uniform(x):
            raise WorkbenchError(
                "Sprague interpolation needs uniformly spaced data (CIE 167); "
                "use method='cubic-spline' for non-uniform data"
            )
        if x.size < 6:
            raise WorkbenchError(
                f"Sprague interpolation needs at least 6 points (got {x.size}); "
                "use method='linear'"
            )
    if method == "band" and xt.size > 1 and np.max(np.diff(x)) > np.min(np.diff(xt)) + 1e-9:
        raise WorkbenchError(
            f"band averaging is for coarsening: the output step ({np.min(np.diff(xt)):g} nm) must be at "
            f"least the data's ({np.max(np.diff(x)):g} nm); use interpolation (method='auto')")
    if extrapolation == "none" and (xt[0] < x[0] - 1e-9 or xt[-1] > x[-1] + 1e-9):
        raise RangeCoverageError(
            f"data cover {x[0]:g}-{x[-1]:g} nm but {xt[0]:g}-{xt[-1]:g} nm is needed; "
            "allow extrapolation (extrapolation='constant', CIE 167) to extend them"
        )
    M = _cached_matrix(x.tobytes(), xt.tobytes(), method, extrapolation)
    return M, method


def resample_values(values, wavelengths, target, *, method="auto", extrapolation="none"):
    """Resample ``values`` (..., n) from ``wavelengths`` onto ``target``.

    Returns ``(values, method_used)``; see :func:`resampling_matrix`.

    References
    ----------
    Sprague, T. B. (1880). Explanation of a new formula for interpolation.
    *J. Inst. Actuaries* 22, 270-285.
    CIE 167:2005, *Recommended practice for tabulating spectral data for use
    in colour computations*.
    docs/methods.md §1.

    Examples
    --------
    >>> x = grid(500, 600, 20)
    >>> y = [0.0651, 0.0705, 0.0772, 0.0870, 0.1128, 0.1360]
    >>> v, used = resample_values(y, x, [501.0, 502.0])
    >>> used, v.round(6).tolist()  # 0.0653522, 0.0656105 in colour-science's SpragueInterpolator docs
    ('sprague', [0.065352, 0.065611])
    """
    M, used = resampling_matrix(wavelengths, target, method=method, extrapolation=extrapolation)
    v = np.asarray(values, dtype=float)
    return v @ M.T, used


_METHOD_SOURCE = {
    "sprague": "Sprague interpolation (CIE 167:2005)",
    "cubic-spline": "not-a-knot cubic spline (CIE 167:2005, non-uniform data)",
    "linear": "linear interpolation",
    "band": ("averaging over each output band with a triangular band-pass from the previous to the "
             "next output wavelength (FWHM = the step; CIE 167:2005, ASTM E2729-style)"),
}


# --------------------------------------------------------------------------
# The model
# --------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Spectra:
    """A set of spectra on one wavelength grid.

    Parameters
    ----------
    wavelengths : (n,) array_like, nm
        Strictly increasing, at least 3 points.
    values : (..., n) array_like
        One spectrum per leading index. Reflectance and transmittance are
        fractions 0-1 (never percent: readers convert and say so).
    names : sequence of str, optional
        One per spectrum (``prod(values.shape[:-1])`` of them), unique.
        Defaults to ``s1, s2, ...``.
    kind : {'reflectance', 'transmittance', 'emission', 'sensitivity'}
    units : str
        ``'1'`` for fractions; for emission e.g. ``'W·m⁻²·nm⁻¹'`` or
        ``'relative'``; for sensitivity ``'relative'`` or ``'A/W'``.
    notes : tuple of str
        What was done to the numbers on the way here (read, converted,
        resampled, extrapolated), oldest first.
    source : str, optional
        File the data came from.
    """

    wavelengths: np.ndarray
    values: np.ndarray
    names: tuple[str, ...] = ()
    kind: str = "reflectance"
    units: str = "1"
    notes: tuple[str, ...] = field(default=())
    source: str | None = None

    def __post_init__(self) -> None:
        wl = check_wavelengths(self.wavelengths)
        v = np.asarray(self.values, dtype=float)
        if v.ndim == 0 or v.shape[-1] != wl.size:
            raise WorkbenchError(
                f"values must be shaped (..., {wl.size}) to match the wavelengths "
                f"(got {v.shape})"
            )
        if self.kind not in KINDS:
            raise WorkbenchError(f"kind must be one of {', '.join(KINDS)} (got {self.kind!r})")
        count = int(np.prod(v.shape[:-1], dtype=int))
        names = tuple(self.names) if self.names else tuple(f"s{i + 1}" for i in range(count))
        if len(names) != count:
            raise WorkbenchError(f"names must hold {count} entries, one per spectrum (got {len(names)})")
        if len(set(names)) != len(names):
            dup = next(n for n in names if names.count(n) > 1)
            raise WorkbenchError(f"names must be unique (got {dup!r} twice)")
        wl = wl.copy()
        v = v.copy()
        wl.setflags(write=False)
        v.setflags(write=False)
        object.__setattr__(self, "wavelengths", wl)
        object.__setattr__(self, "values", v)
        object.__setattr__(self, "names", names)
        object.__setattr__(self, "notes", tuple(self.notes))

    # -- basic facts ------------------------------------------------------
    def __len__(self) -> int:
        return len(self.names)

    @property
    def shape(self) -> tuple[int, ...]:
        return self.values.shape

    @property
    def uniform(self) -> bool:
        return is_uniform(self.wavelengths)

    @property
    def step(self) -> float | None:
        """The wavelength step in nm, or None when the grid is not uniform."""
        return float(self.wavelengths[1] - self.wavelengths[0]) if self.uniform else None

    def describe_grid(self) -> str:
        """``'380-780 nm at 5 nm'`` or ``'... (n points, non-uniform)'``."""
        return format_range(self.wavelengths)

    def __repr__(self) -> str:
        return (
            f"Spectra({len(self)} {self.kind} spectra, {self.describe_grid()}, "
            f"units {self.units!r})"
        )

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Spectra):
            return NotImplemented
        return (
            np.array_equal(self.wavelengths, other.wavelengths)
            and np.array_equal(self.values, other.values)
            and self.names == other.names
            and self.kind == other.kind
            and self.units == other.units
        )

    __hash__ = None  # type: ignore[assignment]

    # -- selection -----------------------------------------------------------
    def flat(self) -> np.ndarray:
        """Values as (count, n) — a view."""
        return self.values.reshape(-1, self.wavelengths.size)

    def __getitem__(self, name: str) -> np.ndarray:
        """The values of the spectrum called ``name`` as an (n,) array."""
        try:
            i = self.names.index(name)
        except ValueError:
            raise WorkbenchError(
                f"no spectrum named {name!r} (have {', '.join(self.names[:8])}"
                f"{', ...' if len(self.names) > 8 else ''})"
            ) from None
        return self.flat()[i]

    def select(self, names) -> "Spectra":
        """A new set holding only ``names``, in that order."""
        rows = np.stack([self[n] for n in names])
        return replace(self, values=rows, names=tuple(names))

    def with_note(self, note: str) -> "Spectra":
        return replace(self, notes=self.notes + (note,))

    # -- resampling ---------------------------------------------------------
    def resample(
        self,
        target,
        *,
        method: str = "auto",
        extrapolation: str = "none",
    ) -> "Spectra":
        """Return the spectra on the ``target`` grid (nm).

        See :func:`resampling_matrix` for ``method`` and ``extrapolation``.
        The note added says which method was used and which part, if any,
        was extrapolated.

        Examples
        --------
        >>> s = Spectra(grid(400, 700, 10), np.linspace(0.2, 0.8, 31))
        >>> r = s.resample(grid(400, 700, 5))
        >>> round(float(r.values[1]), 6)
        0.21
        >>> r.notes[-1]
        'resampled 400-700 nm at 10 nm -> 400-700 nm at 5 nm by Sprague interpolation (CIE 167:2005)'
        """
        xt = check_wavelengths(target, what="target wavelengths", min_points=1)
        if extrapolation == "zero" and self.kind not in ("transmittance", "sensitivity"):
            raise WorkbenchError(
                f"zero extrapolation is for filters and sensitivities only (these are {self.kind})"
            )
        if np.array_equal(xt, self.wavelengths):
            return self
        M, used = resampling_matrix(self.wavelengths, xt, method=method, extrapolation=extrapolation)
        values = self.values @ M.T
        note = (
            f"resampled {self.describe_grid()} -> {format_range(xt)} by {_METHOD_SOURCE[used]}"
        )
        lo, hi = self.wavelengths[0], self.wavelengths[-1]
        ext = []
        if xt[0] < lo - 1e-9:
            ext.append(f"{xt[0]:g}-{lo:g} nm")
        if xt[-1] > hi + 1e-9:
            ext.append(f"{hi:g}-{xt[-1]:g} nm")
        if ext:
            how = "with the end values (constant, CIE 167:2005)" if extrapolation == "constant" else "as zero"
            note += f"; extrapolated {' and '.join(ext)} {how}"
        return replace(self, wavelengths=xt, values=values, notes=self.notes + (note,))

    def restrict(self, start: float, stop: float) -> "Spectra":
        """Keep only the points with ``start <= λ <= stop`` (no interpolation)."""
        keep = (self.wavelengths >= start - 1e-9) & (self.wavelengths <= stop + 1e-9)
        if keep.all():
            return self
        if keep.sum() < 3:
            raise RangeCoverageError(
                f"fewer than 3 points of {self.describe_grid()} lie in {start:g}-{stop:g} nm"
            )
        wl = self.wavelengths[keep]
        return replace(
            self,
            wavelengths=wl,
            values=self.values[..., keep],
            notes=self.notes + (f"kept {format_range(wl)} of {self.describe_grid()}",),
        )

    def covers(self, start: float, stop: float) -> bool:
        return bool(self.wavelengths[0] <= start + 1e-9 and self.wavelengths[-1] >= stop - 1e-9)
