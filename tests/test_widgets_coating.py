"""The thin-film stack panel: it computes, redraws on edits, and shows bad entries as one line."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.analysis.transition import stop_band_edges
from workbench.optics.thinfilm import stack_response
from workbench.widgets.coating import CoatingPanel, parse_material_symbols
from workbench.widgets.common import output_svg


class TestCoatingPanel:
    def test_builds_and_draws(self):
        """The default panel computes a response and shows an SVG figure and the recipe table."""
        panel = CoatingPanel()
        assert panel.status.text == ""
        svg = output_svg(panel.figure)
        assert svg.startswith('<svg xmlns="http://www.w3.org/2000/svg"') and svg == panel.svg()
        assert "transmittance T at each angle" in svg and "45°, mean of s and p" in svg
        assert "QWOT" in panel.recipe.value and panel.response.R.shape[:2] == (2, 3)

    def test_quantity_redraws(self):
        """Switching to R redraws the figure as reflectance; snapshot() holds the same picture."""
        panel = CoatingPanel()
        panel.quantity.value = "R"
        assert "reflectance R at each angle" in panel.svg() and "transmittance T at each" not in panel.svg()
        assert panel.snapshot().data.strip() == panel.svg().strip()

    def test_figure_marks_the_table_edges(self):
        """The figure marks the edge table's crossings: a rippled transition hollow, with the legend's note."""
        panel = CoatingPanel(layers="(0.5L H 0.5L)^20", materials="H=2.35, L=1.46", reference_nm=500.0,
                             incident="1.52", substrate="1.52", angles="0")
        side = panel.edges[0][1]["mean"]["long_wave"]
        assert not side.monotone
        assert 'fill="#ffffff"' in panel.svg() and "(hollow: not monotone)" in panel.svg()

    def test_plain_indices_match_engine(self):
        """With plain indices the panel's R equals the engine's for the same quarter-wave stack."""
        panel = CoatingPanel(layers="(HL)^3 H", materials="H=2.35, L=1.46", reference_nm=500.0,
                             incident="1.0", substrate="1.52", angles="0")
        n = np.array([2.35, 1.46] * 3 + [2.35])
        ref = stack_response(n[:, None], 500.0 / (4 * n), panel.response.wavelengths_nm, 0.0,
                             incident=1.0, substrate=1.52)
        np.testing.assert_allclose(panel.response.R, ref.R, atol=1e-14)

    def test_thickness_scale_moves_edge(self):
        """Scaling every thickness by 1.02 moves the long-wave edge of a non-dispersive stack by 2 %."""
        panel = CoatingPanel(layers="(HL)^8 H", materials="H=2.35, L=1.46", reference_nm=450.0,
                             incident="1.0", substrate="1.52", angles="0")
        wl = panel.response.wavelengths_nm
        before = stop_band_edges(wl, panel.response.R[0, 0])[1]
        panel.scale.value = 1.02
        after = stop_band_edges(wl, panel.response.R[0, 0])[1]
        # common practice: a non-dispersive stack scales with its thicknesses
        assert after == pytest.approx(before * 1.02, abs=0.05)

    def test_edges_by_the_transition_rule(self):
        """The edge table's long-wave edge is edge_transition's single crossing (docs/methods.md §15), unstarred."""
        from workbench.analysis.transition import edge_transition

        panel = CoatingPanel(layers="0.5L (H L)^9 H 0.5L", materials="H=2.35, L=1.46", reference_nm=600.0,
                             incident="1.52", substrate="1.52", angles="0")
        wl, R = panel.response.wavelengths_nm, panel.response.R_mean[0]
        ref = edge_transition(wl, R, reflects="short")
        (angle, by), = panel.edges
        assert angle == 0.0 and ref.monotone and by["mean"]["long_wave"].edge_nm == ref.edge_nm
        assert f"/ {ref.edge_nm:.1f}" in panel.recipe.value and f"{ref.edge_nm:.1f}*" not in panel.recipe.value

    def test_rippled_stack_is_starred(self):
        """A 20-period stack in glass ripples back above 50 %: its edges show as a starred span and a note."""
        panel = CoatingPanel(layers="(0.5L H 0.5L)^20", materials="H=2.35, L=1.46", reference_nm=500.0,
                             incident="1.52", substrate="1.52", angles="0")
        side = panel.edges[0][1]["mean"]["long_wave"]
        assert not side.monotone and len(side.crossings_nm) > 1
        a, b = side.span_nm
        assert f"{a:.1f}–{b:.1f}*" in panel.recipe.value and "* non-monotone transition" in panel.recipe.value

    def test_bad_formula_is_one_line(self):
        """A bad formula shows one error line and keeps the last response."""
        panel = CoatingPanel()
        last = panel.response
        panel.layers.value = "(H L"
        assert panel.status.text == "error: layers has a '(' without its ')' (got '(H L')"
        assert panel.response is last


class TestParseMaterialSymbols:
    def test_pairs(self):
        """'H=TiO2, L=SiO2' gives the symbol table."""
        assert parse_material_symbols("H=TiO2, L = 1.46") == {"H": "TiO2", "L": "1.46"}


class TestCoatingPanelCamera:
    def test_stack_in_place_of_a_trim(self, demo_design):
        """With a design, the panel shows the camera's measures with the stack in place of an element."""
        from workbench.analysis.evaluator import DesignEvaluator
        from workbench.analysis.recipe import measures_with_curves
        from workbench.optics.stacks import cone_response

        panel = CoatingPanel(layers="(0.5L H 0.5L)^8", materials="H=TiO2, L=SiO2", reference_nm=420.0,
                             incident="1.0", substrate="1.52", angles="0", design=demo_design,
                             element="green-edge")
        assert panel.status.text == "" and "with this stack" in panel.camera.value
        ev = DesignEvaluator(demo_design)
        symbols, mats, d = panel.stack()
        wl = ev.wavelengths
        N = np.stack([mats[s].index(wl) for s in symbols])
        R, T, _, _ = cone_response(N, d, wl, incident=1.0, substrate=1.52)
        ref = measures_with_curves(ev, "green-edge", R, T)
        assert panel.measures.vora_value == pytest.approx(ref.vora_value, abs=1e-12)
        before = panel.measures.vora_value
        panel.scale.value = 1.05
        assert panel.measures.vora_value != before
