"""Tests of workbench.plots.coating_vector: the coating panel's figure and the layer ranking as SVG, no matplotlib.

Each figure is parsed as XML (SVG 1.1), its texts read back, and its marks
put back into data coordinates through the figure's own axes, so a mark is
checked against the number it stands for.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from workbench.analysis.transition import band_sides
from workbench.errors import WorkbenchError
from workbench.optics.thinfilm import stack_response
from workbench.plots.coating_vector import layer_shares_figure, stack_angles_figure
from workbench.plots.vector import PALETTE

SVG = "{http://www.w3.org/2000/svg}"  # SVG 1.1 (W3C Recommendation 2011), § 5.1.2: the SVG namespace
CIRCLE = re.compile(r"M(-?[\d.]+),(-?[\d.]+)a([\d.]+),")


def parse(fig) -> ET.Element:
    """The figure's SVG parsed (fails on anything not well-formed XML)."""
    root = ET.fromstring(fig.svg())
    assert root.tag == SVG + "svg"
    return root


def texts(root) -> list[str]:
    """Every text of the picture, the lines of a multi-line text joined by a space."""
    out = []
    for t in root.iter(SVG + "text"):
        spans = list(t.iter(SVG + "tspan"))
        out.append(" ".join(s.text or "" for s in spans) if spans else (t.text or ""))
    return out


def marker_paths(root) -> list[ET.Element]:
    """The paths of circle markers inside the axes (not the legend's samples)."""
    return [p for p in root.iter(SVG + "path") if "a" in p.get("d", "") and p.get("stroke-width") == "1.4"]


def quarter_wave(periods: int, ref_nm: float, angles, *, pre: str = "") -> object:
    """An (H L)^k H stack, indices 2.35 / 1.46, in glass 1.52 (non-dispersive), 1 nm grid 380-780 nm."""
    n = np.array([2.35, 1.46] * periods + [2.35])
    if pre == "half":  # 0.5L (H L)^k H 0.5L: an edge filter with low ripple
        n = np.concatenate([[1.46], n, [1.46]])
        d = ref_nm / (4 * n)
        d[[0, -1]] /= 2
    else:
        d = ref_nm / (4 * n)
    wl = np.arange(380.0, 781.0, 1.0)
    return stack_response(n[:, None], d, wl, angles, incident=1.52, substrate=1.52)


def mean_edges(res):
    """The panel's edges for the mean of s and p at each angle."""
    return [(float(a), {"mean": band_sides(res.wavelengths_nm, res.R_mean[ia])}) for ia, a in
            enumerate(res.angles_deg)]


class TestStackAnglesFigure:
    def test_series_and_texts(self):
        """Three angles give three mean curves (thick), three s (dashed) and three p (dotted), titles and units."""
        res = quarter_wave(9, 600.0, [0.0, 30.0, 45.0], pre="half")
        root = parse(stack_angles_figure(res, quantity="T", title="edge"))
        paths = list(root.iter(SVG + "path"))
        for colour in PALETTE[:3]:
            mine = [p for p in paths if p.get("stroke") == colour and p.get("d", "").count(" ") > 100]
            assert sorted(p.get("stroke-dasharray") or "solid" for p in mine) == ["1.5 2.5", "6 3.5", "solid"]
        t = texts(root)
        assert "edge: transmittance T at each angle (characteristic-matrix method; s dashed, p dotted)" in t
        assert "transmittance T (fraction 0-1)" in t and "wavelength λ (nm)" in t
        assert {"0°, mean of s and p", "30°, mean of s and p", "45°, mean of s and p", "s polarisation",
                "p polarisation"} <= set(t)

    def test_edge_marks_at_the_rule_crossings(self):
        """Each angle's band-edge crossings sit on the 50 % line at band_sides' crossings: filled where monotone."""
        res = quarter_wave(9, 600.0, [0.0, 10.0], pre="half")
        edges = mean_edges(res)
        fig = stack_angles_figure(res, quantity="R", edges=edges)
        root = parse(fig)
        ax = fig.axes[0]
        seen = set()
        for k, (_, by) in enumerate(edges):
            for fill, monotone in ((PALETTE[k], True), ("#ffffff", False)):
                want = sorted(x for t in by["mean"].values() if t.monotone == monotone for x in t.crossings_nm)
                got = [m for p in marker_paths(root) if p.get("stroke") == PALETTE[k] and p.get("fill") == fill
                       for m in CIRCLE.findall(p.get("d"))]
                centres = sorted(float(x) + float(r) for x, _, r in got)
                np.testing.assert_allclose(centres, ax.px(want), atol=0.11)  # coordinates are rounded to 0.1 px
                np.testing.assert_allclose([float(y) for _, y, _ in got], ax.py(0.5), atol=0.06)
                seen.add((monotone, bool(want)))
        assert {(True, True), (False, True)} <= seen  # both kinds drawn (long-wave edge monotone, short-wave not)
        assert "band edge: R = 50 % crossing of the mean (hollow: not monotone)" in texts(root)

    def test_rough_transition_is_hollow(self):
        """A 20-period stack's rippled transition: its crossings hollow, and the legend says so."""
        res = quarter_wave(20, 500.0, [0.0])
        fig = stack_angles_figure(res, quantity="R", edges=mean_edges(res))
        root = parse(fig)
        side = band_sides(res.wavelengths_nm, res.R_mean[0])["long_wave"]
        assert not side.monotone and len(side.crossings_nm) > 1
        assert any(p.get("fill") == "#ffffff" for p in marker_paths(root))
        assert "band edge: R = 50 % crossing of the mean (hollow: not monotone)" in texts(root)

    def test_no_edges_no_marks(self):
        """Without edges the figure has no markers and no legend entry for them."""
        root = parse(stack_angles_figure(quarter_wave(9, 600.0, [0.0], pre="half")))
        assert marker_paths(root) == [] and not any(s.startswith("band edge") for s in texts(root))

    def test_rejects_quantity(self):
        """A quantity other than R or T is refused."""
        with pytest.raises(WorkbenchError, match=r"^quantity must be 'R' or 'T' \(got 'A'\)$"):
            stack_angles_figure(quarter_wave(3, 600.0, [0.0]), quantity="A")


class TestLayerSharesFigure:
    RANKING = [
        {"layer": 1, "trial_share": 0.10, "trial_interval": (0.06, 0.14), "above_floor": True, "share": 0.12},
        {"layer": 2, "trial_share": 0.02, "trial_interval": (0.00, 0.05), "above_floor": False, "share": 0.01},
        {"layer": 3, "trial_share": 0.30, "trial_interval": (0.22, 0.38), "above_floor": True, "share": 0.28},
    ]

    def test_bars_floor_and_texts(self):
        """Bars at each layer's trial share (blue above the floor, grey below), the floor dashed, whole-layer ticks."""
        fig = layer_shares_figure(self.RANKING, 0.06, trials=100, title="green-red face")
        root = parse(fig)
        ax = fig.axes[0]
        bars = {p.get("fill"): p.get("d") for p in root.iter(SVG + "path")
                if p.get("fill") in (PALETTE[0], "#b3b3b3") and "H" in p.get("d", "") and not p.get("stroke")}
        tops = lambda d: sorted(float(v) for v in re.findall(r"M-?[\d.]+,(-?[\d.]+)H", d))
        # each bar is M x0,top H x1 V base H x0 z: its top in pixels is the share in % through the axes
        np.testing.assert_allclose(tops(bars[PALETTE[0]]), sorted(ax.py([10.0, 30.0])), atol=0.06)
        np.testing.assert_allclose(tops(bars["#b3b3b3"]), ax.py([2.0]), atol=0.06)
        floor = [p for p in root.iter(SVG + "path") if p.get("stroke") == "#c23b3b" and p.get("stroke-dasharray")]
        assert float(re.match(r"M-?[\d.]+,(-?[\d.]+)H", floor[0].get("d")).group(1)) == pytest.approx(
            float(ax.py(6.0)), abs=0.06)
        t = texts(root)
        assert "green-red face: which layers' thickness errors matter (linear share of R's variance over the " \
               "wavelengths)" in t
        assert {"1", "2", "3"} <= set(t) and "2.5" not in t
        assert "share of the variance of R (%)" in t and "layer (1 = incidence side)" in t
        assert "noise floor 6.00 % (largest share with the trials shuffled, 90 %)" in t
        assert "share from 100 trials (blue: above the noise floor)" in t
