"""The colour pipeline, the measures and the fit, checked against outside references."""

from __future__ import annotations

import json
import threading

import numpy as np
import pytest

from colour_reference import evaluate_with_colour, gaussian_camera
from workbench.analysis.camera import (ColourBench, bradford_matrix, least_squares_matrix,
                              white_preserving_matrix)
from workbench.colorimetry.cie import cmfs_on, illuminant_on
from workbench.fileio.design_toml import load_design
from workbench.errors import WorkbenchError
from workbench.analysis.evaluator import DesignEvaluator, load_camera
from workbench.analysis.measures_report import luther_residual, noise_report, sensitivity_metamerism_index
from workbench.analysis.fit import FitStatus, fit_design
from workbench.analysis.measures import neugebauer_q, vora_value
from workbench.colorimetry.primaries import primaries_named
from workbench.colorimetry.samples import ces_cie_224, tcs_cie_13_3
from workbench.model.spectra import grid

BT709 = primaries_named("ITU-R BT.709")


def d65(wl):
    return np.asarray(illuminant_on(wl, "D65")[1].values)


def illum_A(wl):
    return np.asarray(illuminant_on(wl, "A")[1].values)


# --------------------------------------------------------------------------
# Matrices
# --------------------------------------------------------------------------


class TestMatrices:
    def setup_method(self):
        rng = np.random.default_rng(7)
        self.C = rng.random((40, 3))
        self.T = self.C @ rng.normal(size=(3, 3)).T + 0.05 * rng.normal(size=(40, 3))

    def test_least_squares_equals_colour(self):
        """Least squares equals colour-science's 3-term matrix_colour_correction."""
        import colour

        M = least_squares_matrix(self.C, self.T)
        ref = colour.characterisation.matrix_colour_correction(self.C, self.T, method="Cheung 2004", terms=3)
        np.testing.assert_allclose(M, ref, atol=1e-10)  # colour-science 0.4.7 (docs/methods.md §10)

    def test_white_preserving_maps_white_exactly(self):
        """The white-preserving matrix maps w_c to w_t to rounding."""
        wc, wt = np.array([0.9, 1.1, 1.0]), np.array([1.0, 1.0, 1.0])
        M = white_preserving_matrix(self.C, self.T, white_camera=wc, white_target=wt)
        np.testing.assert_allclose(M @ wc, wt, atol=1e-12)

    def test_white_preserving_equals_brute_force_kkt(self):
        """The closed form equals a brute-force KKT solve of the constrained problem."""
        # Finlayson & Drew, CIC5 (1997), pp. 258-261: minimise ‖CMᵀ − T‖ s.t. M w_c = w_t
        wc, wt = np.array([0.9, 1.1, 1.0]), np.array([1.0, 0.95, 1.05])
        M = white_preserving_matrix(self.C, self.T, white_camera=wc, white_target=wt)
        G = self.C.T @ self.C
        # unknowns: the 9 entries (row by row) and 3 multipliers
        K = np.zeros((12, 12))
        rhs = np.zeros(12)
        for i in range(3):
            K[3 * i:3 * i + 3, 3 * i:3 * i + 3] = 2 * G
            K[3 * i:3 * i + 3, 9 + i] = wc
            K[9 + i, 3 * i:3 * i + 3] = wc
            rhs[3 * i:3 * i + 3] = 2 * self.C.T @ self.T[:, i]
            rhs[9 + i] = wt[i]
        sol = np.linalg.solve(K, rhs)
        np.testing.assert_allclose(M, sol[:9].reshape(3, 3), atol=1e-10)

    def test_white_preserving_differs_from_colour_whitepoint_preserving_matrix(self):
        """colour's whitepoint_preserving_matrix only rewrites the last column: not this optimum."""
        import colour

        M = white_preserving_matrix(self.C, self.T)
        ref = colour.characterisation.whitepoint_preserving_matrix(least_squares_matrix(self.C, self.T))
        cost = lambda m: np.sum((self.C @ m.T - self.T) ** 2)  # noqa: E731
        # Finlayson & Drew (1997) optimum vs colour-science 0.4.7: both map (1,1,1) to (1,1,1); the closed form has the lower cost (docs/methods.md §10)
        np.testing.assert_allclose(ref @ np.ones(3), np.ones(3), atol=1e-12)
        assert cost(M) < cost(ref)

    def test_batched(self):
        """A batch of problems gives each problem's own matrix."""
        C2 = np.stack([self.C, self.C * [1, 2, 3]])
        M = least_squares_matrix(C2, np.stack([self.T, self.T]))
        np.testing.assert_allclose(M[0], least_squares_matrix(self.C, self.T))
        np.testing.assert_allclose(M[1], least_squares_matrix(self.C * [1, 2, 3], self.T))


class TestBradford:
    def test_equals_colour(self):
        """The linear Bradford matrix equals colour-science's von Kries with the Bradford transform."""
        import colour

        A = np.array([1.09850, 1.0, 0.35585])
        D65 = np.array([0.95047, 1.0, 1.08883])
        ref = colour.adaptation.matrix_chromatic_adaptation_VonKries(A, D65, transform="Bradford")
        np.testing.assert_allclose(bradford_matrix(A, D65), ref, atol=1e-12)
        np.testing.assert_allclose(bradford_matrix(A, D65) @ A, D65, atol=1e-12)


# --------------------------------------------------------------------------
# Measures of the synthetic Gaussian camera (docs/methods.md §§8-11)
# --------------------------------------------------------------------------


class TestGaussianCamera:
    def test_vora_q_luther_residual(self):
        """ν, q and the Luther residual of the Gaussian camera (400-700 nm at 10 nm, 2°)."""
        wl = grid(400, 700, 10)
        S = gaussian_camera(wl)
        X = cmfs_on(wl).values
        # recomputed here from colour-science's CMFs and numpy projections
        import colour

        Xc = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(
            colour.SpectralShape(400, 700, 10)).values
        Pa = Xc @ np.linalg.pinv(Xc)
        Pm = S.T @ np.linalg.pinv(S.T)
        assert vora_value(S.T, X) == pytest.approx(np.trace(Pa @ Pm) / 3, abs=1e-10)
        assert vora_value(S.T, X) == pytest.approx(0.9769, abs=5e-5)  # Vora & Trussell (1993); computed (docs/methods.md §8)
        E = d65(wl)
        assert vora_value(S.T, X, E, E) == pytest.approx(0.9758, abs=5e-5)  # Vora & Trussell (1993); computed (docs/methods.md §8)
        np.testing.assert_allclose(neugebauer_q(S.T, X), [0.9467, 0.9928, 0.9865], atol=5e-5)  # Neugebauer (1956); computed (docs/methods.md §8)
        assert luther_residual(S.T, X) == pytest.approx(0.156, abs=5e-4)  # Luther (1927); computed (docs/methods.md §8)

    def test_smi(self):
        """ISO 17321-1-style SMI of the Gaussian camera: mean ΔE*ab 0.677, SMI 96.3 (D65, TCS01-08)."""
        wl = grid(380, 780, 5)
        tcs = tcs_cie_13_3(wl).flat()[:8]
        r = sensitivity_metamerism_index(gaussian_camera(wl), wl, tcs, d65(wl))
        assert r["mean_delta_E_ab"] == pytest.approx(0.677, abs=5e-4)  # ISO 17321-1-style; computed (docs/methods.md §11)
        assert r["smi"] == pytest.approx(96.3, abs=0.05)  # ISO 17321-1-style, slope 5.5 from memory (docs/methods.md §11)

    def test_smi_luther_camera_is_100(self):
        """A Luther camera scores SMI 100."""
        wl = grid(380, 780, 5)
        S = (cmfs_on(wl).values @ np.array([[1, 0.2, 0], [0.1, 1, 0], [0, 0.3, 1]]).T).T
        r = sensitivity_metamerism_index(S, wl, tcs_cie_13_3(wl).flat()[:8], d65(wl))
        assert r["smi"] == pytest.approx(100.0, abs=1e-9)  # Luther (1927): exact matrix (docs/methods.md §11)

    @pytest.mark.parametrize("method, expected", [("least-squares", 0.776), ("white-preserving", 1.088)])
    def test_delta_e_99_samples(self, method, expected):
        """Mean ΔE00 over the 99 CIE 224 samples under D65, 400-700 nm at 5 nm, to BT.709."""
        wl = grid(400, 700, 5)
        ces = ces_cie_224(wl)
        b = ColourBench(wl, ces, {"D65": d65(wl)}, BT709)
        r = b.evaluate(gaussian_camera(wl), method)
        assert r.delta_E00.mean() == pytest.approx(expected, abs=5e-4)  # CIE 142-2001; computed with colour-science 0.4.7 (docs/methods.md §10)

    def test_pipeline_equals_colour_science(self):
        """Per-sample ΔE00 under D65 and A equals a per-sample pipeline built from colour-science calls."""
        wl = grid(400, 700, 10)
        ces = ces_cie_224(wl)
        ills = {"D65": d65(wl), "A": illum_A(wl)}
        S = gaussian_camera(wl)
        ours = ColourBench(wl, ces, ills, BT709).evaluate(S, "least-squares", "per-illuminant")
        ref = evaluate_with_colour(wl, S, ces.flat(), ills)
        np.testing.assert_allclose(ours.delta_E00, ref, atol=1e-8)  # colour-science 0.4.7

    def test_delta_e_matrix_beats_least_squares(self):
        """The ΔE00-minimising matrix gives a lower weighted RMS ΔE00 than least squares."""
        wl = grid(400, 700, 10)
        b = ColourBench(wl, ces_cie_224(wl), {"D65": d65(wl)}, BT709)
        ls = b.evaluate(gaussian_camera(wl), "least-squares").delta_E00
        de = b.evaluate(gaussian_camera(wl), "delta-e00").delta_E00
        assert np.sqrt(np.mean(de ** 2)) < np.sqrt(np.mean(ls ** 2))


class TestLutherCamera:
    @pytest.mark.parametrize("mix", [np.eye(3), np.array([[0.9, 0.3, 0.0], [0.1, 1.0, 0.2], [0.0, 0.1, 1.1]])])
    def test_luther_camera_is_perfect(self, mix):
        """CIE functions (or an invertible mix) give ν = 1, q = 1 and ΔE00 = 0 under D65 and A."""
        wl = grid(380, 780, 5)
        S = (cmfs_on(wl).values @ mix.T).T
        X = cmfs_on(wl).values
        E = d65(wl)
        assert vora_value(S.T, X, E, E) == pytest.approx(1.0, abs=1e-12)  # Luther (1927); docs/methods.md §8
        np.testing.assert_allclose(neugebauer_q(S.T, X, E, E), 1.0, atol=1e-12)
        b = ColourBench(wl, ces_cie_224(wl), {"D65": E, "A": illum_A(wl)}, BT709)
        for method in ("least-squares", "white-preserving"):
            r = b.evaluate(S, method, "per-illuminant")
            assert r.delta_E00.max() < 1e-9  # a linear map exists: the Bradford transform is 3×3

    def test_luther_design_through_the_chain(self, tmp_path):
        """A design whose sensor is the CIE functions through a flat chain scores ν = q = 1, ΔE00 = 0."""
        wl = grid(380, 780, 5)
        X = cmfs_on(wl).values
        rows = "\n".join(f"{w:g},{x:.17g},{y:.17g},{z:.17g}" for w, (x, y, z) in zip(wl, X))
        (tmp_path / "qe.csv").write_text("wavelength_nm,r,g,b\n" + rows + "\n")
        (tmp_path / "d.toml").write_text(
            'schema = 1\nname = "luther"\n[grid]\nstart_nm = 380\nstop_nm = 780\nstep_nm = 5\n'
            '[target]\nkind = "primaries"\nname = "ITU-R BT.709"\n'
            '[[chain]]\nname = "nd"\ntype = "neutral-density"\ndensity = 0.3\n'
            '[[chain]]\nname = "s"\ntype = "sensor-qe"\nfile = "qe.csv"\n'
            'columns = { R = "r", G = "g", B = "b" }\n'
            '[[samples]]\nname = "ces"\nsource = "cie-224"\n'
            '[[illuminants]]\nname = "d65"\ncie = "D65"\n'
            '[fit]\nrecording_illuminant = "d65"\nviewing_illuminant = "d65"\n')
        m = DesignEvaluator(load_design(tmp_path / "d.toml")).measures()
        assert m.vora_value == pytest.approx(1.0, abs=1e-12)
        np.testing.assert_allclose(m.neugebauer_q, 1.0, atol=1e-12)
        assert m.delta_E00["d65"]["max"] < 1e-9
        assert m.luther_residual < 1e-9
        assert m.smi["smi"] == pytest.approx(100.0, abs=1e-9)
        # the curves after balance and matrix are the targets themselves
        np.testing.assert_allclose(m.curves, m.targets, atol=1e-9 * np.abs(m.targets).max())

    def test_curves_integrate_to_the_matrix_white(self, demo_design):
        """Σ curves·E = M·(1, 1, 1) and Σ targets·E = (1, 1, 1) under the curve illuminant."""
        ev = DesignEvaluator(demo_design)
        m = ev.measures()
        j = m.illuminants.index(m.curve_illuminant)
        E = ev.bench.E[j]
        np.testing.assert_allclose(m.curves @ E, m.matrices[j] @ np.ones(3), atol=1e-12)
        np.testing.assert_allclose(m.targets @ E, np.ones(3), atol=1e-12)


# --------------------------------------------------------------------------
# Noise
# --------------------------------------------------------------------------


class TestNoise:
    def test_identity_matrix_shot_noise(self):
        """With M = I, no read noise and equal channels, σ_out = √(grey·e_w)/e_w per channel."""
        from workbench.model.design import NoiseModel

        nm = NoiseModel(full_well_e=10000, read_noise_e=0, exposure=1.0, grey=0.25)
        r = noise_report(np.eye(3), np.ones(3), nm)
        # Poisson statistics (common practice): σ = √N electrons for N electrons
        np.testing.assert_allclose(r["sigma_out"], np.sqrt(2500) / 10000)
        np.testing.assert_allclose(r["row_norms"], 1.0)
        assert r["condition"] == pytest.approx(1.0)

    def test_matrix_propagation(self):
        """σ_out² = Σ_j M_ij² σ_j² for independent channel noise (Σ_out = M Σ Mᵀ)."""
        from workbench.model.design import NoiseModel

        nm = NoiseModel(full_well_e=20000, read_noise_e=10, exposure=0.5, grey=0.18)
        M = np.array([[1.6, -0.5, -0.1], [-0.2, 1.3, -0.1], [0.0, -0.2, 1.2]])
        w = np.array([0.5, 1.0, 0.7])
        r = noise_report(M, w, nm)
        e_w = 0.5 * 20000 * w / 1.0
        s_in = np.sqrt(0.18 * e_w + 100) / e_w
        np.testing.assert_allclose(r["sigma_out"], np.sqrt(np.diag(M @ np.diag(s_in ** 2) @ M.T)))


# --------------------------------------------------------------------------
# The design evaluator and the fit
# --------------------------------------------------------------------------


def _recovery_design(tmp_path, c0=530.0, w0=40.0):
    """A design that is a Luther camera exactly when its long-pass edge sits at (c0, w0)."""
    from workbench.optics import elements as optics

    wl = grid(380, 780, 5)
    X = cmfs_on(wl).values
    edge = optics.edge(wl, c0, w0, kind="long-pass", block_level=0.3)
    qe = X / edge[:, None]
    rows = "\n".join(f"{w:g},{a:.17g},{b:.17g},{c:.17g}" for w, (a, b, c) in zip(wl, qe))
    (tmp_path / "qe.csv").write_text("wavelength_nm,r,g,b\n" + rows + "\n")
    p = tmp_path / "rec.toml"
    p.write_text(
        'schema = 1\nname = "recovery"\n[grid]\nstart_nm = 380\nstop_nm = 780\nstep_nm = 5\n'
        '[target]\nkind = "observer"\n'
        '[[chain]]\nname = "edge"\ntype = "long-pass"\nblock_level = 0.3\n'
        'center_nm = { value = 548.0, min = 480.0, max = 600.0, free = true }\n'
        'width_nm = { value = 25.0, min = 10.0, max = 80.0, free = true }\n'
        '[[chain]]\nname = "s"\ntype = "sensor-qe"\nfile = "qe.csv"\n'
        'columns = { R = "r", G = "g", B = "b" }\n'
        '[[samples]]\nname = "ces"\nsource = "cie-224"\n'
        '[[illuminants]]\nname = "d65"\ncie = "D65"\n'
        '[fit]\nobjective = "vora"\nrecording_illuminant = "d65"\nviewing_illuminant = "d65"\n')
    return p


class TestFit:
    def test_recovers_known_parameters(self, tmp_path):
        """From a perturbed start the fit recovers the edge (530 nm, 40 nm) within 0.01 nm."""
        r = fit_design(load_design(_recovery_design(tmp_path)), progress=False)
        got = {p["name"]: p["value"] for p in r.parameters}
        assert r.converged, r.message
        assert got["edge.center_nm"] == pytest.approx(530.0, abs=0.01)
        assert got["edge.width_nm"] == pytest.approx(40.0, abs=0.01)
        assert r.after.vora_value == pytest.approx(1.0, abs=1e-9)
        assert r.before.vora_value < r.after.vora_value

    @pytest.mark.parametrize("objective", ["luther-residual", "mean-delta-e00"])
    def test_other_objectives_recover(self, tmp_path, objective):
        """The spectral and colorimetric objectives reach the same Luther optimum."""
        p = _recovery_design(tmp_path)
        p.write_text(p.read_text().replace('objective = "vora"', f'objective = "{objective}"'))
        r = fit_design(load_design(p), progress=False)
        got = {q["name"]: q["value"] for q in r.parameters}
        assert got["edge.center_nm"] == pytest.approx(530.0, abs=0.2)
        assert r.after.delta_E00["d65"]["mean"] < 0.01

    def test_vora_residual_sums_to_one_minus_nu(self, tmp_path):
        """The ν objective's residual vector has Σ r² = 1 − ν exactly."""
        ev = DesignEvaluator(load_design(_recovery_design(tmp_path)))
        r = ev.residuals(ev.start)[0]
        assert float(r @ r) == pytest.approx(1 - ev.measures().vora_value, abs=1e-12)

    def test_demo_fit_improves_and_serialises(self, demo_design):
        """The demo fit raises ν, keeps bounds, flags parameters at bounds and gives valid JSON."""
        d = demo_design
        r = fit_design(d, progress=False)
        assert r.after.vora_value > r.before.vora_value
        for p in r.parameters:
            assert p["min"] <= p["value"] <= p["max"]
            assert (p["at_bound"] is not None) == (p["value"] in (p["min"], p["max"])
                                                   or abs(p["value"] - p["min"]) < 1e-4
                                                   or abs(p["value"] - p["max"]) < 1e-4)
        data = json.loads(r.to_json())
        assert data["after"]["vora_value"] == pytest.approx(r.after.vora_value)
        assert set(data["after"]["delta_E00"]) == set(r.after.illuminants)
        assert "<table>" in r._repr_html_()
        # the fitted design carries its matrix and reloads with it
        assert r.design.matrix is not None and r.design.matrix.method == "least-squares"

    def test_stop_event_keeps_best_so_far(self, demo_design):
        """A set stop event ends the fit at once, reported as stopped (status 3), with the start kept."""
        stop = threading.Event()
        stop.set()
        r = fit_design(demo_design, progress=False, stop=stop)
        assert r.status == FitStatus.STOPPED == 3 and not r.converged
        assert r.evaluations == 1
        assert r.after.vora_value == pytest.approx(r.before.vora_value)

    def test_interrupt_before_the_first_evaluation_is_stopped(self, demo_design, monkeypatch):
        """Ctrl-C or SIGTERM during the start point's evaluation: stopped (status 3, exit 130), not infeasible."""
        from workbench.analysis import fit_objective

        def interrupted(self, X):
            raise KeyboardInterrupt

        monkeypatch.setattr(fit_objective.Objective, "__call__", interrupted)
        r = fit_design(demo_design, progress=False)
        assert r.status == FitStatus.STOPPED and r.evaluations == 0
        assert "before the first evaluation finished" in r.message
        assert r.after.vora_value == pytest.approx(r.before.vora_value)  # the start values kept

    def test_global_start_is_seeded(self, tmp_path):
        """Multi-start with the same seed gives the same result."""
        p = _recovery_design(tmp_path)
        d = load_design(p)
        a = fit_design(d, progress=False, global_start="multi-start", seed=3)
        b = fit_design(d, progress=False, global_start="multi-start", seed=3)
        assert [x["value"] for x in a.parameters] == [x["value"] for x in b.parameters]
        assert a.after.vora_value == pytest.approx(1.0, abs=1e-9)

    def test_differential_evolution(self, tmp_path):
        """Differential evolution then the local fit reaches the optimum."""
        d = load_design(_recovery_design(tmp_path))
        r = fit_design(d, progress=False, global_start="differential-evolution", seed=1)
        got = {q["name"]: q["value"] for q in r.parameters}
        assert got["edge.center_nm"] == pytest.approx(530.0, abs=0.05)

    @pytest.mark.slow  # a fit with the ΔE00 matrix
    def test_delta_e_matrix_fitted_jointly(self, tmp_path):
        """With the ΔE00 objective and matrix, the matrix entries are fitted with the filters."""
        p = _recovery_design(tmp_path)
        p.write_text(p.read_text().replace('objective = "vora"',
                                           'objective = "mean-delta-e00"\nmatrix = "delta-e00"'))
        r = fit_design(load_design(p), progress=False)
        assert r.after.matrix_method == "delta-e00"
        assert r.after.delta_E00["d65"]["mean"] < 0.01

    def test_shared_evaluator_starts_from_the_given_state(self, tmp_path):
        """An evaluator made for another state of the same file fits from the given design's values."""
        d = load_design(_recovery_design(tmp_path))
        ev = DesignEvaluator(d)
        moved = d.with_values({"edge.center_nm": 560.0, "edge.width_nm": 60.0})
        calls = []
        r = fit_design(moved, progress=False, evaluator=ev, callback=calls.append)
        ref = fit_design(moved, progress=False)
        assert [p["start"] for p in r.parameters] == [560.0, 60.0]
        assert r.before.vora_value == pytest.approx(ref.before.vora_value, abs=1e-14)
        assert [p["value"] for p in r.parameters] == pytest.approx([p["value"] for p in ref.parameters], abs=1e-9)
        # the callback sees the running count of evaluations, ending at the total
        assert calls == sorted(calls) and calls[-1] == r.evaluations

    def test_no_free_parameters(self, tmp_path):
        """A design with nothing free is refused with a one-line error."""
        p = _recovery_design(tmp_path)
        p.write_text(p.read_text().replace("free = true", "free = false"))
        with pytest.raises(WorkbenchError, match="no free parameters to fit"):
            fit_design(load_design(p), progress=False)


class TestBatch:
    def test_batch_equals_single(self, demo_design):
        """A batch of parameter values gives each member's single-state measures."""
        d = demo_design
        ev = DesignEvaluator(d)
        bg = np.array([520.0, 532.0, 545.0])
        b = ev.batch({"prism.blue_green_nm": bg})
        for i, v in enumerate(bg):
            m = ev.measures({"prism.blue_green_nm": float(v)})
            assert b.vora_value[i] == pytest.approx(m.vora_value, abs=1e-12)
            for ill in m.illuminants:
                assert b.delta_E00[ill].mean[i] == pytest.approx(m.delta_E00[ill]["mean"], abs=1e-10)

    def test_fixed_matrix(self, demo_design):
        """A fixed matrix is used as given for every unit."""
        ev = DesignEvaluator(demo_design)
        m = ev.measures()
        b = ev.batch({"prism.blue_green_nm": np.array([532.0, 540.0])}, matrices=m.matrices)
        np.testing.assert_allclose(b.matrices[1], m.matrices)


class TestLoadCamera:
    def test_design_camera_renders_like_the_bench(self, demo_design, demo_design_path):
        """A camera from the demo design reproduces the evaluator's camera Lab under D65."""
        d = demo_design
        ev = DesignEvaluator(d)
        m = ev.measures()
        cam = load_camera(demo_design_path)
        j = m.illuminants.index("daylight")
        lab = cam.Lab(ev.bench.R, ev.bench.E[j])
        np.testing.assert_allclose(lab, m.camera_Lab[j], atol=1e-9)

    def test_csv_camera(self, tmp_path):
        """Three sensitivity columns load as a camera with a least-squares matrix."""
        wl = grid(380, 780, 5)
        S = gaussian_camera(wl)
        rows = "\n".join(f"{w:g},{a:.10g},{b:.10g},{c:.10g}" for w, (a, b, c) in zip(wl, S.T))
        (tmp_path / "s.csv").write_text("wavelength_nm,R,G,B\n" + rows + "\n")
        cam = load_camera(tmp_path / "s.csv")
        assert cam.sensitivities.shape == (3, wl.size)
        white = cam.display_rgb(np.ones(wl.size), d65(wl))
        assert np.all(np.abs(white - 1) < 0.05)

    def test_csv_with_two_columns_is_refused(self, tmp_path):
        """A sensitivity file without three columns gets a one-line error naming it."""
        (tmp_path / "s.csv").write_text("wavelength_nm,R,G\n400,0.1,0.2\n500,0.3,0.4\n600,0.2,0.1\n")
        with pytest.raises(WorkbenchError, match=r"s\.csv: expected three sensitivity columns"):
            load_camera(tmp_path / "s.csv")


class TestBoundCosts:
    """What each bound costs: the first-order gains against a re-fit with the bound moved."""

    def _fit(self, tmp_path, width_max):
        p = _recovery_design(tmp_path)
        p.write_text(p.read_text().replace("max = 80.0", f"max = {width_max}"))
        return fit_design(load_design(p), progress=False)

    def test_matches_a_refit_with_the_bound_moved(self, tmp_path):
        """The width capped at 30 nm (optimum 40): gains per nm match a re-fit at 30.2 nm within 10 %."""
        a = self._fit(tmp_path, 30.0)
        assert a.converged
        (c,) = a.bound_costs
        assert (c["name"], c["bound"], c["direction"], c["unit"]) == ("edge.width_nm", "max", "higher", "nm")
        b = self._fit(tmp_path, 30.2)
        # first-order sensitivity against the secant of two converged fits (Nocedal & Wright 2006, § 12.8)
        d_cost = (b.cost_after - a.cost_after) / 0.2
        d_nu = (b.after.vora_value - a.after.vora_value) / 0.2
        d_de = (b.after.weighted_mean_delta_E00 - a.after.weighted_mean_delta_E00) / 0.2
        assert c["d_cost"] < 0 and c["d_cost"] == pytest.approx(d_cost, rel=0.1)
        assert c["d_vora"] == pytest.approx(d_nu, rel=0.1)
        assert c["d_vora"] == pytest.approx(-c["d_cost"], rel=1e-3)  # Σ r² = 1 − ν for the ν objective
        assert c["d_mean_delta_E00"] == pytest.approx(d_de, rel=0.25)

    def test_none_when_nothing_at_a_bound(self, tmp_path):
        """A fit whose optimum lies inside the bounds reports no bound costs."""
        assert self._fit(tmp_path, 80.0).bound_costs == ()


@pytest.fixture(scope="module")
def demo_de(demo_design):
    """The demo design with the ΔE00 objective, and its evaluator."""
    from dataclasses import replace

    d = replace(demo_design, fit=replace(demo_design.fit, objective="mean-delta-e00"))
    return d, DesignEvaluator(d)


class TestAcrossIlluminants:
    """Weights per illuminant and the worst-illuminant (smooth maximum) objective."""

    def test_worst_residual_sums_to_the_smooth_maximum(self, demo_de):
        """Σ r² = (Σ_j m_j^p)^(1/p) of the per-illuminant weighted means, between max and J^(1/p)·max."""
        from workbench.analysis.fit_objective import WORST_P, Objective as _Objective

        _, ev = demo_de
        obj = _Objective(ev, across="worst")
        x = ev.start[None]
        r = obj(x)[0]
        m = obj.headline(x)["mean_by_illuminant"][0]
        G = np.sum(m ** WORST_P) ** (1 / WORST_P)
        assert float(r @ r) == pytest.approx(G, rel=1e-12)
        assert m.max() <= G <= len(m) ** (1 / WORST_P) * m.max()

    def test_weights_scale_the_illuminant_blocks(self, demo_de):
        """With weights ω the cost is Σ_j (ω_j/Σω)·RMS_j² (sample-weighted RMS ΔE00 per illuminant)."""
        from workbench.analysis.fit_objective import Objective as _Objective

        _, ev = demo_de
        names = ev.bench.illuminant_names
        om = np.array([1.0, 3.0, 0.5])
        obj = _Objective(ev, illuminant_weights=dict(zip(names, om)))
        x = ev.start[None]
        r = obj(x)[0]
        _, C, M = obj.parts(x)
        d = ev.bench.delta_e(C, M)[0]
        w = ev.bench.weights
        rms2 = (d ** 2 @ w) / w.sum()
        assert float(r @ r) == pytest.approx(float(om @ rms2 / om.sum()), rel=1e-12)

    @pytest.mark.slow  # two fits of the demo design
    def test_worst_balances_the_lights(self, demo_de):
        """On the demo (shared least-squares matrix) the worst light's mean ΔE00 drops below the mean fit's."""
        d, ev = demo_de
        mean_fit = fit_design(d, progress=False, evaluator=ev, across_illuminants="weighted-mean")
        worst_fit = fit_design(d, progress=False, evaluator=ev, across_illuminants="worst")
        worst = {r: max(v["mean"] for v in f.after.delta_E00.values())
                 for r, f in (("mean", mean_fit), ("worst", worst_fit))}
        assert worst_fit.converged and worst_fit.across_illuminants == "worst"
        assert worst["worst"] < worst["mean"] - 0.03
        assert worst["worst"] < 1.2

    def test_needs_the_delta_e_objective(self, demo_design):
        """The ν objective with the worst-illuminant rule is refused in one line."""
        from dataclasses import replace

        vora = replace(demo_design, fit=replace(demo_design.fit, objective="vora", across_illuminants="weighted-mean"))
        with pytest.raises(WorkbenchError) as e:
            fit_design(vora, progress=False, across_illuminants="worst")
        assert str(e.value) == (f"{demo_design.source}: illuminant weights and the worst-illuminant objective "
                                "need [fit] objective = \"mean-delta-e00\" (got 'vora')")

    def test_unknown_illuminant_weight(self, demo_design):
        """A weight for a light the fit does not use is refused, naming the fit's lights."""
        with pytest.raises(WorkbenchError) as e:
            fit_design(demo_design, progress=False, illuminant_weights={"moon": 2.0})
        assert str(e.value) == ("'illuminant weight moon' must name one of the fit's illuminants "
                                "(daylight, tungsten, stage-led) (got 'moon')")


@pytest.fixture(scope="module")
def front(tmp_path_factory):
    """A 4-point front of the recovery design made inexact (its edge blocks 0.1, the QE assumes 0.3)."""
    from workbench.analysis.fit_modes import fit_front

    p = _recovery_design(tmp_path_factory.mktemp("front"))
    p.write_text(p.read_text().replace("block_level = 0.3", "block_level = 0.1"))
    d = load_design(p)
    ev = DesignEvaluator(d)
    return d, ev, fit_front(d, 4, evaluator=ev, progress=False)


class TestFront:
    """The accuracy-noise front."""

    def test_points_are_non_dominated(self, front):
        """No point has an objective cost and a noise gain both as good as another's, one better (Miettinen 1999, § 2.2)."""
        _, _, pts = front
        assert len(pts) == 4
        for i, p in enumerate(pts):
            for j, q in enumerate(pts):
                if i != j:
                    a, b = (q["accuracy_cost"], q["noise_gain_rms"]), (p["accuracy_cost"], p["noise_gain_rms"])
                    assert not (a[0] <= b[0] and a[1] <= b[1] and a != b)
        ts = [p["t"] for p in pts]
        assert ts == sorted(ts) and ts[0] == 0.0

    def test_end_points_match_the_single_objective_fits(self, front):
        """t = 0 is the accuracy fit; t = 1 equals a noise-only fit started from the design's own values."""
        d, ev, pts = front
        acc = fit_design(d, progress=False, evaluator=ev)
        assert pts[0]["mean_delta_E00"] == pytest.approx(float(np.mean(acc.after.per_sample)), abs=1e-9)
        rn = np.linalg.norm(acc.after.matrices, axis=-1)
        g0 = float(np.sqrt(np.mean(rn ** 2)))
        noise = fit_design(d, progress=False, evaluator=ev, _mix=(1.0, max(acc.cost_after, 1e-12), g0))
        m = ev.with_design(noise.design).measures()
        g1 = float(np.sqrt(np.mean(np.linalg.norm(m.matrices, axis=-1) ** 2)))
        assert pts[-1]["t"] == 1.0
        assert pts[-1]["noise_gain_rms"] == pytest.approx(g1, rel=1e-3)
        assert pts[-1]["noise_gain_rms"] < pts[0]["noise_gain_rms"]

    def test_delta_e_matrix_refused(self, tmp_path):
        """A ΔE00 matrix has no noise-only end: refused in one line."""
        from workbench.analysis.fit_modes import fit_front

        p = _recovery_design(tmp_path)
        p.write_text(p.read_text().replace('objective = "vora"', 'objective = "mean-delta-e00"\nmatrix = "delta-e00"'))
        with pytest.raises(WorkbenchError) as e:
            fit_front(load_design(p), 3, progress=False)
        assert str(e.value) == ("'--front' needs a matrix computed by its rule ([fit] matrix = \"least-squares\" or "
                                "\"white-preserving\"); a ΔE00 matrix is fitted freely and shrinks to zero at the "
                                "noise-only end (got 'delta-e00')")


class TestRobust:
    """The robust (tolerance-averaged) objective."""

    def test_quadratic_with_gaussian_parameter_noise(self):
        """E f(x + δ) = f(x) + tr(HΣ)/2 for f(x) = (x − a)ᵀH(x − a)/2, δ ~ N(0, Σ); the optimum stays at a."""
        # E[(x+δ−a)ᵀH(x+δ−a)]/2 = (x−a)ᵀH(x−a)/2 + E[δᵀHδ]/2 = f(x) + tr(HΣ)/2
        # (Petersen & Pedersen, The Matrix Cookbook, 2012, eq. 318)
        from workbench.analysis.fit import _local_quasi_newton, _Tracker
        from workbench.analysis.fit_objective import tail_residuals

        rng = np.random.default_rng(5)
        A = rng.normal(size=(3, 3))
        H = A @ A.T + 3 * np.eye(3)
        a = np.array([0.3, -0.2, 0.5])
        L = np.diag([0.05, 0.1, 0.02])
        Sigma = L @ L.T
        K = 4000
        D = rng.standard_normal((K, 3)) @ L.T                       # common random numbers

        def f(X):
            E = X - a
            return 0.5 * np.einsum("...i,ij,...j->...", E, H, E)

        def residuals(X):
            X = np.atleast_2d(X)
            return tail_residuals(f(X[:, None, :] + D[None]))

        track = _Tracker(residuals, 10 ** 6, False, None)
        n = 3
        ok, _ = _local_quasi_newton(track, np.zeros(n), np.full(n, -5.0), np.full(n, 5.0), n, np.ones(n), np.zeros(n))
        assert ok
        # the sample-average optimum is a − mean(δ); the expected-loss optimum is a
        np.testing.assert_allclose(track.best_x, a - D.mean(axis=0), atol=1e-5)
        np.testing.assert_allclose(track.best_x, a, atol=4 * 0.1 / np.sqrt(K) * 3)
        expected = 0.5 * np.trace(H @ Sigma)
        assert track.best_cost == pytest.approx(expected, rel=0.05)
        # at any x: the sample mean equals f(x) + (x − a)ᵀH δ̄ + mean(δᵀHδ)/2 exactly
        x = np.array([0.1, 0.0, 0.2])
        r = residuals(x)[0]
        exact = f(x) + (x - a) @ H @ D.mean(axis=0) + 0.5 * np.mean(np.einsum("ki,ij,kj->k", D, H, D))
        assert float(r @ r) == pytest.approx(exact, rel=1e-12)

    def test_tail_residuals_mean_of_the_worst(self):
        """With a percentile P the cost is the mean of the worst (100 − P) % of the scores."""
        from workbench.analysis.fit_objective import tail_residuals

        u = np.array([[1.0, 5.0, 2.0, 4.0, 3.0]])
        r = tail_residuals(u, 60.0)
        assert float(np.sum(r * r)) == pytest.approx((5.0 + 4.0) / 2)
        assert float(np.sum(tail_residuals(u) ** 2)) == pytest.approx(3.0)

    def test_no_tolerances_refused(self, tmp_path):
        """A design with no toleranced parameter cannot be fitted robustly: one line."""
        from workbench.analysis.fit_modes import check_robust

        p = _recovery_design(tmp_path)
        p.write_text(p.read_text() + "[tolerance]\nmax_mean_delta_E00 = 1.0\n")
        d = load_design(p)
        with pytest.raises(WorkbenchError) as e:
            check_robust(d)
        assert str(e.value) == (f"'--robust' needs toleranced parameters: {d.source} gives no parameter a "
                                "tolerance = { distribution, width } table")

    def test_no_tolerance_section_refused(self, tmp_path):
        """A design without a [tolerance] specification has nothing to judge the yield against: one line."""
        from workbench.analysis.fit_modes import check_robust

        d = load_design(_recovery_design(tmp_path))
        with pytest.raises(WorkbenchError) as e:
            check_robust(d)
        assert str(e.value) == (f"'--robust' needs the design's [tolerance] specification (max_mean_delta_E00, "
                                f"min_vora) to judge the yield against: {d.source} has none (or only its default "
                                "values)")

    @pytest.mark.parametrize("p", [0, 100, -5, 150.0])
    def test_percentile_outside_0_100(self, demo_design, p):
        """A percentile outside (0, 100) is refused."""
        from workbench.analysis.fit_modes import check_robust

        with pytest.raises(WorkbenchError) as e:
            check_robust(demo_design, percentile=p)
        assert str(e.value) == f"'--robust-percentile' must be a number in (0, 100) (got {p!r})"


class TestConvergedAtTheStart:
    def test_a_start_at_the_optimum_is_converged(self, tmp_path):
        """Started at the exact optimum, the fit finds nothing better and still reports converged."""
        p = _recovery_design(tmp_path)
        p.write_text(p.read_text().replace("value = 548.0", "value = 530.0").replace("value = 25.0", "value = 40.0"))
        r = fit_design(load_design(p), progress=False)
        assert r.converged and r.status == FitStatus.CONVERGED


class TestOneBudget:
    def test_progress_total_is_the_budget_and_never_overrun(self, tmp_path, monkeypatch):
        """The progress bar's total is max_evaluations; the running count never passes it."""
        import tqdm.auto

        totals = []

        class Bar:
            def __init__(self, total=None, **kw):
                totals.append(total)

            def update(self, k):
                pass

            def set_postfix(self, *a, **kw):
                pass

            def close(self):
                pass

        monkeypatch.setattr(tqdm.auto, "tqdm", Bar)
        seen = []
        d = load_design(_recovery_design(tmp_path))
        r = fit_design(d, progress=True, max_evaluations=25, global_start="multi-start", callback=seen.append)
        assert totals == [25]
        assert r.budget == 25 and r.evaluations <= 25 and max(seen) <= 25
        assert r.status == FitStatus.BUDGET_SPENT and r.exit_status == 3


def test_quasi_newton_abnormal_stop_reads_as_converged(monkeypatch):
    """An L-BFGS-B line-search stop ("ABNORMAL") with a small projected gradient is reported in plain words."""
    from scipy.optimize import OptimizeResult

    import workbench.analysis.fit as fit_module

    def fake_minimize(fun, x0, **kw):
        return OptimizeResult(x=np.asarray(x0, float), fun=1.0, jac=np.zeros(len(x0)), success=False,
                              message="ABNORMAL: ")

    monkeypatch.setattr(fit_module, "minimize", fake_minimize)
    track = fit_module._Tracker(lambda X: np.atleast_2d(X), 100, False, None)
    ok, msg = fit_module._local_quasi_newton(track, np.zeros(2), np.full(2, -1.0), np.full(2, 1.0), 2, np.ones(2),
                                             np.zeros(2))
    assert ok
    assert "ABNORMAL" not in msg
    assert msg.startswith("L-BFGS-B line search stopped at the precision of the finite differences; "
                          "converged by the projected-gradient test")
