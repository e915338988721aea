"""Physical plausibility of spectral values: what is refused, what is accepted with a notice.

One rule for every reader and command (tristimulus, evaluate, fit, light,
render), so the same spectrum is accepted or refused the same way
everywhere. Nothing is clipped or otherwise repaired: a value is either
used as written (with a notice when it is unusual) or the input is refused
with one line naming the file, the count of offending values and the
worst one.

Reflectance and transmittance (fractions)
    below −0.1: refused (no measurement noise goes that far);
    −0.1 to 0: accepted with a notice (dark noise of a measurement);
    1 to 10: accepted with a notice (fluorescence, a gloss peak, or
    mis-scaled data);
    above 10: refused (no surface returns ten times the light falling on
    it; percent data read as fractions?).
Emission (spectral power) and illuminants
    all values zero or negative, or the largest above 1e15: refused;
    negatives down to −5 % of the peak: accepted with a notice (dark noise
    of a spectrometer); deeper negatives: refused.
Sensitivity
    the largest magnitude above 1e15, or all zero: refused. Negative lobes
    are allowed (colour-matching functions of real primaries have them).
"""

from __future__ import annotations

import numpy as np

from workbench.errors import InputFileError

__all__ = ["check_spectral_values", "REFLECTANCE_RANGE", "EMISSION_NEGATIVE_FRACTION", "MAGNITUDE_LIMIT"]

#: (refused below, refused above) for reflectance and transmittance fractions.
REFLECTANCE_RANGE = (-0.1, 10.0)
#: Negatives of an emission spectrum deeper than this fraction of its peak are refused.
EMISSION_NEGATIVE_FRACTION = 0.05
#: Largest magnitude accepted for any spectral value.
MAGNITUDE_LIMIT = 1e15


def _where(values, wavelengths, names, index) -> str:
    i, j = index
    name = names[i] if names is not None and i < len(names) else f"spectrum {i + 1}"
    wl = f" at {wavelengths[j]:g} nm" if wavelengths is not None else ""
    return f"{name!r}{wl}"


def check_spectral_values(values, *, kind: str, source: str, wavelengths=None, names=None) -> list[str]:
    """Refuse implausible spectral values; return the notices for unusual but accepted ones.

    Parameters
    ----------
    values : (..., n) array_like
        Finite spectral values (reflectance and transmittance as fractions).
    kind : {'reflectance', 'transmittance', 'emission', 'sensitivity'}
    source : str
        The file (or option) the values came from, for messages.
    wavelengths : (n,) array_like, nm, optional
    names : sequence of str, optional

    Returns
    -------
    list of str
        Notices (``<source>: 3 values below 0 …``), empty when all is usual.

    Raises
    ------
    InputFileError
        The values are physically implausible; the message names ``source``,
        the count of offending values and the worst one.
    """
    v = np.asarray(values, dtype=float)
    v2 = v.reshape(-1, v.shape[-1]) if v.ndim else v.reshape(1, 1)
    notes: list[str] = []
    if v2.size == 0:
        return notes
    vmin, vmax = float(v2.min()), float(v2.max())
    if (kind in ("reflectance", "transmittance") and np.isfinite(vmin) and np.isfinite(vmax)
            and 0 <= vmin and vmax <= 1):
        return notes  # two passes over the values settle the common case
    if not (np.isfinite(vmin) and np.isfinite(vmax)) and not np.isfinite(v2).all():
        bad = np.argwhere(~np.isfinite(v2))
        raise InputFileError(f"{bad.shape[0]} values are not finite (the first {float(v2[tuple(bad[0])])!r} in "
                             f"{_where(v2, wavelengths, names, bad[0])}); expected finite numbers", source)
    big = np.abs(v2) > MAGNITUDE_LIMIT if max(-vmin, vmax) > MAGNITUDE_LIMIT else None
    if big is not None and big.any():
        idx = np.unravel_index(np.argmax(np.abs(v2)), v2.shape)
        raise InputFileError(f"{int(big.sum())} values have a magnitude above {MAGNITUDE_LIMIT:g} (the largest "
                             f"{v2[idx]:g} in {_where(v2, wavelengths, names, idx)}); expected measured "
                             "spectral values", source)
    if kind in ("reflectance", "transmittance"):
        lo, hi = REFLECTANCE_RANGE
        for test, word, limit, fn in ((v2 < lo, "below", lo, np.argmin), (v2 > hi, "above", hi, np.argmax)):
            if test.any():
                idx = np.unravel_index(fn(v2), v2.shape)
                raise InputFileError(
                    f"{int(test.sum())} {kind} values {word} {limit:g} (the {'lowest' if word == 'below' else 'largest'} "
                    f"{v2[idx]:g} in {_where(v2, wavelengths, names, idx)}); expected fractions 0-1 "
                    f"(small negatives from measurement noise, {lo:g} to 0, and values up to {hi:g} are "
                    "accepted with a notice)", source)
        neg = v2 < 0
        if neg.any():
            idx = np.unravel_index(np.argmin(v2), v2.shape)
            notes.append(f"{source}: {int(neg.sum())} {kind} values below 0 (the lowest {v2[idx]:.3g} in "
                         f"{_where(v2, wavelengths, names, idx)}) used as written (measurement noise?); "
                         "not clipped")
        over = v2 > 1
        if over.any():
            idx = np.unravel_index(np.argmax(v2), v2.shape)
            notes.append(f"{source}: {int(over.sum())} {kind} values above 1 (the largest {v2[idx]:.3g} in "
                         f"{_where(v2, wavelengths, names, idx)}) used as written (fluorescence, or "
                         "mis-scaled data?)")
    elif kind == "emission":
        peak = v2.max(axis=1)
        for i in np.flatnonzero(peak <= 0):
            name = names[i] if names is not None and i < len(names) else f"spectrum {i + 1}"
            raise InputFileError(f"the spectrum {name!r} is all zero or negative (largest {peak[i]:g}); "
                                 "expected a light with positive spectral power", source)
        if vmin >= 0:
            return notes
        floor = -EMISSION_NEGATIVE_FRACTION * peak[:, None]
        deep = v2 < floor
        if deep.any():
            rel = v2 / peak[:, None]
            idx = np.unravel_index(np.argmin(rel), v2.shape)
            raise InputFileError(
                f"{int(deep.sum())} values below −{100 * EMISSION_NEGATIVE_FRACTION:g} % of the peak (the lowest "
                f"{v2[idx]:g}, {100 * rel[idx]:.1f} % of the peak, in {_where(v2, wavelengths, names, idx)}); "
                "expected spectral power ≥ 0 (small negatives from dark noise are accepted with a notice)",
                source)
        neg = v2 < 0
        if neg.any():
            idx = np.unravel_index(np.argmin(v2), v2.shape)
            notes.append(f"{source}: {int(neg.sum())} values below 0 (the lowest {v2[idx]:.3g} in "
                         f"{_where(v2, wavelengths, names, idx)}) used as written (dark noise of the "
                         "measurement?); not clipped")
    elif kind == "sensitivity":
        zero = ~(np.abs(v2) > 0).any(axis=1)
        for i in np.flatnonzero(zero):
            name = names[i] if names is not None and i < len(names) else f"spectrum {i + 1}"
            raise InputFileError(f"the sensitivity {name!r} is zero everywhere; expected a response", source)
    return notes
