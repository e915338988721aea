"""The shape of a dichroic edge: its 50 % point, its ripple, and whether its transition is monotone.

A refined stack can ripple through its transition, so "the first 50 %
crossing after the peak" may sit on a ripple. :func:`edge_transition`
states the rule instead (docs/methods.md §15, "Edges and ripple"):

- the **main reflection band** is the run of R ≥ 50 % with the largest
  area ∫R dλ in the window (the fundamental band, not a ripple lobe);
- the **transition** runs, towards the pass band, from where R last
  stands at or above ``high_level`` (90 %) in the main band to where it
  first falls to ``low_level`` (10 %) or below after its last return to
  50 % or more within half the main band's width of its edge (so a ripple
  lobe back above 50 % belongs to the transition, while a higher-order
  band farther away is left to the pass band, where it shows as its
  largest R);
- the **edge** is the 50 % crossing inside the transition; it is given
  only when there is exactly one; with several (a ripple that goes back
  above 50 %) the report lists every crossing and their span and gives no
  single edge;
- the **transition reversal** is the largest rise of R against the
  direction of the transition (the largest R_j − min_{i ≤ j} R_i going
  from the band to the pass band), in percent; a transition is
  **monotone** when it has one crossing and its reversal is at most
  ``monotone_tolerance``;
- the **pass band** is a stated band: by default from one transition width
  beyond the transition's end (so the tail of a smooth edge is not counted
  as ripple) to the end of the window; its **ripple** is max R − min R
  over it, in percent (peak-to-peak).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from workbench.errors import WorkbenchError
from workbench.optics.thinfilm import half_points, stack_response

__all__ = ["EdgeTransition", "band_sides", "edge_transition", "face_edges", "stop_band_edges"]

#: The side a face reflects (the pass band lies on the other side).
_SIDES = ("short", "long")


@dataclass(frozen=True)
class EdgeTransition:
    """Results of :func:`edge_transition` (wavelengths in nm, ripples in percent of reflectance).

    Attributes
    ----------
    reflects : str
        ``'short'`` or ``'long'``: the side of the main reflection band.
    edge_nm : float, nm
        The single 50 % crossing of the transition; NaN when there is none
        (no band, or the band runs off the window) or several.
    crossings_nm : tuple of float, nm
        Every 50 % crossing inside the transition, in wavelength order.
    band_edge_nm : float, nm
        The crossing that bounds the main reflection band on its pass-band
        side (equal to ``edge_nm`` when that exists; on a rippled
        transition it may sit on a ripple: read ``monotone``).
    transition_nm : (float, float), nm
        Where the transition starts (R at ``high_level``) and ends (R at
        ``low_level``), in wavelength order; NaN when not found.
    reversal_pct : float, %
        The largest rise of R against the transition's direction.
    monotone : bool
        One crossing and ``reversal_pct`` ≤ the tolerance.
    pass_band_nm : (float, float), nm
        The band the pass-band ripple is measured over (NaN when empty).
    pass_ripple_pct : float, %
        Peak-to-peak (max − min) of R over ``pass_band_nm``.
    pass_max_pct : float, %
        The largest R in ``pass_band_nm``.
    problem : str
        ``''`` or one line saying why no edge was found.
    """

    reflects: str
    edge_nm: float
    crossings_nm: tuple
    band_edge_nm: float
    transition_nm: tuple
    reversal_pct: float
    monotone: bool
    pass_band_nm: tuple
    pass_ripple_pct: float
    pass_max_pct: float
    problem: str = ""

    @property
    def span_nm(self) -> tuple:
        """First and last 50 % crossing (equal for a single crossing; NaN without one)."""
        if not self.crossings_nm:
            return (math.nan, math.nan)
        return (self.crossings_nm[0], self.crossings_nm[-1])

    def describe(self, digits: int = 1) -> str:
        """The edge in a few words: ``'478.2 nm'`` or ``'non-monotone: 3 crossings 457.9-468.0 nm'``."""
        if self.problem:
            return self.problem
        if len(self.crossings_nm) == 1:
            text = f"{self.edge_nm:.{digits}f} nm"
            return text if self.monotone else f"{text} (non-monotone, reversal {self.reversal_pct:.1f} %)"
        a, b = self.span_nm
        return (f"non-monotone: {len(self.crossings_nm)} crossings of 50 % at {a:.{digits}f}-{b:.{digits}f} nm "
                f"(reversal {self.reversal_pct:.1f} %)")

    def short_text(self, digits: int = 1) -> str:
        """The edge for a table cell: ``'478.2'``; ``'457.9–468.0*'`` for several crossings; ``*`` when not monotone; ``-`` without one."""
        if self.problem or not self.crossings_nm:
            return "-"
        a, b = self.span_nm
        text = f"{a:.{digits}f}" if len(self.crossings_nm) == 1 else f"{a:.{digits}f}–{b:.{digits}f}"
        return text if self.monotone else text + "*"

    def to_dict(self) -> dict:
        """Plain numbers for JSON (NaN as None)."""
        def num(x):
            return None if not np.isfinite(x) else round(float(x), 3)

        return {"edge_nm": num(self.edge_nm), "crossings_nm": [num(x) for x in self.crossings_nm],
                "band_edge_nm": num(self.band_edge_nm),
                "monotone": bool(self.monotone), "transition_nm": [num(x) for x in self.transition_nm],
                "reversal_pct": num(self.reversal_pct), "pass_band_nm": [num(x) for x in self.pass_band_nm],
                "pass_ripple_pct": num(self.pass_ripple_pct), "pass_max_pct": num(self.pass_max_pct),
                "problem": self.problem or None}


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Inclusive index ranges of the True runs of a boolean array."""
    edges = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    starts, stops = np.nonzero(edges == 1)[0], np.nonzero(edges == -1)[0] - 1
    return list(zip(starts.tolist(), stops.tolist()))


def edge_transition(wavelengths_nm, reflectance, *, reflects: str, high_level: float = 0.9,
                    low_level: float = 0.1, monotone_tolerance: float = 0.01,
                    pass_band_nm=None) -> EdgeTransition:
    """The edge of a reflection band, its transition's ripple and the pass band's ripple.

    Parameters
    ----------
    wavelengths_nm : (n_λ,) array_like, nm
        Increasing; the window the band, transition and pass band are looked for in.
    reflectance : (n_λ,) array_like, fraction 0-1
    reflects : {'short', 'long'}
        The side the face reflects: ``'short'`` puts the pass band on the
        long-wave side of the main band, ``'long'`` on the short-wave side.
    high_level, low_level : float, fraction 0-1
        The reflectances that bound the transition (default 0.9 and 0.1).
    monotone_tolerance : float, fraction 0-1
        The largest reversal still counted monotone (default 0.01: 1 %).
    pass_band_nm : (float, float), nm, optional
        The band the pass-band ripple is measured over; default from one
        transition width beyond the transition's end to the window's end.

    Returns
    -------
    EdgeTransition

    Raises
    ------
    WorkbenchError
        A bad side, levels out of order, mismatched arrays.
    """
    if reflects not in _SIDES:
        raise WorkbenchError(f"'reflects' must be one of {', '.join(_SIDES)} (got {reflects!r})")
    if not 0.0 < low_level < 0.5 < high_level < 1.0:
        raise WorkbenchError(f"'low_level' and 'high_level' must satisfy 0 < low < 0.5 < high < 1 "
                             f"(got {low_level!r}, {high_level!r})")
    wl = np.asarray(wavelengths_nm, dtype=float)
    R = np.asarray(reflectance, dtype=float)
    if wl.ndim != 1 or R.shape != wl.shape or wl.size < 3:
        raise WorkbenchError(f"'reflectance' must have one value per wavelength, at least 3 (got {R.shape} "
                             f"for {wl.shape})")
    if not (np.all(np.isfinite(R)) and np.all(np.diff(wl) > 0)):
        raise WorkbenchError("'wavelengths_nm' must increase and 'reflectance' be finite")
    nan2 = (math.nan, math.nan)

    def empty(problem):
        return EdgeTransition(reflects, math.nan, (), math.nan, nan2, math.nan, False, nan2,
                              math.nan, math.nan, problem)

    # orient so that the pass band lies towards increasing index
    x, y = (wl, R) if reflects == "short" else (wl[::-1], R[::-1])
    runs = _runs(y >= 0.5)
    if not runs:
        return empty("no reflection band (R < 50 % everywhere)")
    areas = [np.trapezoid(y[a:b + 1], x[a:b + 1]) if b > a else 0.0 for a, b in runs]
    start, stop = runs[int(np.argmax(np.abs(areas)))]
    if stop == y.size - 1:
        return empty("the reflection band runs off the window on its pass-band side")
    band = y[start:stop + 1]
    high = np.nonzero(band >= high_level)[0]
    a = start + (int(high[-1]) if high.size else int(np.argmax(band)))
    # the last return above 50 % within half the main band's width of its edge (farther: another band)
    reach = 0.5 * abs(x[stop] - x[start])
    near = np.nonzero((y[stop:] >= 0.5) & (np.abs(x[stop:] - x[stop]) <= reach))[0]
    last_up = stop + int(near[-1])
    low = np.nonzero(y[last_up + 1:] <= low_level)[0]
    e = last_up + 1 + int(low[0]) if low.size else y.size - 1
    crossings = sorted(c for c, _ in half_points(x[a:e + 1], y[a:e + 1], 0.5))
    seg = y[a:e + 1]
    reversal = float(np.max(seg - np.minimum.accumulate(seg))) if seg.size else 0.0
    monotone = len(crossings) == 1 and reversal <= monotone_tolerance
    transition = tuple(sorted((float(x[a]), float(x[e]))))
    if not low.size:
        transition = (transition[0], math.nan) if reflects == "short" else (math.nan, transition[1])
    edge = crossings[0] if len(crossings) == 1 else math.nan
    band_edge = min(crossings) if reflects == "short" else max(crossings)
    # the pass band
    if pass_band_nm is not None:
        lo_nm, hi_nm = sorted(float(v) for v in pass_band_nm)
    elif low.size:
        width = abs(x[e] - x[a])
        lo_nm, hi_nm = sorted((float(x[e] + (width if reflects == "short" else -width)), float(x[-1])))
    else:
        lo_nm = hi_nm = math.nan
    inside = (wl >= lo_nm) & (wl <= hi_nm)
    if inside.any():
        ripple, top = float(np.ptp(R[inside])), float(R[inside].max())
        band_nm = (lo_nm, hi_nm)
    else:
        ripple, top, band_nm = math.nan, math.nan, nan2
    return EdgeTransition(reflects, float(edge), tuple(float(c) for c in crossings), float(band_edge), transition,
                          100.0 * reversal, bool(monotone), band_nm, 100.0 * ripple, 100.0 * top)


def band_sides(wavelengths_nm, reflectance, **options) -> dict:
    """Both sides of the main reflection band, each by the rule of :func:`edge_transition`.

    For a stack whose reflecting side is not known (a layer table on its
    own): the short-wave side is the transition towards a pass band at
    shorter wavelengths (``reflects='long'``), the long-wave side the one
    towards longer wavelengths (``reflects='short'``); both look at the
    same main band (the run of R ≥ 50 % with the largest area).

    Parameters
    ----------
    wavelengths_nm : (n_λ,) array_like, nm
    reflectance : (n_λ,) array_like, fraction 0-1
    **options
        Passed to :func:`edge_transition` (levels, tolerance; not ``pass_band_nm``).

    Returns
    -------
    dict
        ``{'short_wave': EdgeTransition, 'long_wave': EdgeTransition}``.
    """
    return {"short_wave": edge_transition(wavelengths_nm, reflectance, reflects="long", **options),
            "long_wave": edge_transition(wavelengths_nm, reflectance, reflects="short", **options)}


def stop_band_edges(wavelengths_nm, reflectance) -> tuple[float, float]:
    """The 50 % crossings that bound the main reflection band, short- and long-wave side, nm.

    Each is :attr:`EdgeTransition.band_edge_nm` of :func:`band_sides`: the
    single edge where the transition is monotone; on a rippled transition
    the crossing next to the band (read :func:`band_sides` for the flags).

    Returns
    -------
    (float, float), nm
        NaN on a side where the band runs off the grid (or there is no band).
    """
    sides = band_sides(wavelengths_nm, reflectance)
    return float(sides["short_wave"].band_edge_nm), float(sides["long_wave"].band_edge_nm)


def face_edges(recipe, *, reflects: str, window_nm, step_nm: float = 0.05, offsets_deg=(-5.0, 0.0, 5.0)) -> list[dict]:
    """A recipe's edge, transition and pass band for s, p and their mean, chief ray, at its angle and ± offsets.

    Parameters
    ----------
    recipe : workbench.analysis.recipe.Recipe
    reflects : {'short', 'long'}
    window_nm : (float, float), nm
        The wavelengths looked at (clipped to the materials' ranges); the
        pass band runs to its end.
    step_nm : float, nm
    offsets_deg : sequence of float, degrees
        Angles relative to the recipe's own (negative ones stop at 0°).

    Returns
    -------
    list of (float, dict)
        One per angle, in increasing angle: the angle (degrees) and the
        :class:`EdgeTransition` of ``'s'``, ``'p'`` and ``'mean'``.
    """
    lo, hi = float(window_nm[0]), float(window_nm[1])
    for m in list(recipe.materials.values()) + [recipe.incident, recipe.substrate]:
        if m.range_nm is not None:
            lo, hi = max(lo, m.range_nm[0]), min(hi, m.range_nm[1])
    wl = np.arange(lo, hi + step_nm / 2, step_nm)
    angles = sorted({max(0.0, recipe.aoi_deg + float(o)) for o in offsets_deg})
    res = stack_response(recipe.indices(wl), recipe.thicknesses_nm, wl, angles,
                         incident=recipe.incident.index(wl).real, substrate=recipe.substrate.index(wl))
    return [(a, {name: edge_transition(wl, R, reflects=reflects)
                 for name, R in (("s", res.R[0, ia]), ("p", res.R[1, ia]), ("mean", res.R_mean[ia]))})
            for ia, a in enumerate(angles)]
