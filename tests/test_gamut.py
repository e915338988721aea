"""Gamut area and coverage in xy and u′v′; Sutherland-Hodgman clipping."""

import colour
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from workbench.errors import WorkbenchError
from workbench.colorimetry.gamut import (
    clip_polygon_sutherland_hodgman,
    coverage_of_named_sets,
    gamut_area,
    gamut_coverage,
    gamut_vertices,
    polygon_area,
)
from workbench.colorimetry.primaries import PRIMARIES


def _inside_fraction(tri_a, tri_b, n=400):
    """Monte-Carlo-free grid estimate of area(A ∩ B) (independent of the clipping code)."""
    from matplotlib.path import Path

    lo = np.minimum(tri_a.min(0), tri_b.min(0))
    hi = np.maximum(tri_a.max(0), tri_b.max(0))
    gx, gy = np.meshgrid(np.linspace(lo[0], hi[0], n), np.linspace(lo[1], hi[1], n))
    pts = np.column_stack([gx.ravel(), gy.ravel()])
    both = Path(tri_a).contains_points(pts) & Path(tri_b).contains_points(pts)
    return both.mean() * np.prod(hi - lo)


class TestArea:
    def test_unit_triangle(self):
        """Shoelace area of the right triangle with unit legs is 1/2 (geometry)."""
        assert polygon_area([[0, 0], [1, 0], [0, 1]]) == 0.5

    def test_orientation(self):
        """Area does not depend on the vertex order."""
        assert polygon_area([[0, 0], [0, 1], [1, 0]]) == 0.5

    def test_bt709_xy(self):
        """BT.709 xy area = ½|det| of its edge vectors (BT.709-6 chromaticities)."""
        p = PRIMARIES["ITU-R BT.709"].xy
        ref = 0.5 * abs(np.linalg.det(np.column_stack([p[1] - p[0], p[2] - p[0]])))
        assert gamut_area(PRIMARIES["ITU-R BT.709"], "xy") == pytest.approx(ref, rel=1e-12)
        assert ref == pytest.approx(0.11205, abs=1e-5)  # computed from the ITU-R BT.709-6 chromaticities (docs/methods.md §5)

    def test_uv_vertices_against_colour(self):
        """u′v′ vertices equal colour.xy_to_Luv_uv (CIE 15:2004 § 8.1, reference library)."""
        p = PRIMARIES["ITU-R BT.2020"]
        np.testing.assert_allclose(gamut_vertices(p, "uv"), colour.xy_to_Luv_uv(p.xy), atol=1e-12)

    def test_rankings_differ_by_diagram(self):
        """u′v′ shrinks the green area relative to xy (CIE 1976 UCS): NTSC/BT.709 ratio falls."""
        n, b = PRIMARIES["NTSC 1953"], PRIMARIES["ITU-R BT.709"]
        assert gamut_area(b, "uv") / gamut_area(n, "uv") > gamut_area(b, "xy") / gamut_area(n, "xy")

    def test_bad_diagram(self):
        """Only xy and uv are diagrams."""
        with pytest.raises(WorkbenchError, match=r"diagram must be xy or uv .* \(got 'Lab'\)"):
            gamut_area(PRIMARIES["ITU-R BT.709"], "Lab")


class TestClipping:
    def test_square_by_triangle(self):
        """Unit square clipped by the triangle (0,0),(2,0),(0,2) keeps all of it (geometry)."""
        sq = [[0, 0], [1, 0], [1, 1], [0, 1]]
        out = clip_polygon_sutherland_hodgman(sq, [[0, 0], [2, 0], [0, 2]])
        assert polygon_area(out) == pytest.approx(1.0)

    def test_half_square(self):
        """Unit square clipped by the triangle (0,0),(1,0),(0,1) leaves area 1/2 (geometry)."""
        out = clip_polygon_sutherland_hodgman([[0, 0], [1, 0], [1, 1], [0, 1]], [[0, 1], [1, 0], [0, 0]])
        assert polygon_area(out) == pytest.approx(0.5)

    def test_disjoint(self):
        """Disjoint triangles have an empty intersection."""
        out = clip_polygon_sutherland_hodgman([[0, 0], [1, 0], [0, 1]], [[5, 5], [6, 5], [5, 6]])
        assert out.shape == (0, 2)

    @settings(max_examples=25, deadline=None)
    @given(st.lists(st.floats(0.0, 1.0), min_size=12, max_size=12))
    def test_against_grid_estimate(self, c):
        """Intersection area agrees with a point-grid estimate and is symmetric."""
        a = np.array(c[:6]).reshape(3, 2)
        b = np.array(c[6:]).reshape(3, 2)
        if polygon_area(a) < 0.02 or polygon_area(b) < 0.02:
            return
        ab = polygon_area(clip_polygon_sutherland_hodgman(a, b))
        ba = polygon_area(clip_polygon_sutherland_hodgman(b, a))
        assert ab == pytest.approx(ba, abs=1e-12)
        assert ab == pytest.approx(_inside_fraction(a, b), abs=0.01)


class TestCoverage:
    def test_self(self):
        """A set covers itself fully."""
        for p in PRIMARIES.values():
            assert gamut_coverage(p, p, "xy") == pytest.approx(1.0)
            assert gamut_coverage(p, p, "uv") == pytest.approx(1.0)

    def test_bt2020_contains_bt709(self):
        """BT.2020 contains BT.709 (ITU-R BT.2020-2 vs BT.709-6 chromaticities)."""
        assert gamut_coverage(PRIMARIES["ITU-R BT.2020"], PRIMARIES["ITU-R BT.709"], "xy") == pytest.approx(1.0)

    @pytest.mark.parametrize("diagram", ["xy", "uv"])
    def test_bt709_of_bt2020_is_area_ratio(self, diagram):
        """BT.709 covers area(709)/area(2020) of BT.2020, since 709 lies inside 2020."""
        b, w = PRIMARIES["ITU-R BT.709"], PRIMARIES["ITU-R BT.2020"]
        assert gamut_coverage(b, w, diagram) == pytest.approx(gamut_area(b, diagram) / gamut_area(w, diagram))

    def test_partial_overlap_against_grid(self):
        """BT.709 over NTSC 1953 (partial overlap) against a point-grid estimate."""
        b, n = PRIMARIES["ITU-R BT.709"], PRIMARIES["NTSC 1953"]
        est = _inside_fraction(b.xy, n.xy, 800) / gamut_area(n)
        assert gamut_coverage(b, n) == pytest.approx(est, abs=0.005)

    def test_all_named(self):
        """Coverage of every named set, in both diagrams, each within 0-1."""
        cov = coverage_of_named_sets(PRIMARIES["SMPTE C"])
        assert set(cov) == set(PRIMARIES)
        assert all(0 <= v[d] <= 1 + 1e-12 for v in cov.values() for d in ("xy", "uv"))


class TestPlot:
    @pytest.mark.parametrize("diagram", ["xy", "uv"])
    def test_diagram(self, diagram):
        """The diagram draws the locus and one triangle per set, axes labelled with the diagram."""
        from workbench.plots.chromaticity import plot_chromaticity_diagram

        ax = plot_chromaticity_diagram([PRIMARIES["ITU-R BT.709"], PRIMARIES["ITU-R BT.2020"]], diagram=diagram)
        labels = [line.get_label() for line in ax.get_lines()]
        assert any("spectral locus" in lab for lab in labels)
        assert sum("white D65" in lab for lab in labels) == 2
        assert ("u′" if diagram == "uv" else "CIE 1931") in ax.get_xlabel()
