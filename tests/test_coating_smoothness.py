"""The ripple penalty shared by the recipe refinements and ``workbench fit``'s ``[fit] coating_smoothness``."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.fit import fit_design
from workbench.analysis.fit_objective import CoatingSmoothness, Objective
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import design_from_dict, load_design, save_design
from workbench.model.design import DesignError
from workbench.optics.materials import material_named
from workbench.optics.ripple import CoatingRipple, ripple_grid, ripple_residuals, ripple_scale, second_differences
from workbench.optics.stacks import parse_layer_formula, physical_thicknesses, resolve_materials
from workbench.optics.thinfilm import stack_response

MATS = {"H": "TiO2", "L": "SiO2"}


def _face(name, paths, reflects, formula, reference_nm, aoi_deg, *, free=True, scale=None):
    """A splitter face with physical layers, each its own bounded ``layer_<i>_nm`` (± 20 %)."""
    mats = resolve_materials(MATS)
    layers = parse_layer_formula(formula, mats)
    d = physical_thicknesses(layers, mats, reference_nm)
    if scale is not None:
        d = d * scale
    el = {"name": name, "type": "coating", "paths": paths, "reflects": reflects,
          "layers": " ".join(f"{x.symbol}[{t:.4f}]" for x, t in zip(layers, d)), "materials": dict(MATS),
          "aoi_deg": aoi_deg, "incident": "crown-517", "substrate": "crown-517"}
    for i, t in enumerate(d):
        el[f"layer_{i + 1}_nm"] = {"value": round(float(t), 4), "min": round(0.8 * float(t), 4),
                                   "max": round(1.2 * float(t), 4), "free": free}
    return el


def _design_dict(weight=None, *, scale=None, free=True, max_evaluations=400):
    """Two small faces (15 layers each) splitting blue and red; ν objective."""
    fit = {"objective": "vora", "max_evaluations": max_evaluations}
    if weight is not None:
        fit["coating_smoothness"] = weight
    return {
        "schema": 1, "name": "two small faces", "observer": 2,
        "grid": {"start_nm": 400.0, "stop_nm": 700.0, "step_nm": 10.0},
        "target": {"kind": "primaries", "name": "ITU-R BT.709"},
        "chain": [_face("blue", ["R", "G", "B"], "B", "(0.5L H 0.5L)^5", 450.0, 25.0, free=free, scale=scale),
                  _face("red", ["R", "G"], "R", "(0.5H L 0.5H)^5", 720.0, 12.0, free=free)],
        "samples": [{"name": "tcs", "source": "cie-13.3"}],
        "illuminants": [{"name": "daylight", "cie": "D65"}],
        "fit": fit,
    }


def _rms_ripple(design, name="red") -> float:
    """RMS second difference of the face's chief-ray R_s, R_p on its 2 nm grid (the penalty's measure, unweighted)."""
    e = next(x for x in design.chain if x.name == name)
    r = CoatingRipple(e, (400.0, 700.0))({k: p.value for k, p in e.params})
    return float(np.sqrt(np.mean(r ** 2)))


class TestSecondDifferences:
    def test_straight_line_is_zero(self):
        """Any straight R(λ) has second differences zero (to rounding)."""
        wl = np.arange(400.0, 700.0, 2.0)
        for a, b in ((0.3, 0.0), (-0.002, 1.1), (0.0, 0.5)):
            np.testing.assert_allclose(second_differences(b + a * (wl - 400.0) / 300.0), 0.0, atol=1e-15)

    def test_quadratic_by_hand(self):
        """For R = c·x² on a unit step, every second difference is 2c (hand computation: (k−1)² − 2k² + (k+1)² = 2)."""
        x = np.arange(10.0)
        np.testing.assert_allclose(second_differences(0.01 * x ** 2), 0.02, rtol=1e-12)
        # R = c (λ − 500)² on the 2 nm grid: every second difference is 2c·step² = 8c (by hand)
        wl = ripple_grid(480.0, 520.0)
        np.testing.assert_allclose(second_differences(3e-5 * (wl - 500.0) ** 2), 8 * 3e-5, rtol=1e-9)


class TestRippleGrid:
    def test_grid(self):
        """From start to stop in 2 nm steps, both ends included."""
        wl = ripple_grid(400.0, 700.0)
        assert wl[0] == 400.0 and wl[-1] == 700.0 and wl.size == 151

    def test_too_short(self):
        """Fewer than 3 wavelengths is refused."""
        with pytest.raises(WorkbenchError, match=r"^the ripple penalty needs at least 3 wavelengths \(got 2\)$"):
            ripple_grid(400.0, 402.0)


class TestRippleScale:
    def test_value(self):
        """weight · √(fit residuals / second differences)."""
        assert ripple_scale(2.0, 100, 25) == pytest.approx(4.0, rel=1e-15)


class TestRippleResiduals:
    def _stack(self):
        mats = resolve_materials(MATS)
        layers = parse_layer_formula("(0.5L H 0.5L)^4", mats)
        wl = ripple_grid(400.0, 700.0)
        N = np.stack([mats[x.symbol].index(wl) for x in layers])
        d = physical_thicknesses(layers, mats, 450.0)
        glass = material_named("crown-517").index(wl)
        return N, d, wl, glass

    def test_second_differences_of_s_then_p(self):
        """The residuals are the second differences of the engine's chief-ray R_s, then R_p (Macleod 2010, ch. 2)."""
        N, d, wl, glass = self._stack()
        r = ripple_residuals(N, d, wl, 20.0, incident=glass.real, substrate=glass)
        R = stack_response(N, d, wl, [20.0], incident=glass.real, substrate=glass).R[:, 0]
        np.testing.assert_allclose(r, np.concatenate([second_differences(R[0]), second_differences(R[1])]),
                                   atol=1e-15)

    def test_jacobian_against_differences(self):
        """The analytic Jacobian matches central differences of the residuals."""
        N, d, wl, glass = self._stack()
        r, J = ripple_residuals(N, d, wl, 20.0, incident=glass.real, substrate=glass, derivatives=True)
        assert J.shape == (r.size, d.size)
        h = 1e-4
        for j in (0, 3, d.size - 1):
            e = np.zeros_like(d)
            e[j] = h
            num = (ripple_residuals(N, d + e, wl, 20.0, incident=glass.real, substrate=glass)
                   - ripple_residuals(N, d - e, wl, 20.0, incident=glass.real, substrate=glass)) / (2 * h)
            np.testing.assert_allclose(J[:, j], num, atol=1e-8)

    def test_batch_rows_are_their_own(self):
        """A batch of stacks gives each row the residuals it has alone."""
        N, d, wl, glass = self._stack()
        D = np.stack([d, d * 1.01, d * 0.98])
        D[2, 1] *= 1.05
        batch = ripple_residuals(N, D, wl, 20.0, incident=glass.real, substrate=glass)
        for i in range(3):
            np.testing.assert_allclose(batch[i], ripple_residuals(N, D[i], wl, 20.0, incident=glass.real,
                                                                  substrate=glass), atol=1e-14)


class TestCoatingRipple:
    def test_forward_difference_batch(self):
        """A fit's batch (one layer moved per row, other rows at the base) equals each row computed alone."""
        design = design_from_dict(_design_dict())
        e = design.chain[0]
        ripple = CoatingRipple(e, (400.0, 700.0))
        base = {k: p.value for k, p in e.params}
        L = sum(k.startswith("layer_") for k in base)
        rows = 1 + L + 3                         # base, each layer moved, three rows that move nothing here
        params = {k: np.full(rows, v) for k, v in base.items()}
        for i in range(L):
            params[f"layer_{i + 1}_nm"][1 + i] *= 1.001
        batch = ripple(params)
        assert batch.shape == (rows, ripple.size)
        for b in (0, 1, L, rows - 1):
            alone = CoatingRipple(e, (400.0, 700.0))({k: v[b] for k, v in params.items()})
            np.testing.assert_allclose(batch[b], alone[0], atol=1e-14)
        np.testing.assert_array_equal(batch[-3:], np.broadcast_to(batch[0], (3, ripple.size)))

    def test_not_a_coating(self):
        """Another kind of element is refused."""
        design = design_from_dict(dict(_design_dict(), chain=[{"name": "flat", "type": "neutral-density",
                                                               "density": 0.0}]))
        with pytest.raises(WorkbenchError, match=r"^'flat' must be a loaded coating element \(got type "
                                                 r"'neutral-density'\)$"):
            CoatingRipple(design.chain[0], (400.0, 700.0))


class TestCoatingSmoothness:
    def test_appended_scaled_blocks(self):
        """The objective is the colour residuals then each free face's second differences × w·√(m/n)."""
        design = design_from_dict(_design_dict(2.0))
        ev = DesignEvaluator(design)
        obj = Objective(ev)
        assert obj.smoothness.names == ("blue", "red")
        X = np.stack([ev.start, ev.start * 1.01])
        r = obj(X)
        colour = ev.residuals(X)
        m = colour.shape[-1]
        np.testing.assert_array_equal(r[:, :m], colour)
        blocks = []
        for e in design.chain:
            rip = CoatingRipple(e, (400.0, 700.0))
            cols = [ev.free.index(f"{e.name}.{k}") for k, _ in e.params if k.startswith("layer_")]
            params = {f"layer_{i + 1}_nm": X[:, c] for i, c in enumerate(cols)}
            params.update({k: p.value for k, p in e.params if not k.startswith("layer_")})
            blocks.append(2.0 * np.sqrt(m / rip.size) * rip(params))
        np.testing.assert_allclose(r[:, m:], np.concatenate(blocks, axis=-1), rtol=1e-12, atol=1e-15)
        c, s = obj.split(X)
        np.testing.assert_allclose(c + s, np.sum(r ** 2, axis=-1), rtol=1e-12)

    def test_zero_weight_is_the_colour_objective(self):
        """coating_smoothness = 0: no term, the objective is the evaluator's residuals exactly."""
        design = design_from_dict(_design_dict(0.0))
        ev = DesignEvaluator(design)
        obj = Objective(ev)
        assert obj.smoothness is None
        X = np.stack([ev.start, ev.start * 0.99])
        np.testing.assert_array_equal(obj(X), ev.residuals(X))

    def test_no_free_layers_no_term(self):
        """Coatings whose layers are all fixed get no term, whatever the weight."""
        ev = DesignEvaluator(design_from_dict(_design_dict(5.0, free=False)))
        assert CoatingSmoothness(ev, 5.0).elements == []


class TestFitWithSmoothness:
    def test_zero_weight_is_the_old_fit(self):
        """With the key 0 the fit minimises the evaluator's residuals alone: its cost is theirs, nothing split."""
        design = design_from_dict(_design_dict(0.0))
        res = fit_design(design, progress=False)
        assert res.smoothness is None
        ev = DesignEvaluator(design)
        x = np.array([res.design.parameters()[k].value for k in ev.free])
        r = ev.residuals(x[None])[0]
        assert res.cost_after == pytest.approx(float(r @ r), rel=1e-9)
        assert "smoothness" in res.to_dict() and res.to_dict()["smoothness"] is None

    @pytest.mark.parametrize("scale", [None, 1.0001], ids=["start", "start-perturbed"])
    def test_penalised_refit_has_less_ripple(self, scale):
        """The penalised refit (weight 10) ends with a red face at least 20 % smoother than the unpenalised one."""
        free = fit_design(design_from_dict(_design_dict(0.0, scale=scale)), progress=False)
        smooth = fit_design(design_from_dict(_design_dict(10.0, scale=scale)), progress=False)
        r0, r1 = _rms_ripple(free.design), _rms_ripple(smooth.design)
        # measured: 0.0073 unpenalised, 0.0051 penalised (both from 0.0114 at the start)
        assert r1 < 0.8 * r0
        sm = smooth.smoothness
        assert sm["weight"] == 10.0 and sm["elements"] == ["blue", "red"]
        assert sm["colour_cost_after"] + sm["smoothness_cost_after"] == pytest.approx(smooth.cost_after, rel=1e-9)
        assert sm["colour_cost_before"] + sm["smoothness_cost_before"] == pytest.approx(smooth.cost_before,
                                                                                      rel=1e-9)


class TestCoatingSmoothnessKey:
    def test_default(self):
        """Without the key the weight is 1, the recipe refinement's."""
        assert design_from_dict(_design_dict()).fit.coating_smoothness == 1.0

    def test_round_trip(self, tmp_path):
        """The key survives saving and loading; with free layers the default is written too."""
        for w in (2.5, 0.0, None):
            design = design_from_dict(_design_dict(w))
            path = tmp_path / "d.toml"
            save_design(design, path)
            assert "coating_smoothness = " in path.read_text()
            assert load_design(path).fit.coating_smoothness == (1.0 if w is None else w)

    def test_not_written_without_free_layers(self, tmp_path):
        """A design with no free coating layers and the default weight does not carry the key."""
        path = tmp_path / "d.toml"
        save_design(design_from_dict(_design_dict(free=False)), path)
        assert "coating_smoothness" not in path.read_text()

    @pytest.mark.parametrize("bad, shown", [(-1, "-1"), ("high", "'high'"), (True, "true"), (float("inf"), "inf"),
                                            (1e308, "1e+308"), (1000.5, "1000.5")])
    def test_rejected(self, bad, shown):
        """A weight outside [0, 1000] (recipe --smoothness's range; 1e308 made every fit evaluation fail) is refused in one line."""
        with pytest.raises(DesignError) as info:
            design_from_dict(_design_dict(bad))
        assert str(info.value) == ("1 problem in the design file (fit.coating_smoothness)\n"
                                   f"  fit.coating_smoothness: expected a number in [0, 1000] (got {shown})")

    def test_recipe_writes_the_key(self, demo_design):
        """coated_design with free layers writes the weight it is given (the recipe's --smoothness)."""
        from workbench.analysis.recipe import coated_design, splitter_recipes

        faces = splitter_recipes(demo_design, periods=3, refine=False)
        assert coated_design(demo_design, faces, free_layers=True, coating_smoothness=0.5).fit.coating_smoothness == 0.5
        assert coated_design(demo_design, faces, free_layers=True).fit.coating_smoothness == 1.0
        fixed = replace(demo_design, fit=replace(demo_design.fit, coating_smoothness=3.0))
        assert coated_design(fixed, faces, free_layers=True).fit.coating_smoothness == 3.0


class TestFitCommandSplit:
    def test_summary_metrics_and_report_show_the_split(self, tmp_path, capsys):
        """workbench fit prints, stores in metrics.json and reports the colour objective and the smoothness term."""
        import json

        from workbench.cli.main import main

        path = tmp_path / "faces.toml"
        save_design(design_from_dict(_design_dict(1.0, max_evaluations=60)), path)
        rc = main(["fit", str(path), "--out", str(tmp_path / "o")])
        assert rc in (0, 3)                                  # converged, or the small budget spent
        out = capsys.readouterr().out
        line = next(x for x in out.splitlines() if x.startswith("cost Σr² = colour objective "))
        assert "coating smoothness" in line and "(weight 1: ripple of blue, red," in line
        m = json.loads((tmp_path / "o" / "metrics.json").read_text())
        sm = m["smoothness"]
        assert sm["weight"] == 1.0 and sm["elements"] == ["blue", "red"]
        assert sm["colour_cost_after"] + sm["smoothness_cost_after"] == pytest.approx(m["cost_after"], rel=1e-9)
        assert sm["smoothness_cost_after"] > 0
        html = (tmp_path / "o" / "report.html").read_text()
        assert "<b>Coating smoothness</b> (weight 1; blue, red)" in html
        assert load_design(tmp_path / "o" / "design.toml").fit.coating_smoothness == 1.0
