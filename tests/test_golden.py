"""The demo's ``workbench evaluate --format json`` output, pinned before the layout change.

Any refactoring must leave every figure the command prints unchanged; numbers are
compared to 1e-12 relative so that a different BLAS summation order cannot fail it.
The method texts of ``vora_value`` and ``neugebauer_q`` are the one wording of
workbench/report/methods.py (the command once wrote its own, drifted copy).
"""

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

HERE = Path(__file__).parent
ROOT = HERE.parent


def _compare(expected, got, where="$"):
    if isinstance(expected, dict):
        assert isinstance(got, dict), where
        assert sorted(expected) == sorted(got), f"{where}: keys differ"
        for key in expected:
            _compare(expected[key], got[key], f"{where}.{key}")
    elif isinstance(expected, list):
        assert isinstance(got, list) and len(expected) == len(got), where
        for i, (a, b) in enumerate(zip(expected, got)):
            _compare(a, b, f"{where}[{i}]")
    elif isinstance(expected, float):
        assert math.isclose(expected, got, rel_tol=1e-12, abs_tol=1e-15), f"{where}: {expected} != {got}"
    else:
        assert expected == got, f"{where}: {expected!r} != {got!r}"


class TestDemoEvaluateUnchanged:
    def test_evaluate_json_matches_pinned_output(self):
        """`workbench evaluate` on the demo design prints the same figures as before the layout change."""
        expected = json.loads((HERE / "data" / "golden" / "demo_evaluate.json").read_text())
        out = subprocess.run(
            [sys.executable, "-m", "workbench", "evaluate", "spectra-demo/tern3_design.toml", "--format", "json"],
            cwd=ROOT, capture_output=True, text=True, check=True,
        )
        _compare(expected, json.loads(out.stdout))

    def test_compare_detects_a_change(self):
        """The comparison itself fails on a changed figure (so the test above can fail)."""
        with pytest.raises(AssertionError):
            _compare({"a": [1.0, 2.0]}, {"a": [1.0, 2.0000001]})
