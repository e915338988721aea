"""Fault tests: `fit --out` and `render --out` killed at random moments leave one complete set.

Each command runs once to completion (the old set), then is started again
and killed (SIGKILL by PID, some SIGTERM) at a random moment between 30 %
and 105 % of an uninterrupted run. Afterwards the folder must hold exactly
the files its manifest names, each readable, and nothing else — the old set
or the new one, never a mix; the next run removes what the killed one left
beside it. 25 kills per command, 50 in all.
"""

from __future__ import annotations

import json
import os
import random
import signal
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import numpy as np
import pytest

from workbench.fileio.outdir import MANIFEST

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "spectra-demo"
KILLS = 25

COMMANDS = {
    "fit": [str(DEMO / "tern3_design.toml"), "--quiet"],
    "render": [str(DEMO / "tern3_design.toml"), str(DEMO / "scene_small.npy"), "--illuminant", "stage-led"],
}


def _argv(command, out):
    return [sys.executable, "-m", "workbench.cli.main", command, *COMMANDS[command], "--out", str(out)]


def _check_complete(out: Path, command: str) -> str:
    """Assert ``out`` holds one complete set; return the manifest's time stamp."""
    manifest = json.loads((out / MANIFEST).read_text())
    assert manifest["complete"] is True and manifest["command"] == command
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(manifest["files"] + [MANIFEST]), (names, manifest["files"])
    for name in manifest["files"]:
        p = out / name
        if name.endswith(".json"):
            json.loads(p.read_text())
        elif name.endswith(".toml"):
            tomllib.loads(p.read_text())
        elif name.endswith(".npy"):
            np.load(p)
        elif name.endswith(".png"):
            assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        elif name.endswith((".csv", ".html")):
            assert p.read_text().strip()
    return manifest["written_utc"]


@pytest.mark.slow
@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_kills_leave_one_complete_set(command, tmp_path):
    """Killed at random moments, the output folder always holds one complete set (old or new)."""
    out = tmp_path / "out"
    env = dict(os.environ, MPLBACKEND="Agg")
    t0 = time.monotonic()
    subprocess.run(_argv(command, out), check=True, env=env, capture_output=True, timeout=300)
    full = time.monotonic() - t0
    expected_files = json.loads((out / MANIFEST).read_text())["files"]
    rng = random.Random(20261203)
    outcomes = {"old set": 0, "new set": 0}
    for k in range(KILLS):
        before = _check_complete(out, command)
        proc = subprocess.Popen(_argv(command, out), env=env, stdout=subprocess.DEVNULL,
                                stderr=subprocess.DEVNULL)
        time.sleep(rng.uniform(0.3, 1.05) * full)
        sig = signal.SIGTERM if k % 5 == 4 else signal.SIGKILL
        if proc.poll() is None:
            os.kill(proc.pid, sig)
        proc.wait(timeout=120)
        after = _check_complete(out, command)
        assert json.loads((out / MANIFEST).read_text())["files"] == expected_files
        outcomes["old set" if after == before else "new set"] += 1
        strays = [p.name for p in tmp_path.iterdir() if p.name not in ("out", ".out.lock")]
        assert all(n.startswith(".out.tmp-") for n in strays), strays
    # the next run clears what the killed ones left beside the folder
    subprocess.run(_argv(command, out), check=True, env=env, capture_output=True, timeout=300)
    assert sorted(p.name for p in tmp_path.iterdir()) == [".out.lock", "out"]
    _check_complete(out, command)
    print(f"{command}: {KILLS} kills, {outcomes}, uninterrupted run {full:.1f} s")
