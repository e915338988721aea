"""Gamut triangles: area and coverage in the CIE 1931 xy and CIE 1976 u′v′ diagrams.

Area is the triangle's area in the chosen diagram (plain chromaticity units
squared); coverage of a standard set is the area of the intersection of the
two triangles divided by the standard's area (0-1; 1 = the standard's
triangle lies wholly inside). Areas in u′v′ are closer to perceived
differences than in xy (CIE 15:2004 § 8.1), so the two can rank sets
differently.

The intersection is found by Sutherland-Hodgman clipping of one convex
polygon by another and the shoelace formula for the area.

References
----------
Sutherland, I. E., & Hodgman, G. W. (1974). Reentrant polygon clipping.
*Communications of the ACM*, 17(1), 32-42. doi:10.1145/360767.360802
CIE 15:2004, *Colorimetry*, §§ 7.3, 8.1.
"""

from __future__ import annotations

import numpy as np

from workbench.colorimetry.coordinates import xy_to_uv_prime
from workbench.errors import WorkbenchError
from workbench.colorimetry.primaries import PRIMARIES, Primaries

__all__ = [
    "DIAGRAMS",
    "polygon_area",
    "clip_polygon_sutherland_hodgman",
    "gamut_vertices",
    "gamut_area",
    "gamut_coverage",
    "coverage_of_named_sets",
]

DIAGRAMS = ("xy", "uv")


def polygon_area(vertices) -> float:
    """Area of a simple polygon (k, 2) by the shoelace formula (absolute value).

    >>> polygon_area([[0, 0], [1, 0], [0, 1]])
    0.5
    """
    v = np.asarray(vertices, dtype=float)
    if v.ndim != 2 or v.shape[1] != 2:
        raise WorkbenchError(f"vertices must be shaped (k, 2) (got {v.shape})")
    if len(v) < 3:
        return 0.0
    x, y = v[:, 0], v[:, 1]
    return float(abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))) / 2)


def _signed_area(v: np.ndarray) -> float:
    x, y = v[:, 0], v[:, 1]
    return float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))) / 2


def clip_polygon_sutherland_hodgman(subject, clip) -> np.ndarray:
    """The part of polygon ``subject`` (k, 2) inside the convex polygon ``clip`` (m, 2).

    Returns the intersection's vertices (j, 2), possibly empty (0, 2).
    Either orientation is accepted; ``clip`` must be convex (a triangle is).

    References
    ----------
    Sutherland, I. E. & Hodgman, G. W. (1974). Reentrant polygon clipping.
    *Comm. ACM* 17(1), 32-42.
    CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7.3, 8.1.
    docs/methods.md §5.
    """
    out = np.asarray(subject, dtype=float)
    c = np.asarray(clip, dtype=float)
    if c.ndim != 2 or c.shape[1] != 2 or len(c) < 3:
        raise WorkbenchError(f"clip polygon must be shaped (m >= 3, 2) (got {c.shape})")
    if _signed_area(c) < 0:
        c = c[::-1]
    for a, b in zip(c, np.roll(c, -1, axis=0)):
        if len(out) == 0:
            break
        edge = b - a

        def inside(p):
            return edge[0] * (p[1] - a[1]) - edge[1] * (p[0] - a[0]) >= -1e-15

        def cross(p, q):
            d = q - p
            den = edge[0] * d[1] - edge[1] * d[0]
            t = (edge[1] * (p[0] - a[0]) - edge[0] * (p[1] - a[1])) / den
            return p + t * d

        pts = []
        prev = out[-1]
        for cur in out:
            if inside(cur):
                if not inside(prev):
                    pts.append(cross(prev, cur))
                pts.append(cur)
            elif inside(prev):
                pts.append(cross(prev, cur))
            prev = cur
        out = np.array(pts, dtype=float).reshape(-1, 2)
    return out


def _diagram(diagram: str) -> str:
    d = str(diagram).strip().lower().replace("′", "").replace("'", "")
    if d not in DIAGRAMS:
        raise WorkbenchError(f"diagram must be xy or uv (CIE 1976 u′v′) (got {diagram!r})")
    return d


def gamut_vertices(primaries: Primaries, diagram: str = "xy") -> np.ndarray:
    """The triangle's vertices (3, 2) in xy or u′v′."""
    d = _diagram(diagram)
    return primaries.xy.copy() if d == "xy" else xy_to_uv_prime(primaries.xy)


def gamut_area(primaries: Primaries, diagram: str = "xy") -> float:
    """Area of the primaries' triangle in the xy or u′v′ diagram (chromaticity units²).

    References
    ----------
    Sutherland, I. E. & Hodgman, G. W. (1974). Reentrant polygon clipping.
    *Comm. ACM* 17(1), 32-42.
    CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7.3, 8.1.
    docs/methods.md §5.

    Examples
    --------
    >>> round(gamut_area(PRIMARIES["ITU-R BT.709"], "xy"), 5)  # from the BT.709-6 chromaticities
    0.11205
    """
    return polygon_area(gamut_vertices(primaries, diagram))


def gamut_coverage(primaries: Primaries, reference: Primaries, diagram: str = "xy") -> float:
    """Fraction (0-1) of ``reference``'s triangle that ``primaries``' triangle covers.

    coverage = area(T_primaries ∩ T_reference) / area(T_reference), in the
    chosen diagram.

    References
    ----------
    Sutherland, I. E. & Hodgman, G. W. (1974). Reentrant polygon clipping.
    *Comm. ACM* 17(1), 32-42.
    CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7.3, 8.1.
    docs/methods.md §5.
    """
    d = _diagram(diagram)
    ref = gamut_vertices(reference, d)
    area_ref = polygon_area(ref)
    if area_ref == 0:
        raise WorkbenchError(f"reference {reference.name} has a zero-area triangle")
    inter = clip_polygon_sutherland_hodgman(ref, gamut_vertices(primaries, d))
    return polygon_area(inter) / area_ref


def coverage_of_named_sets(primaries: Primaries) -> dict[str, dict[str, float]]:
    """``{set name: {'xy': coverage, 'uv': coverage}}`` for every named set.

    References
    ----------
    Sutherland, I. E. & Hodgman, G. W. (1974). Reentrant polygon clipping.
    *Comm. ACM* 17(1), 32-42.
    CIE 15:2004, *Colorimetry*, 3rd ed., §§ 7.3, 8.1.
    docs/methods.md §5.
    """
    return {
        name: {d: gamut_coverage(primaries, ref, d) for d in DIAGRAMS}
        for name, ref in PRIMARIES.items()
    }
