"""Tests of workbench.analysis.tolerance: sampling, statistics, the Monte Carlo run, the field shift, outputs, plots, panel."""

from __future__ import annotations

import csv
import io
import json
import math
import statistics
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from workbench.model.design import FieldPosition, Tolerance
from workbench.fileio.design_toml import load_design
from workbench.errors import InputFileError, WorkbenchError
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis import tolerance as T

DESIGN = """\
schema = 1
name = "tolerance test camera"
observer = 2

[grid]
start_nm = {start}
stop_nm = 700
step_nm = {step}

[target]
kind = "primaries"
name = "ITU-R BT.709"

[[chain]]
name = "split"
type = "dichroic-splitter"
blue_green_nm = {bg}
green_red_nm = 600.0
blue_green_width_nm = {bg_width}
green_red_width_nm = 25.0
blue_green_aoi_deg = {aoi}
green_red_aoi_deg = {aoi2}
n_eff_s = 1.8
medium_index = 1.52

[[chain]]
name = "trim"
type = "long-pass"
paths = ["G"]
center_nm = {{ value = 480.0, tolerance = {{ distribution = "normal", width = 3.0 }} }}
width_nm = {{ value = 20.0, tolerance = {{ distribution = "uniform", width = 2.0 }} }}

[[samples]]
name = "tcs"
source = "cie-13.3"

[[illuminants]]
name = "d65"
cie = "D65"

[[illuminants]]
name = "a"
cie = "A"

[fit]
recording_illuminant = "d65"
viewing_illuminant = "d65"
{extra}
"""


def write_design(tmp_path, *, name="d.toml", start=400, step=10, bg=500.0, bg_width=25.0, aoi=20.0, aoi2=10.0,
                 extra=""):
    p = tmp_path / name
    p.write_text(DESIGN.format(start=start, step=step, bg=bg, bg_width=bg_width, aoi=aoi, aoi2=aoi2, extra=extra),
                 encoding="utf-8")
    return load_design(p)


@pytest.fixture(scope="module")
def design(tmp_path_factory):
    return write_design(tmp_path_factory.mktemp("tol"))


@pytest.fixture(scope="module")
def evaluator(design):
    return DesignEvaluator(design)


@pytest.fixture(scope="module")
def result(design, evaluator):
    return T.run_tolerance(design, trials=600, seed=5, progress=False, evaluator=evaluator)


# --------------------------------------------------------------------------


class TestToleranceParameters:
    def test_from_the_design(self, design):
        """The design's toleranced parameters, in chain order, with their distributions."""
        tol = T.toleranced_parameters(design)
        assert tol == {"trim.center_nm": Tolerance("normal", 3.0), "trim.width_nm": Tolerance("uniform", 2.0)}

    def test_overrides_remove_and_scale(self, design):
        """An override replaces, None removes, scale multiplies every width."""
        tol = T.toleranced_parameters(design, {"trim.width_nm": None, "split.green_red_nm": Tolerance("normal", 1.0)},
                                      scale=0.5)
        assert tol == {"split.green_red_nm": Tolerance("normal", 0.5), "trim.center_nm": Tolerance("normal", 1.5)}

    def test_unknown_parameter(self, design):
        """An unknown key is one error line naming it and the design's parameters."""
        with pytest.raises(WorkbenchError, match=r"^tolerance for 'trim.nope': expected one of the design's "
                                                 r"parameters \(split.blue_green_nm, "):
            T.toleranced_parameters(design, {"trim.nope": Tolerance("normal", 1.0)})

    def test_bad_width_and_scale(self, design):
        """Negative widths and scales are refused with what was expected."""
        with pytest.raises(WorkbenchError, match=r"^tolerance for 'trim.center_nm': width must be a finite "
                                                 r"number >= 0 \(got -1.0\)$"):
            T.toleranced_parameters(design, {"trim.center_nm": Tolerance("normal", -1.0)})
        with pytest.raises(WorkbenchError, match=r"^tolerance scale must be a finite number >= 0 \(got -2\)$"):
            T.toleranced_parameters(design, scale=-2)
        with pytest.raises(WorkbenchError, match="distribution must be 'normal' or 'uniform'"):
            T.toleranced_parameters(design, {"trim.center_nm": Tolerance("triangle", 1.0)})


class TestSampleParameters:
    def test_normal_matches_its_distribution(self, design):
        """Normal draws pass a Kolmogorov-Smirnov test against N(nominal, width²) (fixed seed)."""
        x = T.sample_parameters(design, 4000, 11)["trim.center_nm"]
        # scipy.stats.kstest as the reference test
        assert stats.kstest(x, stats.norm(loc=480.0, scale=3.0).cdf).pvalue > 0.01
        # mean within 4 standard errors, std within 4 % (σ of s ≈ σ/√(2N) = 1.1 %)
        assert abs(x.mean() - 480.0) < 4 * 3.0 / math.sqrt(4000)
        assert abs(x.std(ddof=1) / 3.0 - 1) < 0.045

    def test_uniform_matches_its_distribution(self, design):
        """Uniform draws stay in nominal ± half-width and pass a KS test against U(18, 22)."""
        x = T.sample_parameters(design, 4000, 11)["trim.width_nm"]
        assert x.min() >= 18.0 and x.max() <= 22.0
        assert stats.kstest(x, stats.uniform(loc=18.0, scale=4.0).cdf).pvalue > 0.01
        # the standard deviation of U(a, b) is (b − a)/√12 (common practice)
        assert abs(x.std(ddof=1) / (4.0 / math.sqrt(12)) - 1) < 0.045

    def test_the_kolmogorov_smirnov_check_can_fail(self, design):
        """The same test rejects a width 20 % off, so the checks above have power."""
        x = T.sample_parameters(design, 4000, 11)["trim.center_nm"]
        assert stats.kstest(x, stats.norm(loc=480.0, scale=3.6).cdf).pvalue < 1e-3

    def test_seed_reproduces_and_streams_are_per_parameter(self, design):
        """Same seed, same draws; another seed differs; removing one tolerance leaves the other's draws."""
        a = T.sample_parameters(design, 100, 3)
        b = T.sample_parameters(design, 100, 3)
        c = T.sample_parameters(design, 100, 4)
        d = T.sample_parameters(design, 100, 3, tolerances={"trim.width_nm": None})
        np.testing.assert_array_equal(a["trim.center_nm"], b["trim.center_nm"])
        assert not np.allclose(a["trim.center_nm"], c["trim.center_nm"])
        np.testing.assert_array_equal(a["trim.center_nm"], d["trim.center_nm"])
        assert set(d) == {"trim.center_nm"}

    def test_draws_outside_the_domain_are_refused(self, design):
        """A tolerance wide enough to give widths ≤ 0 nm is an error, not a clipped value."""
        with pytest.raises(WorkbenchError, match=r"^split.blue_green_width_nm: \d+ of 500 sampled values fall "
                                                 r"outside a number in \(0, 1000\] nm \(e.g. -[\d.]+\); "
                                                 r"narrow the tolerance$"):
            T.sample_parameters(design, 500, 1, tolerances={"split.blue_green_width_nm": Tolerance("normal", 20.0)})

    def test_bad_trials_and_seed(self, design):
        """Trials and seed must be whole numbers in range."""
        with pytest.raises(WorkbenchError, match=r"^trials must be a whole number >= 1 \(got 0\)$"):
            T.sample_parameters(design, 0, 1)
        with pytest.raises(WorkbenchError, match=r"^seed must be a whole number >= 0 \(got -1\)$"):
            T.sample_parameters(design, 10, -1)
        with pytest.raises(WorkbenchError, match=r"^trials must be a whole number >= 1 \(got 2.5\)$"):
            T.sample_parameters(design, 2.5, 1)


class TestDistribution:
    def test_percentiles_and_std(self):
        """0..100: p5, p50, p95 are 5, 50, 95 (Hyndman & Fan 1996, definition 7); std as statistics.stdev."""
        x = np.arange(101.0)
        d = T.distribution(x)
        assert (d["p5"], d["p50"], d["p95"], d["min"], d["max"]) == (5.0, 50.0, 95.0, 0.0, 100.0)
        assert d["mean"] == 50.0
        assert d["std"] == pytest.approx(statistics.stdev(range(101)), rel=1e-12)  # Python stdlib, n − 1

    def test_empty_and_single(self):
        """No values give None everywhere; one value has std 0."""
        assert set(T.distribution([]).values()) == {None}
        assert T.distribution([2.0])["std"] == 0.0


class TestWilsonInterval:
    def test_against_scipy_and_a_published_example(self):
        """81 of 263: 0.2553-0.3662 (Newcombe 1998, Stat. Med. 17:857, from memory); equal to scipy's Wilson."""
        lo, hi = T.wilson_interval(81, 263)
        assert (round(lo, 4), round(hi, 4)) == (0.2553, 0.3662)  # from memory
        ci = stats.binomtest(81, 263).proportion_ci(confidence_level=0.95, method="wilson")
        assert lo == pytest.approx(ci.low, abs=1e-12) and hi == pytest.approx(ci.high, abs=1e-12)

    def test_ends(self):
        """0 of n starts at 0 and n of n ends at 1; scipy agrees on the other ends."""
        lo, hi = T.wilson_interval(0, 50)
        ci = stats.binomtest(0, 50).proportion_ci(method="wilson")
        assert lo == 0.0 and hi == pytest.approx(ci.high, abs=1e-12)
        assert T.wilson_interval(50, 50)[1] == 1.0


class TestVarianceContributions:
    def test_linear_model(self):
        """y = 3·x1 + x2 (x ~ N(0,1)): SRC² = 0.9 and 0.1 (Saltelli et al. 2008, ch. 1: β²σ²/σ_y²)."""
        rng = np.random.default_rng(0)
        X = rng.standard_normal((20000, 3))
        y = 3 * X[:, 0] + X[:, 1]
        src, r2 = T.standardized_regression(X, y)
        np.testing.assert_allclose(src ** 2, [0.9, 0.1, 0.0], atol=0.01)
        assert r2 == pytest.approx(1.0)
        eta = T.correlation_ratio(X, y, corrected=True)
        np.testing.assert_allclose(eta, [0.9, 0.1, 0.0], atol=0.02)

    def test_non_monotonic_effect(self):
        """y = x1² with x1 ~ U(−1, 1): no linear effect (SRC ≈ 0), but η² ≈ 1; a dummy input ≈ 0."""
        rng = np.random.default_rng(1)
        X = rng.uniform(-1, 1, (10000, 2))
        y = X[:, 0] ** 2
        src, _ = T.standardized_regression(X, y)
        assert abs(src[0]) < 0.05
        eta = T.correlation_ratio(X, y, corrected=True)
        assert eta[0] > 0.99 and abs(eta[1]) < 0.01
        # uncorrected, the dummy scores about (bins − 1)/(N − 1)
        raw = T.correlation_ratio(X, y)
        assert raw[1] == pytest.approx(49 / 9999, abs=0.005)

    def test_constant_response(self):
        """A response that does not vary has no ranking (NaN)."""
        X = np.random.default_rng(2).standard_normal((50, 2))
        assert np.isnan(T.correlation_ratio(X, np.ones(50))).all()
        assert np.isnan(T.standardized_regression(X, np.ones(50))[0]).all()


class TestRunTolerance:
    def test_zero_tolerances_give_the_nominal_design(self, design, evaluator):
        """Scale 0: every trial equals the nominal design, which equals the evaluator's own measures."""
        r = T.run_tolerance(design, trials=40, seed=1, scale=0.0, progress=False, evaluator=evaluator, field=False)
        m = evaluator.measures()
        assert "every tolerance width is 0: every trial is the nominal design" in r.notes
        np.testing.assert_allclose(r.vora_value, m.vora_value, rtol=1e-12)
        for case in ("fixed", "recalibrated"):
            a = r.per_case[case]
            for j, ill in enumerate(r.illuminants):
                np.testing.assert_allclose(a["delta_E00_mean"][:, j], m.delta_E00[ill]["mean"], rtol=1e-10)
                np.testing.assert_allclose(a["delta_E00_max"][:, j], m.delta_E00[ill]["max"], rtol=1e-10)
            np.testing.assert_allclose(a["gains"], np.broadcast_to(m.gains, a["gains"].shape), rtol=1e-10)
        s = r.summary()
        assert s["vora_value"]["std"] == pytest.approx(0.0, abs=1e-12)
        assert s["ranking"]["parameters"] == []  # nothing varies, nothing to rank

    def test_no_toleranced_parameter(self, tmp_path):
        """A design without tolerances runs and says every trial is the nominal design."""
        d = write_design(tmp_path)
        d = replace(d, chain=tuple(replace(e, params=tuple((k, replace(p, tolerance=None)) for k, p in e.params))
                                   for e in d.chain))
        r = T.run_tolerance(d, trials=10, seed=0, progress=False, field=False, matrix="fixed")
        assert "no parameter carries a tolerance: every trial is the nominal design" in r.notes
        assert r.trials == 10 and np.ptp(r.worst_mean("fixed")) == 0

    def test_one_parameter_is_named_and_spread_grows(self, design, evaluator):
        """With one tolerance the ranking names it, and the spread of ΔE00 grows with its width."""
        spreads = {"fixed": [], "recalibrated": []}
        for w in (1.0, 2.0, 4.0):
            r = T.run_tolerance(design, trials=400, seed=2, progress=False, evaluator=evaluator, field=False,
                                tolerances={"trim.center_nm": Tolerance("normal", w),
                                            "trim.width_nm": Tolerance("uniform", 1e-4)})
            for case in spreads:
                rk = r.ranking(case)["parameters"]
                assert rk[0]["name"] == "trim.center_nm"
                assert rk[0]["variance_contribution"] > 0.9
                spreads[case].append(float(np.std(r.per_case[case]["delta_E00_mean"][:, 0])))
        for case, s in spreads.items():
            assert s[0] < s[1] < s[2], case
            # small tolerances propagate linearly: doubling the width about doubles the spread
            assert 1.6 < s[1] / s[0] < 2.4, case

    def test_one_at_a_time_matches_the_evaluator(self, design, evaluator, result):
        """The ∓1 width changes equal the evaluator's measures with the parameter moved alone."""
        M = evaluator.measures().matrices
        y0 = max(d["mean"] for d in evaluator.measures(matrices=M).delta_E00.values())
        row = next(p for p in result.ranking("fixed")["parameters"] if p["name"] == "trim.center_nm")
        for sign, key in ((-1, "oat_minus"), (+1, "oat_plus")):
            m = evaluator.measures({"trim.center_nm": 480.0 + sign * 3.0}, matrices=M)
            y = max(d["mean"] for d in m.delta_E00.values())
            assert row[key] == pytest.approx(y - y0, abs=1e-10)

    def test_same_seed_same_json_any_chunking(self, design, evaluator):
        """The same seed gives the same JSON; chunk size and threads do not change the numbers."""
        kw = dict(trials=130, seed=9, progress=False, evaluator=evaluator)
        a = T.run_tolerance(design, chunk=50, workers=1, **kw).to_json()
        b = T.run_tolerance(design, chunk=50, workers=2, **kw).to_json()
        c = T.run_tolerance(design, chunk=130, workers=1, **kw)
        assert a == b
        np.testing.assert_allclose(json.loads(a)["cases"]["recalibrated"]["worst_mean_delta_E00"]["p95"],
                                   c.summary()["cases"]["recalibrated"]["worst_mean_delta_E00"]["p95"], rtol=1e-12)
        d = T.run_tolerance(design, trials=130, seed=10, progress=False, evaluator=evaluator)
        assert d.to_json() != a

    def test_yield_against_the_spec(self, design, evaluator, result):
        """Yield is the fraction of units meeting every illuminant's mean ΔE00 limit and ν ≥ min_vora."""
        a = result.per_case["fixed"]
        limit = float(np.median(a["delta_E00_mean"].max(axis=1)))
        spec = replace(design.tolerance, max_mean_delta_E00=limit, min_vora=0.0)
        r = T.run_tolerance(design, trials=600, seed=5, progress=False, evaluator=evaluator, spec=spec, field=False)
        expect = np.mean(np.all(r.per_case["fixed"]["delta_E00_mean"] <= limit, axis=1))
        assert r.yield_fraction("fixed") == pytest.approx(expect) == pytest.approx(0.5, abs=0.01)
        s = r.summary()
        assert s["yield"] == pytest.approx(expect)
        lo, hi = s["yield_interval_95"]
        assert lo < s["yield"] < hi
        strict = replace(spec, min_vora=1.0)
        r2 = T.run_tolerance(design, trials=50, seed=5, progress=False, evaluator=evaluator, spec=strict, field=False)
        assert r2.yield_fraction() == 0.0

    def test_stop_keeps_finished_trials(self, design, evaluator):
        """A stop request after the first chunk keeps that chunk and says the run was interrupted."""

        class StopAfterOne:
            calls = 0

            def is_set(self):
                self.calls += 1
                return self.calls > 1

        r = T.run_tolerance(design, trials=100, seed=1, chunk=30, workers=1, progress=False, evaluator=evaluator,
                            stop=StopAfterOne(), field=False)
        assert r.interrupted and r.trials == 30 and r.trials_requested == 100
        np.testing.assert_array_equal(r.trial_index, np.arange(30))
        assert "interrupted: 30 of 100 trials finished; statistics are over those" in r.notes
        assert r.summary()["interrupted"] is True

    def test_ctrl_c_keeps_finished_trials(self, design, evaluator, monkeypatch):
        """Ctrl-C during the third chunk keeps the two finished (threads too)."""
        real = T._evaluate
        calls = {"n": 0}

        def flaky(*a, **k):
            calls["n"] += 1
            if calls["n"] == 5:  # nominal, one-at-a-time, chunk 0, chunk 1, then Ctrl-C
                raise KeyboardInterrupt
            return real(*a, **k)

        monkeypatch.setattr(T, "_evaluate", flaky)
        r = T.run_tolerance(design, trials=100, seed=1, chunk=20, workers=1, progress=False, evaluator=evaluator,
                            field=False)
        assert r.interrupted and r.trials == 40

    def test_bad_arguments(self, design, evaluator):
        """Unknown matrix case and bad chunk are one-line errors."""
        with pytest.raises(WorkbenchError, match=r"^matrix must be one of fixed, recalibrated, both \(got 'x'\)$"):
            T.run_tolerance(design, trials=5, matrix="x", progress=False, evaluator=evaluator)
        with pytest.raises(WorkbenchError, match=r"^chunk must be a whole number >= 1 \(got 0\)$"):
            T.run_tolerance(design, trials=5, chunk=0, progress=False, evaluator=evaluator)

    def test_summary_carries_units_and_methods(self, result):
        """The summary has the contract's keys and says the unit and method of its numbers."""
        s = result.summary()
        assert s["trials"] == 600 and s["seed"] == 5 and s["matrix"] == "fixed"
        for ill in ("d65", "a"):
            d = s["illuminants"][ill]["delta_E00_mean"]
            assert d["p5"] <= d["p50"] <= d["p95"]
        assert set(s["cases"]) == {"fixed", "recalibrated"}
        assert s["units"]["delta_E00"].startswith("ΔE00") and s["units"]["trim.center_nm"] == "nm"
        assert {"sampling", "distribution", "yield", "variance_contribution", "one_at_a_time"} <= set(s["methods"])
        json.dumps(s, allow_nan=False)


class TestCaseSummary:
    def test_typed_fields_match_the_json(self, result):
        """A case's typed summary carries the numbers its JSON object holds (same yield, illuminants, worst)."""
        for case in result.cases:
            cs = result.case_summary(case)
            assert cs.to_dict() == result.summary()["cases"][case]
            passed = result.passed(case)
            assert cs.units_passing == int(passed.sum())
            assert cs.yield_fraction == passed.mean()  # the share of units passing, by its definition
            assert set(cs.illuminants) == set(result.illuminants)
            ill = result.illuminants[0]
            np.testing.assert_allclose(cs.illuminants[ill].delta_E00_mean["p50"],
                                       np.median(result.per_case[case]["delta_E00_mean"][:, 0]))


class TestFieldShift:
    def test_angle_reaches_the_splitter_in_glass(self, tmp_path):
        """A 5° field offset on a 20° face in glass moves a 550 nm edge to 513.8 nm (Smith, Modern Optical Engineering, Ch. 11; docs/methods.md §14)."""
        d = write_design(tmp_path, start=450, step=1, bg=550.0, bg_width=20.0, aoi=20.0)
        f = T.field_shift(d, positions=[FieldPosition("edge", 5.0)])
        wl = f.wavelengths
        b = f.sensitivities[0, 2]                              # B path = the first face's reflection
        i = int(np.argmax(b < 0.5))
        crossing = wl[i - 1] + (b[i - 1] - 0.5) / (b[i - 1] - b[i]) * (wl[i] - wl[i - 1])
        # Smith, Modern Optical Engineering, Ch. 11: λ = λ0·√(1 − (n0 sin θ / n_eff)²); 513.8 nm computed (docs/methods.md §14)
        assert crossing == pytest.approx(550 * math.sqrt(1 - (1.52 * math.sin(math.radians(25)) / 1.8) ** 2), abs=0.02)
        assert round(crossing, 1) == 513.8

    def test_centre_is_the_nominal_design(self, design, evaluator):
        """At offset 0 nothing shifts and the error against the truth is the nominal one."""
        f = T.field_shift(design, evaluator=evaluator, positions=[FieldPosition("centre", 0.0),
                                                                  FieldPosition("edge", 3.0)])
        m = evaluator.measures()
        assert np.all(f.sample_shift_max[0] == 0) and np.all(f.white_shift[0] == 0)
        np.testing.assert_allclose(f.delta_E00_mean[0], [m.delta_E00[i]["mean"] for i in f.illuminants], rtol=1e-10)
        assert np.all(f.sample_shift_mean[1] > 0) and np.all(f.white_shift[1] > 0)

    def test_shift_grows_with_the_angle_and_is_symmetric_at_normal_incidence(self, tmp_path):
        """Faces at 0°: ±δ shift alike (the cone is symmetric); a larger δ shifts more."""
        d = write_design(tmp_path, aoi=0.0, aoi2=0.0)
        f = T.field_shift(d, positions=[FieldPosition("a", -4.0), FieldPosition("b", 4.0), FieldPosition("c", 8.0)])
        np.testing.assert_allclose(f.sample_shift_mean[0], f.sample_shift_mean[1], rtol=1e-9)
        np.testing.assert_allclose(f.white_shift[0], f.white_shift[1], rtol=1e-9)
        assert np.all(f.sample_shift_mean[2] > f.sample_shift_mean[1])
        assert np.all(f.grey_shift[2] > f.grey_shift[1])

    def test_default_positions_and_the_design_s_own(self, design, tmp_path):
        """Without [[tolerance.field]] centre, edges and corners; with it, the design's positions."""
        names = [p.name for p in T.default_field_positions()]
        assert names == ["centre", "edge −3°", "edge +3°", "corner −3.44°", "corner +3.44°"]
        f = T.field_shift(design)
        assert [p.aoi_offset_deg for p in f.positions] == [0.0, -3.0, 3.0, -3.44, 3.44]
        d = write_design(tmp_path, extra='[tolerance]\n[[tolerance.field]]\nname = "rim"\naoi_offset_deg = 2.5\n')
        assert [(p.name, p.aoi_offset_deg) for p in T.field_shift(d).positions] == [("rim", 2.5)]

    def test_no_splitter(self, tmp_path):
        """Field positions need a splitter: an error when asked for, a note otherwise."""
        text = DESIGN.format(start=400, step=10, bg=500.0, bg_width=25.0, aoi=0.0, aoi2=0.0, extra="")
        head, rest = text.split("[[chain]]", 1)
        rest = rest.split("[[chain]]", 1)[1]       # drop the splitter: three edges make the channels
        edges = ('[[chain]]\nname = "r"\ntype = "long-pass"\npaths = ["R"]\ncenter_nm = 590.0\nwidth_nm = 20.0\n'
                 '[[chain]]\nname = "b"\ntype = "short-pass"\npaths = ["B"]\ncenter_nm = 500.0\nwidth_nm = 20.0\n'
                 '[[chain]]\nname = "g"\ntype = "short-pass"\npaths = ["G"]\ncenter_nm = 590.0\nwidth_nm = 20.0\n')
        (tmp_path / "plain.toml").write_text(head + edges + "[[chain]]" + rest, encoding="utf-8")
        plain = load_design(tmp_path / "plain.toml")
        with pytest.raises(WorkbenchError, match="field positions need a dichroic-splitter element in the chain"):
            T.field_shift(plain, positions=[FieldPosition("edge", 3.0)])
        r = T.run_tolerance(plain, trials=10, progress=False, matrix="fixed")
        assert r.field is None and "no dichroic-splitter in the chain: no field analysis" in r.notes

    def test_angle_out_of_range(self, design):
        """An offset that takes a face beyond 80° is refused."""
        with pytest.raises(WorkbenchError, match=r"^split.blue_green_aoi_deg \+ aoi_offset_deg must stay within ±80°"):
            T.field_shift(design, positions=[FieldPosition("far", 65.0)])


class TestOutputs:
    def test_csv_round_trip(self, result):
        """The CSV holds one row per trial, full precision, and the pass flags of the summary's yield."""
        rows = list(csv.DictReader(io.StringIO(result.trials_csv())))
        assert len(rows) == result.trials
        x = np.array([float(r["trim.center_nm"]) for r in rows])
        np.testing.assert_array_equal(x, result.samples["trim.center_nm"])
        y = np.array([float(r["fixed.d65.delta_E00_mean"]) for r in rows])
        np.testing.assert_array_equal(y, result.per_case["fixed"]["delta_E00_mean"][:, 0])
        passed = np.array([int(r["recalibrated.pass"]) for r in rows])
        assert passed.mean() == result.summary()["cases"]["recalibrated"]["yield"]

    def test_save_trials_atomically(self, result, tmp_path):
        """CSV and JSON are written whole; a folder that does not exist is an error naming the file."""
        c, j = tmp_path / "t.csv", tmp_path / "t.json"
        T.save_trials(result, csv_path=c, json_path=j)
        data = json.loads(j.read_text(encoding="utf-8"))
        assert len(data["trials_data"]["trial"]) == result.trials
        assert c.read_text(encoding="utf-8").count("\n") == result.trials + 1
        bad = tmp_path / "missing" / "t.csv"
        with pytest.raises(InputFileError, match="missing/t.csv: cannot write"):
            T.save_trials(result, csv_path=bad)
        assert sorted(p.name for p in tmp_path.iterdir()) == ["t.csv", "t.json"]  # no temporary file left

    def test_html(self, result):
        """The notebook view names yield, spec and the top tolerance."""
        h = result._repr_html_()
        assert "Yield" in h and "ΔE00" in h and "trim.center_nm" in h


class TestPlots:
    def test_figures_have_units(self, result):
        """Histograms, ranking and field shift build, with units on the axes."""
        from workbench.plots.tolerance import plot_field_shift, plot_histograms, plot_ranking

        f = plot_histograms(result, case="recalibrated")
        labels = [ax.get_xlabel() for ax in f.axes]
        assert "Vora value ν (1, 0-1)" in labels and "ΔE00 (CIEDE2000 units)" in labels
        assert all(ax.get_ylabel() == "trials" for ax in f.axes)
        g = plot_ranking(result)
        left = g.axes[0]
        assert left.get_xlabel() == "share of the variance of the response (%)"
        ticks = list(left.get_yticks())
        top_label = left.get_yticklabels()[ticks.index(max(ticks))].get_text()
        assert top_label.startswith(result.ranking()["parameters"][0]["name"])
        assert "ΔE00 units" in g.axes[1].get_xlabel()
        assert "omitted" not in g._suptitle.get_text()
        # with many parameters only the largest shares are drawn and the title says how many more there are
        n = len(result.ranking()["parameters"])
        k = plot_ranking(result, top=1)
        assert len(k.axes[0].get_yticks()) == 1
        assert k.axes[0].get_yticklabels()[0].get_text().startswith(result.ranking()["parameters"][0]["name"])
        assert f"top 1 of {n} parameters by variance share; {n - 1} more omitted" in k._suptitle.get_text()
        h = plot_field_shift(result.field)
        assert "degrees, in glass" in h.axes[0].get_xlabel()
        assert "ΔE00" in h.axes[0].get_ylabel()


@pytest.mark.slow  # Monte Carlo through the panel
class TestTolerancePanel:
    def test_run_and_error_line(self, design, tmp_path):
        """The panel runs with its controls' values; a bad tolerance shows one error line."""
        from workbench.widgets.tolerance import TolerancePanel

        p = TolerancePanel(design, trials=30, seed=2, matrix="fixed")
        r = p.run()
        assert r.trials == 30 and r.seed == 2 and r.cases == ("fixed",)
        assert p.status.value.startswith("30 trials in ")
        wide = write_design(tmp_path, name="wide.toml")
        wide = replace(wide, chain=tuple(
            replace(e, params=tuple((k, replace(v, tolerance=Tolerance("normal", 30.0)) if k == "width_nm" else v)
                                    for k, v in e.params)) if e.name == "trim" else e for e in wide.chain))
        q = TolerancePanel(wide, trials=200)
        assert q.run() is None
        assert q.status.value.startswith("<span style='color:#b00'>error: trim.width_nm: ")
        assert "\n" not in q.status.value
