"""The notebooks in a real browser: JupyterLab on loopback with a token, Debian's chromium via Playwright.

The server is started with the same command line ``workbench lab`` uses
(:func:`workbench.cli.commands.lab.lab_command`: 127.0.0.1, token auth on) in a
temporary root holding copies of the notebooks, with its own Jupyter
config, data, runtime and settings folders. Each test opens its notebook,
runs all cells, works the panel as a user would and checks what the page
shows against the numbers the package computes here. On failure a
screenshot is saved in the test's tmp folder and its path printed; set
``WORKBENCH_SCREENSHOTS=DIR`` to keep one of every run.

Skipped with the reason when ``/usr/bin/chromium`` or the playwright
package is missing (``.ci/run`` installs chromium).
"""

from __future__ import annotations

import json
import os
import secrets
import shutil
import signal
import socket
import subprocess
import time
import urllib.request
from pathlib import Path

import pytest

from workbench import demo_dir
from workbench.cli.commands.lab import lab_command, lab_environment

pytestmark = [pytest.mark.browser, pytest.mark.slow]

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync",
                 "--disable-dev-shm-usage"]
NOTEBOOKS = Path(__file__).parents[1] / "notebooks"


def _need_browser():
    if not CHROMIUM.exists():
        pytest.skip("Debian chromium is not installed at /usr/bin/chromium "
                    "(apt-get install chromium fonts-dejavu-core; .ci/run does it)")
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:  # pragma: no cover
        pytest.skip("the playwright package is not installed (uv sync --group dev)")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _api(base, token, path, method="GET", timeout=5.0):
    req = urllib.request.Request(f"{base}{path}", method=method, headers={"Authorization": f"token {token}"})
    with urllib.request.urlopen(req, timeout=timeout) as r:
        body = r.read()
    return json.loads(body) if body else None


@pytest.fixture(scope="module")
def lab(tmp_path_factory):
    """A JupyterLab server on 127.0.0.1 with a random token, on a temporary root."""
    _need_browser()
    top = tmp_path_factory.mktemp("lab")
    root = top / "root"
    root.mkdir()
    for nb in NOTEBOOKS.glob("*.ipynb"):
        shutil.copy(nb, root / nb.name)
    env = dict(os.environ)
    for var, name in (("JUPYTER_CONFIG_DIR", "config"), ("JUPYTER_DATA_DIR", "data"),
                      ("JUPYTER_RUNTIME_DIR", "runtime"), ("IPYTHONDIR", "ipython")):
        (top / name).mkdir()
        env[var] = str(top / name)
    env["MPLBACKEND"] = "module://matplotlib_inline.backend_inline"
    settings = top / "settings"
    for ext, plugin, value in (
        ("@jupyterlab/apputils-extension", "notification", {"fetchNews": "false", "checkForUpdates": False}),
        ("@jupyterlab/notebook-extension", "tracker", {"windowingMode": "none"}),
    ):
        d = settings / ext
        d.mkdir(parents=True, exist_ok=True)
        (d / f"{plugin}.jupyterlab-settings").write_text(json.dumps(value))
    (top / "workspaces").mkdir()
    port = _free_port()
    token = secrets.token_hex(24)
    cmd = lab_command(root, port=port, token=token) + [
        "--LabApp.expose_app_in_browser=True",
        f"--LabApp.user_settings_dir={settings}",
        f"--LabApp.workspaces_dir={top / 'workspaces'}",
    ]
    assert "--ServerApp.ip=127.0.0.1" in cmd and not any(token in part for part in cmd)
    log = open(top / "server.log", "wb")
    proc = subprocess.Popen(cmd, cwd=root, env=lab_environment(token, env), stdout=log, stderr=subprocess.STDOUT,
                            start_new_session=True)
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 90
    while True:
        try:
            _api(base, token, "/api/status")
            break
        except Exception:
            if proc.poll() is not None or time.monotonic() > deadline:
                log.close()
                proc.kill()
                pytest.fail("JupyterLab did not start:\n" + (top / "server.log").read_text()[-3000:])
            time.sleep(0.3)
    # token auth is on: the API refuses a request without the token
    with pytest.raises(urllib.error.HTTPError):
        urllib.request.urlopen(f"{base}/api/sessions", timeout=5)
    yield {"base": base, "token": token, "root": root}
    try:
        _api(base, token, "/api/shutdown", method="POST")
        proc.wait(timeout=15)
    except Exception:
        try:
            os.killpg(proc.pid, signal.SIGTERM)
            proc.wait(timeout=10)
        except Exception:
            os.killpg(proc.pid, signal.SIGKILL)
    log.close()


@pytest.fixture
def page(lab, tmp_path, request):
    """A chromium page that saves a screenshot when the test fails; kernel sessions deleted afterwards."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=str(CHROMIUM), args=CHROMIUM_ARGS, headless=True)
        # a tall page when screenshots are kept, so a whole panel is in one picture
        tall = bool(os.environ.get("WORKBENCH_SCREENSHOTS"))
        pg = browser.new_page(viewport={"width": 1500, "height": 4200 if tall else 1100})
        pg.set_default_timeout(60_000)
        pg.screenshot_folder = tmp_path
        pg.test_name = request.node.name
        try:
            yield pg
        finally:
            browser.close()
            for s in _api(lab["base"], lab["token"], "/api/sessions") or []:
                try:
                    _api(lab["base"], lab["token"], f"/api/sessions/{s['id']}", method="DELETE")
                except Exception:  # pragma: no cover
                    pass


class screenshot_on_failure:
    """``with screenshot_on_failure(page):`` saves a full-page screenshot if the block fails.

    The path is printed; ``WORKBENCH_SCREENSHOTS=DIR`` keeps one of every run there.
    """

    def __init__(self, page):
        self.page = page

    def __enter__(self):
        return self

    def __exit__(self, typ, exc, tb):
        keep = os.environ.get("WORKBENCH_SCREENSHOTS")
        if exc is None and not keep:
            return False
        folder = Path(keep) if keep and exc is None else self.page.screenshot_folder
        folder.mkdir(parents=True, exist_ok=True)
        shot = folder / f"{self.page.test_name}.png"
        try:
            self.page.screenshot(path=str(shot), full_page=True)
            print(f"\nscreenshot: {shot}")
        except Exception as err:  # pragma: no cover
            print(f"\nscreenshot failed: {err}")
        return False


def open_and_run(page, lab, name: str) -> None:
    """Open a copy of notebook ``name``, run all cells and wait until every code cell has run."""
    copy = f"run-{secrets.token_hex(3)}-{name}"
    shutil.copy(lab["root"] / name, lab["root"] / copy)
    page.goto(f"{lab['base']}/lab/tree/{copy}?token={lab['token']}&reset")
    page.wait_for_function(
        """(p) => window.jupyterapp && jupyterapp.shell.currentWidget
             && jupyterapp.shell.currentWidget.context
             && jupyterapp.shell.currentWidget.context.path === p""", arg=copy)
    page.evaluate("""async () => {
        const w = jupyterapp.shell.currentWidget;
        await w.context.ready; await w.sessionContext.ready;
        await jupyterapp.commands.execute('notebook:run-all-cells');
    }""")
    page.wait_for_function("""() => {
        const w = jupyterapp.shell.currentWidget;
        const k = w.sessionContext.session && w.sessionContext.session.kernel;
        if (!k || k.status !== 'idle') return false;
        const cells = w.content.model.cells;
        for (let i = 0; i < cells.length; i++) {
            const c = cells.get(i);
            if (c.type === 'code' && !c.executionCount) return false;
        }
        return true;
    }""", timeout=120_000)
    errors = page.evaluate("""() => {
        const cells = jupyterapp.shell.currentWidget.content.model.cells; const out = [];
        for (let i = 0; i < cells.length; i++) {
            const c = cells.get(i);
            if (c.type !== 'code') continue;
            for (let j = 0; j < c.outputs.length; j++) {
                const o = c.outputs.get(j);
                if (o.type === 'error') out.push(o.toJSON().ename + ': ' + o.toJSON().evalue);
            }
        }
        return out;
    }""")
    assert errors == []


def set_slider(page, css_class: str, value: float) -> None:
    """Type an exact value into a slider's readout, as a user does."""
    readout = page.locator(f".{css_class} .widget-readout")
    readout.click()
    page.keyboard.press("Control+A")
    page.keyboard.type(f"{value:g}")
    page.keyboard.press("Enter")


def dark_pixels(page, css: str) -> int:
    """Near-black pixels of the image in ``css`` (text, spines, legend: a fully drawn figure has thousands)."""
    return page.evaluate("""(css) => {
        const img = document.querySelector(css);
        const c = document.createElement('canvas');
        c.width = img.naturalWidth; c.height = img.naturalHeight;
        const g = c.getContext('2d'); g.drawImage(img, 0, 0);
        const d = g.getImageData(0, 0, c.width, c.height).data;
        let n = 0;
        for (let i = 0; i < d.length; i += 4) if (d[i] < 80 && d[i + 1] < 80 && d[i + 2] < 80) n++;
        return n;
    }""", css)


def test_design_notebook(page, lab):
    """02-camera-design: run all, move an edge, the measures and plot change; Fit reaches a result."""
    with screenshot_on_failure(page):
        _design_notebook(page, lab)


def _design_notebook(page, lab):
    from workbench.fileio.design_toml import load_design
    from workbench.analysis.evaluator import DesignEvaluator

    open_and_run(page, lab, "02-camera-design.ipynb")
    img = page.locator(".wb-design-plot img").first
    img.wait_for()
    src0 = img.get_attribute("src")
    dark0 = dark_pixels(page, ".wb-design-plot img")
    assert dark0 > 2000
    table = page.locator(".wb-measures")
    text0 = table.inner_text()
    demo = load_design(demo_dir() / "tern3_design.toml")
    nu0 = DesignEvaluator(demo).measures().vora_value
    assert f"{nu0:.4f}" in text0
    assert page.locator(".wb-slider").count() >= 13

    set_slider(page, "wb-slider-prism-blue_green_nm", 548)
    page.wait_for_function("(s) => document.querySelector('.wb-design-plot img').src !== s", arg=src0)
    nu1 = DesignEvaluator(demo.with_values({"prism.blue_green_nm": 548.0})).measures().vora_value
    page.wait_for_function("(t) => document.querySelector('.wb-measures').innerText.includes(t)",
                           arg=f"{nu1:.4f}")
    assert table.inner_text() != text0
    assert float(page.locator(".wb-slider-prism-blue_green_nm .widget-readout").inner_text()) == 548.0
    assert page.locator(".wb-error").first.inner_text().strip() == ""

    src1 = img.get_attribute("src")
    page.locator("button.wb-fit").click()
    page.wait_for_selector(".wb-fit-done", timeout=90_000)
    status = page.locator(".wb-fit-status").inner_text()
    assert "converged" in status and "Vora value ν" in status
    page.wait_for_function("(s) => document.querySelector('.wb-design-plot img').src !== s", arg=src1)
    assert "Fit of" in page.locator(".wb-fit-report").inner_text()
    # the figure after the fit is whole (axes, labels and legend drawn, not only the moving curves)
    page.wait_for_timeout(500)
    assert dark_pixels(page, ".wb-design-plot img") > 0.5 * dark0
    assert page.locator("button.wb-fit").is_enabled()


def test_primaries_notebook(page, lab):
    """05-primaries-and-emitters: run all, choose BT.2020, the diagram and coefficients change."""
    with screenshot_on_failure(page):
        _primaries_notebook(page, lab)


def _primaries_notebook(page, lab):
    open_and_run(page, lab, "05-primaries-and-emitters.ipynb")
    img = page.locator(".wb-chromaticity-plot img").first
    img.wait_for()
    src0 = img.get_attribute("src")
    assert "K_R 0.2126" in page.locator(".wb-primaries-info").inner_text()  # ITU-R BT.709-6 item 3.2
    page.locator(".wb-named select").select_option("ITU-R BT.2020")
    page.wait_for_function("(s) => document.querySelector('.wb-chromaticity-plot img').src !== s", arg=src0)
    # ITU-R BT.2020-2, Table 4
    page.wait_for_function("() => document.querySelector('.wb-primaries-info').innerText.includes('K_R 0.2627')")
    assert page.locator(".wb-error").first.inner_text().strip() == ""
