"""Element kind ``coating``: trims and splitter faces from real stacks in design files."""

from __future__ import annotations

import numpy as np
import pytest

from workbench.fileio.design_toml import design_from_dict, load_design, save_design
from workbench.model.design import DesignError
from workbench.optics.materials import material_named
from workbench.optics.stacks import cone_rays, parse_layer_formula, physical_thicknesses, resolve_materials
from workbench.optics.thinfilm import stack_response


def _design(*elements, grid=(400.0, 700.0, 10.0)):
    chain = [{"name": "flat", "type": "neutral-density", "density": 0.0}, *elements]
    return {
        "schema": 1, "name": "coating test", "observer": 2,
        "grid": {"start_nm": grid[0], "stop_nm": grid[1], "step_nm": grid[2]},
        "target": {"kind": "primaries", "name": "ITU-R BT.709"},
        "chain": chain,
        "samples": [{"name": "tcs", "source": "cie-13.3"}],
        "illuminants": [{"name": "daylight", "cie": "D65"}],
    }


TRIM = {"name": "trim", "type": "coating", "paths": ["G"], "layers": "(0.5L H 0.5L)^6",
        "materials": {"H": "TiO2", "L": "SiO2"}, "reference_nm": 430.0, "aoi_deg": 5.0, "f_number": 2.8}


def _reference_T(spec, wl, *, n_inc=1.0, substrate="crown-517", reflect=False):
    """The coating's curve computed by hand: engine per ray, pupil weights, mean of s and p."""
    table = spec["materials"]
    if isinstance(table, str):
        table = dict(p.split("=") for p in table.replace(" ", "").split(","))
    mats = resolve_materials(table)
    layers = parse_layer_formula(spec["layers"], mats)
    d = physical_thicknesses(layers, mats, spec.get("reference_nm")) * spec.get("thickness_scale", 1.0)
    N = np.stack([mats[x.symbol].index(wl) for x in layers])
    n_cone = float(np.real(np.atleast_1d(n_inc)[np.size(n_inc) // 2]))   # the cone at mid-grid
    angles, w = cone_rays(spec.get("aoi_deg", 0.0), spec.get("f_number"), n_cone, rings=4, azimuths=8)
    res = stack_response(N, d, wl, angles, incident=n_inc, substrate=material_named(substrate).index(wl))
    Q = res.R if reflect else res.T
    return 0.5 * (Q[0] + Q[1]).T @ w


class TestCoatingKind:
    def test_trim_is_cone_averaged_transmittance(self):
        """A trim coating puts its unpolarised, cone-averaged T on its path and leaves the others."""
        design = design_from_dict(_design(TRIM))
        model = design.model()
        wl = model.wavelengths
        curves = {c.name: c.values for c in model.element_curves()}
        # Macleod (2010) ch. 2 through the engine ray by ray; pupil-area weights (common practice)
        np.testing.assert_allclose(curves["trim"][1], _reference_T(TRIM, wl), atol=1e-12)
        np.testing.assert_array_equal(curves["trim"][[0, 2]], 1.0)

    def test_two_faces_split_the_light(self):
        """Two lossless faces (blue first, then red) share all light: B + G + R = 1 at every wavelength."""
        blue = {"name": "blue-face", "type": "coating", "paths": ["R", "G", "B"], "reflects": "B",
                "layers": "(0.5L H 0.5L)^10", "materials": "H=TiO2, L=SiO2", "reference_nm": 440.0,
                "aoi_deg": 25.0, "f_number": 2.0, "incident": "crown-517", "substrate": "crown-517"}
        red = dict(blue, name="red-face", paths=["R", "G"], reflects="R", layers="(0.5H L 0.5H)^10",
                   reference_nm=720.0, aoi_deg=12.0)
        model = design_from_dict(_design(blue, red)).model()
        S = model.sensitivities()
        wl = model.wavelengths
        n_glass = material_named("crown-517").index(wl).real
        # common practice: energy conservation of lossless faces, face by face
        np.testing.assert_allclose(S.sum(axis=0), 1.0, atol=1e-12)
        np.testing.assert_allclose(S[2], _reference_T(blue, wl, n_inc=n_glass, reflect=True), atol=1e-12)
        assert S[2, 0] > 0.9 and S[2, -1] < 0.1          # blue reflected at 400 nm, not at 700 nm
        assert S[0, -1] > 0.9 and S[0, 0] < 0.1          # red reflected at 700 nm

    def test_batch_of_reference_wavelengths(self):
        """A batch of reference wavelengths gives each member's own curve."""
        model = design_from_dict(_design(dict(TRIM, reference_nm={"value": 430.0, "min": 400.0, "max": 460.0,
                                                                  "free": True}))).model()
        batch = model.sensitivities({"trim.reference_nm": np.array([420.0, 440.0])})
        one = model.sensitivities({"trim.reference_nm": 440.0})
        np.testing.assert_allclose(batch[1], one, atol=1e-14)
        assert not np.allclose(batch[0], batch[1])

    def test_own_layer_thickness_replaces_the_formula(self):
        """layer_<i>_nm replaces that layer's formula thickness (and may be free)."""
        spec = dict(TRIM, layer_2_nm={"value": 60.0, "min": 40.0, "max": 80.0, "free": True})
        design = design_from_dict(_design(spec))
        assert "trim.layer_2_nm" in design.parameters()
        mats = resolve_materials({"H": "TiO2", "L": "SiO2"})
        layers = parse_layer_formula(TRIM["layers"], mats)
        d = physical_thicknesses(layers, mats, 430.0)
        d[1] = 60.0
        formula = " ".join(f"{x.symbol}[{t!r}]" for x, t in zip(layers, d))
        same = design_from_dict(_design(dict(TRIM, layers=formula)))
        np.testing.assert_allclose(design.model().sensitivities(), same.model().sensitivities(), atol=1e-13)
        moved = design.model().sensitivities({"trim.layer_2_nm": 70.0})
        assert not np.allclose(moved, same.model().sensitivities())

    def test_save_and_load_keep_the_stack(self, tmp_path):
        """A design with a coating saves (materials as a table) and loads to the same curves."""
        design = design_from_dict(_design(TRIM), base_dir=tmp_path)
        save_design(design, tmp_path / "d.toml")
        import tomllib

        saved = tomllib.loads((tmp_path / "d.toml").read_text())
        assert saved["chain"][1]["materials"] == {"H": "TiO2", "L": "SiO2"}
        again = load_design(tmp_path / "d.toml")
        np.testing.assert_allclose(again.model().sensitivities(), design.model().sensitivities(), atol=0)


class TestCoatingKindRejections:
    def _problems(self, element):
        with pytest.raises(DesignError) as err:
            design_from_dict(_design(element))
        return str(err.value)

    def test_bad_formula(self):
        """A formula with an unknown symbol names the key and the place."""
        text = self._problems(dict(TRIM, layers="(H L)^4 M"))
        assert ("chain[1].layers: expected a layer formula; layers must be symbols (H, L), numbers before "
                "them, [nm] after them and (groups)^N (got 'M' at character 9)") in text

    def test_unknown_material(self):
        """An unknown material names the symbol."""
        text = self._problems(dict(TRIM, materials="H=TiO3, L=SiO2"))
        assert ('chain[1].materials: expected a table of material symbols such as {H = "TiO2", L = "SiO2"}; '
                "H: material must be one of air, TiO2") in text

    def test_qwot_needs_reference(self):
        """QWOT layers without reference_nm are refused."""
        element = dict(TRIM)
        del element["reference_nm"]
        assert "chain[1].reference_nm: expected a reference wavelength in nm for the QWOT layers (missing)" in \
            self._problems(element)

    def test_face_reflects_into_its_paths(self):
        """A face must reflect into one of its own paths."""
        text = self._problems(dict(TRIM, reflects="B"))
        assert 'chain[1].reflects: expected one of the element\'s paths (G) or "none" (got \'B\')' in text


class TestDocumentedExamples:
    def test_examples_in_design_file_doc_load(self, tmp_path):
        """Every TOML example of the coating section of docs/design-file.md loads and computes."""
        import re
        import tomllib
        from pathlib import Path

        text = (Path(__file__).parents[1] / "docs" / "design-file.md").read_text(encoding="utf-8")
        section = text[text.index("### Real coatings"):]
        section = section[:section.index("\n## ")]
        blocks = re.findall(r"```toml\n(.*?)```", section, flags=re.S)
        assert len(blocks) == 3
        _nk_table(tmp_path / "films" / "ta2o5-lab.csv", [f"{w},{2.08 + 0.02 * (550.0 / w) ** 2:.4f},0"
                                                          for w in range(350, 860, 10)])
        for block in blocks:
            elements = tomllib.loads(block)["chain"]
            model = design_from_dict(_design(*elements), base_dir=tmp_path).model()
            S = model.sensitivities()
            assert np.all(np.isfinite(S)) and np.all((S >= 0) & (S <= 1))


class TestMaterialErrors:
    def test_material_scales(self):
        """thickness_scale_H scales only the H layers; index_scale_L scales only L's n."""
        base = dict(TRIM, f_number=None)
        del base["f_number"]
        design = design_from_dict(_design(dict(base, thickness_scale_H={"value": 1.02},
                                               index_scale_L={"value": 0.99})))
        wl = design.model().wavelengths
        mats = resolve_materials({"H": "TiO2", "L": "SiO2"})
        layers = parse_layer_formula(TRIM["layers"], mats)
        d = physical_thicknesses(layers, mats, 430.0) * np.array([1.02 if x.symbol == "H" else 1.0 for x in layers])
        N = np.stack([mats[x.symbol].index(wl) * (0.99 if x.symbol == "L" else 1.0) for x in layers])
        res = stack_response(N, d, wl, 5.0, incident=1.0, substrate=material_named("crown-517").index(wl))
        # the engine directly, chief ray, mean of s and p
        np.testing.assert_allclose(design.model().sensitivities()[1], res.T_mean[0], atol=1e-12)

    def test_batched_index_scale(self):
        """A batch of index scales gives each member's own curve."""
        design = design_from_dict(_design(dict(TRIM, index_scale_H={"value": 1.0})))
        batch = design.model().sensitivities({"trim.index_scale_H": np.array([0.99, 1.01])})
        one = design.model().sensitivities({"trim.index_scale_H": 1.01})
        np.testing.assert_allclose(batch[1], one, atol=1e-14)


class TestCoatedDesign:
    def test_stored_matrix_not_carried_over(self, demo_design):
        """The idealised design's fitted matrix is dropped: the coated camera's matrix follows its [fit] rule."""
        from dataclasses import replace

        from workbench.analysis.recipe import coated_design, splitter_recipes
        from workbench.model.design import FittedMatrix

        stored = replace(demo_design, matrix=FittedMatrix("least-squares", "shared",
                                                          ((2.0, -1.0, 0.0), (0.0, 1.0, 0.0), (0.0, 0.0, 1.0))))
        coated = coated_design(stored, splitter_recipes(stored, periods=3, refine=False))
        assert coated.matrix is None
        assert [e.type for e in coated.chain].count("coating") == 2


@pytest.mark.slow
class TestFitWithFreeLayers:
    def test_fit_moves_free_layers(self, demo_design, tmp_path):
        """workbench fit takes a design whose coating layers are free and writes them refined."""
        from workbench.analysis.recipe import coated_design, splitter_recipes
        from workbench.cli.main import main

        faces = splitter_recipes(demo_design, periods=3, refine=False)
        coated = coated_design(demo_design, faces)
        path = tmp_path / "coated.toml"
        save_design(coated, path)
        text = path.read_text()
        # free two layers of the blue/green face (their [chain.layer_i_nm] tables follow that element)
        start = text.index('name = "prism-blue-green"')
        for key in ("layer_3_nm", "layer_4_nm"):
            i = text.index(f"[chain.{key}]", start)
            j = text.index("\n", i)
            text = text[:j + 1] + "free = true\n" + text[j + 1:]
        path.write_text(text)
        status = main(["fit", str(path), "--out", str(tmp_path / "out"), "--max-evaluations", "40", "--no-report",
                       "--quiet"])
        assert status in (0, 3)                        # converged, or the small budget spent
        fitted = load_design(tmp_path / "out" / "design.toml")
        before, after = coated.parameters(), fitted.parameters()
        assert any(after[f"prism-blue-green.{k}"].value != before[f"prism-blue-green.{k}"].value
                   for k in ("layer_3_nm", "layer_4_nm"))


def _nk_table(path, rows):
    """Write an n,k CSV (wavelength_nm, n, k) with the given rows of text."""
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("wavelength_nm,n,k\n" + "".join(f"{r}\n" for r in rows), encoding="utf-8")


def _mix_rows(lo=350, hi=850):
    return [f"{w},{2.0 + 0.02 * (550.0 / w) ** 2:.6f},0" for w in range(lo, hi + 1, 10)]


MIX = dict(TRIM, layers="(0.5L M 0.5L)^6", materials={"M": {"file": "nk/mix.csv"}, "L": "SiO2"})


class TestUserMaterialTables:
    def test_table_is_read_at_load_and_matches_the_engine(self, tmp_path):
        """A {file = …} material is the table's n,k on the grid; the curve then equals the engine's own."""
        _nk_table(tmp_path / "nk" / "mix.csv", _mix_rows())
        design = design_from_dict(_design(MIX), base_dir=tmp_path, source="d.toml")
        model = design.model()
        wl = model.wavelengths
        (tmp_path / "nk" / "mix.csv").unlink()            # read once at load: nothing touches disk afterwards
        got = {c.name: c.values for c in model.element_curves()}["trim"][1]
        from workbench.optics.materials import read_nk_csv

        _nk_table(tmp_path / "again.csv", _mix_rows())
        mix = read_nk_csv(tmp_path / "again.csv")
        mats = {"M": mix, "L": material_named("SiO2")}
        layers = parse_layer_formula(MIX["layers"], mats)
        d = physical_thicknesses(layers, mats, 430.0)
        N = np.stack([mats[x.symbol].index(wl) for x in layers])
        angles, w = cone_rays(5.0, 2.8, 1.0, rings=4, azimuths=8)
        res = stack_response(N, d, wl, angles, incident=1.0, substrate=material_named("crown-517").index(wl))
        # Macleod (2010) ch. 2 through the engine ray by ray; pupil-area weights (common practice)
        np.testing.assert_allclose(got, 0.5 * (res.T[0] + res.T[1]).T @ w, atol=1e-12)

    def test_saving_elsewhere_rewrites_the_path(self, tmp_path):
        """Saved into another folder, the table's name is rewritten relative to it and loads the same."""
        import tomllib

        _nk_table(tmp_path / "nk" / "mix.csv", _mix_rows())
        design = design_from_dict(_design(MIX), base_dir=tmp_path, source="d.toml")
        (tmp_path / "out").mkdir()
        save_design(design, tmp_path / "out" / "d.toml")
        saved = tomllib.loads((tmp_path / "out" / "d.toml").read_text())
        assert saved["chain"][1]["materials"] == {"M": {"file": "../nk/mix.csv"}, "L": "SiO2"}
        again = load_design(tmp_path / "out" / "d.toml")
        np.testing.assert_array_equal(again.model().sensitivities(), design.model().sensitivities())
        save_design(design, tmp_path / "same.toml")
        assert tomllib.loads((tmp_path / "same.toml").read_text())["chain"][1]["materials"]["M"] == {
            "file": "nk/mix.csv"}


class TestUserMaterialTableRejections:
    def _error(self, tmp_path, rows=None, name="mix.csv"):
        if rows is not None:
            _nk_table(tmp_path / "nk" / name, rows)
        design = design_from_dict(_design(dict(MIX, materials={"M": {"file": f"nk/{name}"}, "L": "SiO2"})),
                                  base_dir=tmp_path, source="cam.toml")
        from workbench.errors import WorkbenchError

        with pytest.raises(WorkbenchError) as err:
            design.model().sensitivities()
        return str(err.value)

    def test_missing_file(self, tmp_path):
        """A table that is not there names the design file, element, key and the file."""
        assert self._error(tmp_path) == (
            "cam.toml: chain[1].materials.M: expected an n,k table (CSV: wavelength_nm, n, k) relative to the "
            "design file's folder (got 'nk/mix.csv': no such file)")

    def test_negative_k(self, tmp_path):
        """k < 0 names the file's line and column."""
        rows = _mix_rows()
        rows[1] = "360,2.1,-0.01"
        assert self._error(tmp_path, rows) == (
            "cam.toml: chain[1].materials.M: nk/mix.csv, line 3, column 'k': k must be ≥ 0 (got -0.01); "
            "k < 0 would be gain")

    def test_gap(self, tmp_path):
        """An empty cell is a gap, not filled."""
        rows = _mix_rows()
        rows[2] = "370,,0"
        assert self._error(tmp_path, rows) == (
            "cam.toml: chain[1].materials.M: nk/mix.csv, line 4, column 'n': must hold a number "
            "(got an empty cell: gaps are not filled)")

    def test_not_covering_the_grid(self, tmp_path):
        """A table that stops inside the design grid (400-700 nm) is refused, never extrapolated."""
        assert self._error(tmp_path, _mix_rows(450, 650), name="short.csv") == (
            "cam.toml: chain[1].materials.M: material 'short' must be used within 450-650 nm "
            "(got 400-700 nm; n,k table nk/short.csv); the table must cover the design grid")

    def test_bad_table_value(self):
        """Anything but {file = "…"} as a table is refused when the design is checked."""
        with pytest.raises(DesignError) as err:
            design_from_dict(_design(dict(MIX, materials={"M": {"path": "nk/mix.csv"}, "L": "SiO2"})))
        assert ("chain[1].materials: expected a table of material symbols such as {H = \"TiO2\", L = \"SiO2\"}; "
                "a user n,k table is written {file = \"films/nk.csv\"} (got {'path': 'nk/mix.csv'} for M)") in \
            str(err.value)
