"""Layer formulas, QWOT thicknesses and the cone-averaged response of stacks."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.errors import WorkbenchError
from workbench.optics.materials import material_named
from workbench.optics.stacks import (
    Layer,
    cone_response,
    cone_rays,
    parse_layer_formula,
    physical_thicknesses,
    qwot_of,
    resolve_materials,
)
from workbench.optics.thinfilm import stack_response


class TestParseLayerFormula:
    def test_repeated_group_without_spaces(self):
        """'(HL)^10 H' gives 21 alternating quarter-wave layers starting and ending with H."""
        layers = parse_layer_formula("(HL)^10 H", ["H", "L"])
        assert len(layers) == 21
        assert [x.symbol for x in layers[:3]] == ["H", "L", "H"] and layers[-1].symbol == "H"
        assert all(x.qwot == 1.0 and x.physical_nm is None for x in layers)

    def test_multiples_physical_and_nesting(self):
        """Multiples, [nm] thicknesses and nested groups expand in order."""
        layers = parse_layer_formula("0.5L ((H L)^2 2H)^2 H[52.3]", ["H", "L"])
        assert layers[0] == Layer("L", 0.5)
        assert [x.symbol for x in layers[1:11]] == ["H", "L", "H", "L", "H"] * 2
        assert layers[5] == Layer("H", 2.0)
        assert layers[-1] == Layer("H", None, 52.3)

    def test_longest_symbol_first(self):
        """Symbols that share a prefix are told apart by the longest match."""
        assert [x.symbol for x in parse_layer_formula("H2H", ["H", "H2"])] == ["H2", "H"]

    def test_unknown_symbol(self):
        """A symbol outside the materials is refused with its position."""
        with pytest.raises(WorkbenchError) as err:
            parse_layer_formula("H L M", ["H", "L"])
        assert str(err.value) == ("'layers' must be symbols (H, L), numbers before them, [nm] after them and "
                                  "(groups)^N (got 'M' at character 5)")

    def test_unbalanced(self):
        """An unclosed group is refused."""
        with pytest.raises(WorkbenchError) as err:
            parse_layer_formula("(H L", ["H", "L"])
        assert str(err.value) == "'layers' has a '(' without its ')' (got '(H L')"

    def test_both_qwot_and_nm(self):
        """A layer given both ways is refused."""
        with pytest.raises(WorkbenchError) as err:
            parse_layer_formula("2H[30]", ["H", "L"])
        assert str(err.value) == "'layers' must give a layer as a QWOT multiple or [nm], not both (got '2H[30]')"


class TestPhysicalThicknesses:
    def test_qwot_at_reference(self):
        """A QWOT is λ_ref / (4 n(λ_ref)); a multiple scales it; [nm] is kept."""
        mats = resolve_materials({"H": "TiO2", "L": "1.46"})
        d = physical_thicknesses(parse_layer_formula("H 0.5L L[88]", mats), mats, 550.0)
        n_h = material_named("TiO2").index([550.0])[0].real
        # H. A. Macleod, Thin-Film Optical Filters, 4th ed. (2010), ch. 1: QWOT = λ0/4; from memory
        np.testing.assert_allclose(d, [550.0 / (4 * n_h), 0.5 * 550.0 / (4 * 1.46), 88.0])
        assert qwot_of(mats["L"], 600.0) == pytest.approx(600.0 / (4 * 1.46))

    def test_qwot_needs_reference(self):
        """QWOT layers without a reference wavelength are refused."""
        mats = resolve_materials({"H": "2.35"})
        with pytest.raises(WorkbenchError) as err:
            physical_thicknesses(parse_layer_formula("H", mats), mats, None)
        assert str(err.value) == "'reference_nm' must be given when layers are written as QWOTs"


class TestResolveMaterials:
    def test_unknown_material_names_symbol(self):
        """An unknown material names its symbol."""
        with pytest.raises(WorkbenchError) as err:
            resolve_materials({"H": "TiO3"})
        assert str(err.value).startswith("'materials'.H: material must be one of air, TiO2")


class TestConeRays:
    def test_chief_ray_alone(self):
        """Without an f-number the chief ray alone, weight 1."""
        a, w = cone_rays(45.0, None, 1.52)
        assert a.tolist() == [45.0] and w.tolist() == [1.0]

    def test_weights_and_spread(self):
        """The cone's rays sum to weight 1 and spread about the chief ray within the half-angle."""
        a, w = cone_rays(30.0, 2.0, 1.0)
        assert w.sum() == pytest.approx(1.0)
        half = np.degrees(np.arcsin(1 / (2 * 2.0)))  # common practice: n sin α = 1/(2N)
        assert a.min() >= 30.0 - half - 1e-9 and a.max() <= 30.0 + half + 1e-9


class TestConeResponse:
    def test_unpolarised_is_mean_of_s_and_p(self):
        """At the chief ray alone, unpolarised R is the mean of s and p from the engine."""
        n, d, wl = [[2.35], [1.46]], [60.0, 90.0], np.linspace(400, 700, 7)
        R, T, _, _ = cone_response(n, d, wl, aoi_deg=40.0, incident=1.52, substrate=1.52)
        ref = stack_response(n, d, wl, 40.0, incident=1.52, substrate=1.52)
        np.testing.assert_allclose(R, ref.R_mean[0], atol=1e-15)
        np.testing.assert_allclose(T, ref.T_mean[0], atol=1e-15)

    def test_cone_derivatives_match_finite_differences(self):
        """Cone-averaged thickness derivatives agree with central differences."""
        n, d, wl = np.array([[2.35], [1.46], [2.35]]), np.array([60.0, 90.0, 55.0]), np.linspace(420, 680, 5)
        kw = dict(aoi_deg=30.0, f_number=2.8, incident=1.52, substrate=1.52)
        R, T, dR, dT = cone_response(n, d, wl, derivatives=True, **kw)
        for j in range(3):
            up, dn = d.copy(), d.copy()
            up[j] += 1e-4
            dn[j] -= 1e-4
            # common practice: central difference
            fd = (cone_response(n, up, wl, **kw)[0] - cone_response(n, dn, wl, **kw)[0]) / 2e-4
            np.testing.assert_allclose(dR[j], fd, atol=1e-9)
