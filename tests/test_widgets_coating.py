"""The thin-film stack panel: it computes, redraws on edits, and shows bad entries as one line."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.optics.thinfilm import stack_response, stop_band_edges
from workbench.widgets.coating import CoatingPanel, parse_material_symbols
from workbench.widgets.common import output_png


class TestCoatingPanel:
    def test_builds_and_draws(self):
        """The default panel computes a response and shows a figure and the recipe table."""
        panel = CoatingPanel()
        assert panel.status.text == ""
        assert output_png(panel.figure)[:8] == b"\x89PNG\r\n\x1a\n"
        assert "QWOT" in panel.recipe.value and panel.response.R.shape[:2] == (2, 3)

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
