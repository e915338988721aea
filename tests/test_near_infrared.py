"""Near-infrared measures: the infrared share of each channel and the ΔE00 it costs."""

import json
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from workbench import demo_dir
from workbench.analysis.evaluator import DesignEvaluator
from workbench.analysis.near_infrared import CAP_WEIGHT, infrared_residuals, infrared_share
from workbench.errors import WorkbenchError
from workbench.fileio.design_toml import design_from_dict, design_to_dict, load_design
from workbench.model.spectra import grid

ROOT = Path(__file__).parents[1]
NIR_DEMO = demo_dir() / "tern3_nir_design.toml"


def without_ir_cut(design):
    """The demo NIR design with its IR cut and the red short-pass taken out of the chain."""
    d = design_to_dict(design)
    d["chain"] = [e for e in d["chain"] if e["name"] not in ("ir-cut", "red-edge")]
    return design_from_dict(d, base_dir=NIR_DEMO.parent, source="no-ir-cut")


class TestInfraredShare:
    def test_flat_channel_under_equal_energy(self):
        """A flat channel under equal energy on 400-1000 nm at 10 nm: 30 of 61 points lie above 700 nm."""
        # by hand: points 710, 720, ..., 1000 (30) of 400, 410, ..., 1000 (61); 700 itself counts as visible
        wl = grid(400, 1000, 10)
        S = np.ones((3, wl.size))
        S[2, wl > 700] = 0
        share = infrared_share(S, np.ones(wl.size), wl, cutoff_nm=700)
        np.testing.assert_allclose(share[0], [30 / 61, 30 / 61, 0.0], rtol=1e-15)

    def test_weighted_by_the_illuminant(self):
        """An illuminant twice as strong above the cut-off: share 2·30/(31 + 2·30)."""
        wl = grid(400, 1000, 10)
        E = np.where(wl > 700, 2.0, 1.0)
        share = infrared_share(np.ones((3, wl.size)), E, wl)
        np.testing.assert_allclose(share[0], 60 / 91, rtol=1e-15)  # by hand

    def test_blind_channel_is_zero(self):
        """A channel that records nothing has share 0 (never NaN)."""
        wl = grid(400, 1000, 10)
        S = np.ones((3, wl.size))
        S[1] = 0
        assert infrared_share(S, np.ones(wl.size), wl)[0, 1] == 0.0

    def test_shapes_checked(self):
        """Sensitivities off the grid are refused."""
        with pytest.raises(WorkbenchError, match=r"^sensitivities must be shaped \(\.\.\., 3, 61\)"):
            infrared_share(np.ones((3, 10)), np.ones(61), grid(400, 1000, 10))


class TestInfraredResiduals:
    def test_weight_and_cap(self):
        """The weight multiplies the share; the cap costs CAP_WEIGHT × the excess only."""
        wl = grid(400, 1000, 10)
        S = np.ones((1, 3, wl.size))
        r = infrared_residuals(S, np.ones((1, wl.size)), wl, cutoff_nm=700, weight=2.0, cap=0.4)
        share = 30 / 61
        np.testing.assert_allclose(r[0], [2 * share] * 3 + [CAP_WEIGHT * (share - 0.4)] * 3, rtol=1e-14)
        assert infrared_residuals(S, np.ones((1, wl.size)), wl, cutoff_nm=700) is None


class TestInfraredReport:
    def test_demo_with_ir_cut_leaks_nothing_above_700(self):
        """The demo camera with its IR cut sends under 0.01 % of any channel above 700 nm."""
        m = DesignEvaluator(load_design(NIR_DEMO)).measures()
        s = m.infrared.summary()["700"]
        assert set(s) == {"tungsten", "stage-led"}
        assert max(v for ill in s.values() for v in ill["share"].values()) < 1e-4

    def test_leakage_without_ir_cut_costs_colour(self):
        """Without the IR cut the red channel takes much of its signal from the infrared under A, and ΔE00 grows."""
        m = DesignEvaluator(without_ir_cut(load_design(NIR_DEMO))).measures()
        t = m.infrared.summary()["700"]["tungsten"]
        assert t["share"]["R"] > 0.3
        assert t["mean_delta_E00"] > t["mean_delta_E00_without_infrared"] + 0.5
        # the cut ΔE00 is the pipeline on S·[λ ≤ 700 nm], computed again here
        ev = DesignEvaluator(without_ir_cut(load_design(NIR_DEMO)))
        S = ev.sensitivities() * (ev.wavelengths <= 700)
        ref = ev.bench.evaluate(S).delta_E00.mean(axis=-1)[0]
        assert t["mean_delta_E00_without_infrared"] == pytest.approx(ref, rel=1e-12)

    def test_design_cutoff_reported(self):
        """The design's infrared_cutoff_nm is reported beside 700 nm."""
        m = DesignEvaluator(load_design(NIR_DEMO)).measures()
        assert list(m.infrared.summary()) == ["700", "680"]


class TestFitHook:
    def test_infrared_weight_adds_residuals(self):
        """[fit] infrared_weight adds one residual per channel and illuminant, the weighted share above the design's cut-off."""
        d = without_ir_cut(load_design(NIR_DEMO))
        ev0 = DesignEvaluator(d)
        ev1 = DesignEvaluator(replace(d, fit=replace(d.fit, infrared_weight=3.0)))
        r0, r1 = ev0.residuals(ev0.start), ev1.residuals(ev1.start)
        assert r1.shape[-1] == r0.shape[-1] + 6
        share = infrared_share(ev1.sensitivities(), ev1.bench.E, ev1.wavelengths, cutoff_nm=680)
        np.testing.assert_allclose(r1[0, -6:], 3.0 * share.ravel(), rtol=1e-12)

    def test_schema_limits(self):
        """max_infrared_share outside [0, 1] is a design-file problem."""
        d = design_to_dict(load_design(NIR_DEMO))
        d["fit"]["max_infrared_share"] = 1.5
        with pytest.raises(WorkbenchError, match=r"fit\.max_infrared_share: expected a number in \[0, 1\] \(got 1\.5\)"):
            design_from_dict(d, base_dir=NIR_DEMO.parent)


class TestEvaluateCommand:
    def run(self, *args):
        return subprocess.run([sys.executable, "-m", "workbench", "evaluate", *args], cwd=ROOT,
                              capture_output=True, text=True)

    def test_json_and_extra_cutoff(self):
        """--ir-cutoff 650 adds a cut-off to the JSON; the red channel has signal there."""
        out = self.run(str(NIR_DEMO), "--format", "json", "--ir-cutoff", "650")
        assert out.returncode == 0, out.stderr
        ir = json.loads(out.stdout)["near_infrared"]
        assert list(ir) == ["700", "680", "650"]
        assert ir["650"]["tungsten"]["share"]["R"] > 0.01

    def test_bad_cutoff(self):
        """A cut-off outside 380-1100 nm: one line, exit 2."""
        out = self.run(str(NIR_DEMO), "--ir-cutoff", "250")
        assert out.returncode == 2
        assert out.stderr == "error: --ir-cutoff must be a wavelength in [380, 1100] nm (got 250)\n"
