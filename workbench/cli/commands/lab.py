"""``workbench lab``: JupyterLab on the workbench's notebooks, local and token-protected."""

from __future__ import annotations

import os
import secrets
import subprocess
import sys
from pathlib import Path

from workbench.errors import WorkbenchError

HELP = "start JupyterLab on the notebooks (bound to 127.0.0.1, token required)"


def default_notebook_dir() -> Path:
    """notebooks/ of the source tree when run from it, else ./notebooks."""
    here = Path(__file__).resolve().parents[3] / "notebooks"
    return here if here.is_dir() else Path.cwd() / "notebooks"


def register(sub) -> None:
    p = sub.add_parser("lab", help=HELP, description=HELP + ". Prints the URL with its token.")
    p.add_argument("--dir", type=Path, default=None,
                   help="folder to open (default: the project's notebooks/)")
    p.add_argument("--port", type=int, default=8888, help="port on 127.0.0.1 (default: 8888)")
    p.add_argument("--token", default=None,
                   help="access token (default: a new random one each start)")
    p.set_defaults(run=run)


def lab_command(root: Path, *, port: int, token: str) -> list[str]:
    """The JupyterLab command line: loopback only, token auth on, no browser."""
    if not token:
        raise WorkbenchError("--token must not be empty: token authentication stays on")
    cmd = [
        sys.executable, "-m", "jupyterlab",
        "--no-browser",
        "--ServerApp.ip=127.0.0.1",
        f"--ServerApp.port={port}",
        "--ServerApp.port_retries=0",
        f"--IdentityProvider.token={token}",
        f"--ServerApp.root_dir={root}",
        "--ServerApp.open_browser=False",
    ]
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        cmd.append("--ServerApp.allow_root=True")
    return cmd


def run(args) -> int:
    root = (args.dir or default_notebook_dir()).resolve()
    if not root.is_dir():
        raise WorkbenchError(f"{root}: no such folder of notebooks (expected the project's notebooks/)")
    if not 1 <= args.port <= 65535:
        raise WorkbenchError(f"--port must be 1-65535 (got {args.port})")
    token = args.token or secrets.token_hex(24)
    url = f"http://127.0.0.1:{args.port}/lab?token={token}"
    print(f"JupyterLab on {root}", file=sys.stderr)
    print(f"open: {url}", flush=True)
    print("stop with Ctrl-C", file=sys.stderr, flush=True)
    proc = subprocess.Popen(lab_command(root, port=args.port, token=token))
    try:
        return proc.wait()
    except KeyboardInterrupt:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
        return 130
