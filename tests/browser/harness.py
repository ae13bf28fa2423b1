"""Real-browser harness: JupyterLab on 127.0.0.1 with a random token, Debian's Chromium driven by Playwright.

Shared by tests/browser and benchmarks/bench_browser_latency.py. Never downloads
a browser: it uses /usr/bin/chromium (``apt-get install chromium``).
"""

from __future__ import annotations

import contextlib
import json
import os
import secrets
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
CHROMIUM = Path("/usr/bin/chromium")
DEMO_NOTEBOOK = ROOT / "notebooks" / "loop_board_demo.ipynb"
ARTIFACTS = ROOT / "test-artifacts"
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
#: The step plot's lines and the slider of the controller gain (CSS test hooks set by drivekit.widgets).
STEP_PATHS = ".dk-fig-step svg g.curve path.line"
KP_HANDLE = ".dk-p-controller-kp .noUi-handle"
METRICS = ".dk-metrics-table"
#: The model-exploration board: notebook written next to the demo, the operating-flow slider and readout.
EXPLORE_NAME = "explore.ipynb"
FLOW_HANDLE = ".dk-p-operating-flow .noUi-handle"
OPERATING_READOUT = ".dk-operating-readout"
_EXPLORE_CODE = """from drivekit import demo
from drivekit.design import Design
from drivekit.pid import PID
from drivekit.widgets import ModelExplorationBoard

design = Design(
    train=demo.raw_water_pump(),
    operating=("flow", "380 m**3/h"),
    controller=PID(kp=1080.0, ti="3 s"),
    output_span=(0.0, 100.0),
)
board = ModelExplorationBoard(design)
board"""

_WAIT_KERNEL_IDLE = """async () => { const w = window.jupyterapp.shell.currentWidget; await w.sessionContext.ready;
  const k = w.sessionContext.session.kernel;
  while (k.status !== 'idle') await new Promise(r => setTimeout(r, 50)); }"""
_STEP_D = f"() => Array.from(document.querySelectorAll('{STEP_PATHS}')).map(e => e.getAttribute('d')).join('|')"


def _write_explore_notebook(path: Path) -> None:
    """A one-cell notebook showing the model-exploration board of the invented Marrow Creek loop."""
    import nbformat

    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_code_cell(_EXPLORE_CODE)]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    nbformat.write(nb, str(path))


def shutdown_kernels(base: str, token: str) -> None:
    """Stop every running notebook session of the server (one kernel at a time on two cores)."""
    with urllib.request.urlopen(f"{base}/api/sessions?token={token}", timeout=10) as r:
        sessions = json.loads(r.read())
    for session in sessions:
        req = urllib.request.Request(f"{base}/api/sessions/{session['id']}?token={token}", method="DELETE")
        with urllib.request.urlopen(req, timeout=10):
            pass


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@contextlib.contextmanager
def jupyter_lab(notebook: Path = DEMO_NOTEBOOK) -> Iterator[tuple[str, str, str]]:
    """Start JupyterLab in a scratch root holding a copy of ``notebook``; yield (base URL, token, notebook name)."""
    scratch = Path(tempfile.mkdtemp(prefix="dk-lab-"))
    root, iso = scratch / "root", scratch / "iso"
    root.mkdir()
    settings = iso / "user-settings" / "@jupyterlab" / "apputils-extension"
    settings.mkdir(parents=True)
    (settings / "notification.jupyterlab-settings").write_text(
        json.dumps({"fetchNews": "false", "checkForUpdates": False, "doNotDisturbMode": True})
    )
    name = "board.ipynb"
    shutil.copy(notebook, root / name)
    _write_explore_notebook(root / EXPLORE_NAME)
    port, token = _free_port(), secrets.token_hex(16)
    env = dict(os.environ)
    for var, sub in (
        ("JUPYTER_RUNTIME_DIR", "runtime"),
        ("JUPYTER_CONFIG_DIR", "config"),
        ("JUPYTER_DATA_DIR", "data"),
        ("IPYTHONDIR", "ipython"),
    ):
        env[var] = str(iso / sub)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    cmd = [
        str(Path(sys.executable).with_name("jupyter")),
        "lab",
        "--no-browser",
        "--ip=127.0.0.1",
        f"--port={port}",
        "--port-retries=0",
        "--allow-root",
        f"--IdentityProvider.token={token}",
        f"--ServerApp.root_dir={root}",
        "--LabApp.news_url=None",
        "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
        "--LabApp.extension_manager=readonly",
        f"--LabApp.user_settings_dir={iso / 'user-settings'}",
        f"--LabApp.workspaces_dir={iso / 'workspaces'}",
        "--LabApp.expose_app_in_browser=True",
    ]
    log = open(scratch / "server.log", "wb")  # noqa: SIM115 -- closed in the finally below
    proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=env, start_new_session=True)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60.0
        while True:
            try:
                with urllib.request.urlopen(f"{base}/api/status?token={token}", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"JupyterLab did not start; see {scratch / 'server.log'}")
            time.sleep(0.2)
        yield base, token, name
    finally:
        proc.terminate()
        try:
            proc.wait(15)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(5)
        log.close()
        shutil.rmtree(scratch, ignore_errors=True)


@contextlib.contextmanager
def chromium(height: int = 900) -> Iterator[object]:
    """Headless Debian Chromium with a fresh profile; yields a Playwright page ``height`` [px] tall."""
    from playwright.sync_api import sync_playwright

    profile = tempfile.mkdtemp(prefix="dk-chr-")
    try:
        with sync_playwright() as p:
            ctx = p.chromium.launch_persistent_context(
                profile,
                executable_path=str(CHROMIUM),
                headless=True,
                args=CHROMIUM_ARGS,
                viewport={"width": 1366, "height": height},
            )
            try:
                yield ctx.pages[0] if ctx.pages else ctx.new_page()
            finally:
                ctx.close()
    finally:
        shutil.rmtree(profile, ignore_errors=True)


def open_board(page: object, base: str, token: str, name: str, timeout_ms: float = 90_000) -> None:
    """Open the notebook, wait for the kernel, run all cells and wait for the step plot."""
    page.goto(f"{base}/lab/tree/{name}?token={token}&reset")  # type: ignore[attr-defined]
    page.wait_for_selector(".jp-Notebook .jp-CodeCell", timeout=timeout_ms)  # type: ignore[attr-defined]
    page.evaluate(_WAIT_KERNEL_IDLE)  # type: ignore[attr-defined]
    page.evaluate("window.jupyterapp.commands.execute('notebook:run-all-cells')")  # type: ignore[attr-defined]
    page.wait_for_selector(STEP_PATHS, state="attached", timeout=timeout_ms)  # type: ignore[attr-defined]
    page.wait_for_function(f"() => ({_STEP_D})().length > 200", timeout=timeout_ms)  # type: ignore[attr-defined]


def step_paths(page: object) -> str:
    """The step plot's path data, all lines joined."""
    return str(page.evaluate(_STEP_D))  # type: ignore[attr-defined]


def press_and_wait(page: object, key: str = "ArrowRight", timeout_ms: float = 10_000) -> float:
    """Press ``key`` on the gain slider; return seconds until the step plot's path data changed."""
    before = step_paths(page)
    handle = page.locator(KP_HANDLE)  # type: ignore[attr-defined]
    t0 = time.perf_counter()
    handle.press(key)
    page.wait_for_function(  # type: ignore[attr-defined]
        f"(p) => ({_STEP_D})() !== p", arg=before, polling="raf", timeout=timeout_ms
    )
    return time.perf_counter() - t0


def chromium_available() -> bool:
    """Whether Debian's Chromium is installed."""
    return CHROMIUM.exists()
