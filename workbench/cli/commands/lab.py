"""``workbench lab``: JupyterLab on the workbench's notebooks, local and token-protected."""

from __future__ import annotations

import os
import secrets
import shutil
import subprocess
import sys
from pathlib import Path

from workbench import is_packaged, notebooks_dir
from workbench.errors import WorkbenchError
import signal

HELP = "start JupyterLab on the notebooks (bound to 127.0.0.1, token required)"


#: Where ``workbench lab`` puts its working copy of the packaged notebooks (in the current folder).
WORKING_COPY = "workbench-notebooks"


def default_notebook_dir(*, cwd: Path | None = None) -> tuple[Path, str | None]:
    """The folder to open, and a notice when it was made.

    From a checkout: the source tree's ``notebooks/``. From an installed
    wheel the notebooks lie inside the package, and they write their outputs
    beside themselves, so JupyterLab opens on a working copy,
    ``./workbench-notebooks``, made from the packaged ones when it does not
    exist yet (an existing copy is used as it is, never overwritten).
    """
    source = notebooks_dir()
    if not is_packaged(source):
        return source, None
    work = (cwd or Path.cwd()) / WORKING_COPY
    if work.exists():
        return work, None
    shutil.copytree(source, work)
    return work, f"copied the workbench's notebooks to {work}"


def register(sub) -> None:
    p = sub.add_parser("lab", help=HELP, description=HELP + ". Prints the URL with its token.")
    p.add_argument("--dir", type=Path, default=None,
                   help="folder to open (default: the project's notebooks/)")
    p.add_argument("--port", type=int, default=8888, help="port on 127.0.0.1 (default: 8888)")
    p.add_argument("--token", default=None,
                   help="access token (default: $WORKBENCH_LAB_TOKEN, else a new random one each start); "
                        "passed to JupyterLab through its environment, never on its command line")
    p.set_defaults(run=run)


def lab_command(root: Path, *, port: int, token: str) -> list[str]:
    """The JupyterLab command line: loopback only, token auth on, no browser.

    The token is *not* on the command line (which every local user can read
    in the process list); pass :func:`lab_environment` as the child's
    environment, which holds it as ``JUPYTER_TOKEN`` (readable by the same
    user only). ``token`` is taken here only to refuse an empty one.
    """
    if not token:
        raise WorkbenchError("--token must not be empty: token authentication stays on")
    cmd = [
        sys.executable, "-m", "jupyterlab",
        "--no-browser",
        "--ServerApp.ip=127.0.0.1",
        f"--ServerApp.port={port}",
        "--ServerApp.port_retries=0",
        f"--ServerApp.root_dir={root}",
        "--ServerApp.open_browser=False",
    ]
    if hasattr(os, "geteuid") and os.geteuid() == 0:
        cmd.append("--ServerApp.allow_root=True")
    return cmd


def lab_environment(token: str, base: dict | None = None) -> dict:
    """The child's environment: ``base`` (default ``os.environ``) with ``JUPYTER_TOKEN`` set to ``token``."""
    if not token:
        raise WorkbenchError("--token must not be empty: token authentication stays on")
    env = dict(os.environ if base is None else base)
    env.pop("JUPYTER_TOKEN_FILE", None)
    env["JUPYTER_TOKEN"] = token
    return env


#: Seconds JupyterLab gets to shut down (and stop its kernels) after SIGTERM before it is killed.
STOP_TIMEOUT_S = 20.0


def run(args) -> int:
    notice = None
    if args.dir is None:
        root, notice = default_notebook_dir()
    else:
        root = args.dir
    root = root.resolve()
    if notice:
        print(f"note: {notice}", file=sys.stderr)
    if not root.is_dir():
        raise WorkbenchError(f"{root}: no such folder of notebooks (expected the project's notebooks/)")
    if not 1 <= args.port <= 65535:
        raise WorkbenchError(f"--port must be 1-65535 (got {args.port})")
    token = args.token or os.environ.get("WORKBENCH_LAB_TOKEN") or secrets.token_hex(24)
    url = f"http://127.0.0.1:{args.port}/lab?token={token}"
    print(f"JupyterLab on {root}", file=sys.stderr)
    print(f"open: {url}", flush=True)
    print("stop with Ctrl-C", file=sys.stderr, flush=True)
    proc = subprocess.Popen(lab_command(root, port=args.port, token=token), env=lab_environment(token))
    received = []

    def forward(signum, frame):
        received.append(signum)
        try:
            proc.send_signal(signum if signum != signal.SIGHUP else signal.SIGTERM)
        except OSError:
            pass

    old = {}
    for sig in (signal.SIGTERM, signal.SIGHUP):
        try:
            old[sig] = signal.signal(sig, forward)
        except (ValueError, OSError):  # not the main thread
            pass
    try:
        while True:
            try:
                code = proc.wait()
                break
            except KeyboardInterrupt:
                # Ctrl-C reaches JupyterLab too (same process group); ask it once more to stop, then wait
                _stop(proc)
                return 130
        if received:
            return 128 + received[0]
        return code
    finally:
        for sig, handler in old.items():
            signal.signal(sig, handler)
        if proc.poll() is None:
            _stop(proc)


def _stop(proc) -> None:
    """SIGTERM to JupyterLab, wait for it (it stops its kernels), kill it after STOP_TIMEOUT_S."""
    try:
        proc.terminate()
        proc.wait(timeout=STOP_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()
    except OSError:
        pass
