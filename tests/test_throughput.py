"""The chain element by element: the share of each channel's signal each element passes, and the figures."""

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from workbench import demo_dir
from workbench.analysis.throughput import throughput
from workbench.optics.chain import ElementCurve

ROOT = Path(__file__).parents[1]


def curve(name, type_, values, paths=("R", "G", "B")):
    return ElementCurve(name, type_, paths, np.asarray(values, dtype=float))


class TestThroughput:
    def test_flat_elements(self):
        """Flat elements pass their own transmittance of every channel; the optics their product."""
        n = 5
        c = [curve("nd", "neutral-density", np.full((3, n), 0.5)),
             curve("trim", "glass", np.stack([np.full(n, 0.8), np.ones(n), np.ones(n)]), ("R",)),
             curve("sensor", "sensor-qe", np.full((3, n), 0.6))]
        t = throughput(c, np.ones(n))
        # by hand: removing a flat element multiplies the signal by 1/T
        np.testing.assert_allclose(t.passed, [[0.5, 0.5, 0.5], [0.8, 1, 1], [0.6, 0.6, 0.6]], rtol=1e-15)
        np.testing.assert_allclose(t.optics, [0.4, 0.5, 0.5], rtol=1e-15)

    def test_weighted_by_the_light(self):
        """A filter passing only the first half of the band passes the first half's share of the signal."""
        E = np.array([1.0, 1.0, 3.0, 3.0])
        c = [curve("edge", "short-pass", np.tile([1.0, 1.0, 0.0, 0.0], (3, 1))),
             curve("sensor", "sensor-qe", np.ones((3, 4)))]
        t = throughput(c, E)
        assert t.passed[0, 0] == pytest.approx(2 / 8)   # by hand: (1 + 1)/(1 + 1 + 3 + 3)


class TestEvaluateFigures:
    @pytest.mark.slow  # draws three figures
    def test_figures_and_table(self, tmp_path):
        """evaluate --figures writes chain.png and sensitivities.png; the JSON has the throughput rows."""
        out = subprocess.run([sys.executable, "-m", "workbench", "evaluate", str(demo_dir() / "tern3_design.toml"),
                              "--format", "json", "--figures", str(tmp_path / "figs")], cwd=ROOT,
                             capture_output=True, text=True)
        assert out.returncode == 0, out.stderr
        assert {p.name for p in (tmp_path / "figs").glob("*.png")} == {"chain.png", "sensitivities.png", "near-infrared.png"}
        assert (tmp_path / "figs" / "chain.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        rows = json.loads(out.stdout)["throughput"]["rows"]
        assert [r["element"] for r in rows][-1] == "optics together"
        assert all(0 < r[ch] <= 100 for r in rows for ch in "RGB")
