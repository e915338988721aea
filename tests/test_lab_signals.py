"""`workbench lab`: SIGTERM/SIGHUP reach JupyterLab, which stops; the token never shows on a command line."""

import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import psutil
import pytest


def _free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _listening(port):
    with socket.socket() as s:
        s.settimeout(0.5)
        return s.connect_ex(("127.0.0.1", port)) == 0


@pytest.mark.slow  # starts JupyterLab
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGHUP])
def test_signal_stops_jupyterlab(sig, tmp_path):
    """A signal to the workbench process stops JupyterLab and frees its port; the token is only in its environment."""
    env = dict(os.environ)
    for var in ("JUPYTER_CONFIG_DIR", "JUPYTER_DATA_DIR", "JUPYTER_RUNTIME_DIR", "IPYTHONDIR"):
        d = tmp_path / var.lower()
        d.mkdir()
        env[var] = str(d)
    root = tmp_path / "nb"
    root.mkdir()
    port = _free_port()
    token = "s3cret" + os.urandom(8).hex()
    env["WORKBENCH_LAB_TOKEN"] = token
    proc = subprocess.Popen([sys.executable, "-m", "workbench.cli.main", "lab", "--dir", str(root),
                             "--port", str(port)], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    try:
        deadline = time.time() + 90
        while not _listening(port):
            assert proc.poll() is None and time.time() < deadline, "JupyterLab did not start"
            time.sleep(0.5)
        children = psutil.Process(proc.pid).children(recursive=True)
        assert children
        for c in children + [psutil.Process(proc.pid)]:
            assert not any(token in part for part in c.cmdline())
        lab = children[0]
        assert lab.environ().get("JUPYTER_TOKEN") == token
        proc.send_signal(sig)
        code = proc.wait(timeout=40)
        assert code == 128 + sig
        assert not lab.is_running() or lab.status() == psutil.STATUS_ZOMBIE
        assert not _listening(port)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
