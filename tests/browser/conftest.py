"""Fixtures of the real-browser tests: a throwaway JupyterLab server and Debian's Chromium via Playwright.

Without Chromium, Playwright, JupyterLab or ipympl the tests skip with the reason; with
``CONVDIAG_REQUIRE_BROWSER=1`` (set by CI) they fail instead. The server runs from the test's own
interpreter (``sys.executable -m jupyterlab``) on 127.0.0.1 with a private config, settings and
runtime directory, and serves a copy of ``example_notebooks/``. Screenshots go to
``test-artifacts/browser/`` (git-ignored) or to ``$CONVDIAG_ARTIFACTS``.
"""

from __future__ import annotations

import importlib.util
import json
import os
import pathlib
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]
CHROMIUM_CANDIDATES = ("/usr/bin/chromium", "/usr/lib/chromium/chromium")


def _chromium() -> str | None:
    """Debian's Chromium, or the browser named by $CONVDIAG_CHROMIUM (then only that one)."""
    given = os.environ.get("CONVDIAG_CHROMIUM")
    if given:
        return given if os.access(given, os.X_OK) else None
    for path in CHROMIUM_CANDIDATES:
        if os.access(path, os.X_OK):
            return path
    return shutil.which("chromium")


def _missing() -> list[str]:
    missing = []
    if _chromium() is None:
        missing.append("Debian's chromium (apt-get install chromium)")
    for module, hint in (("playwright", "playwright"), ("jupyterlab", "jupyterlab"), ("ipympl", "ipympl"),
                         ("ipykernel", "ipykernel")):
        if importlib.util.find_spec(module) is None:
            missing.append(f"the Python package {hint}")
    return missing


@pytest.fixture(scope="session")
def browser_ready() -> None:
    """Skip (or, with CONVDIAG_REQUIRE_BROWSER=1, fail) when something the browser tests need is missing."""
    missing = _missing()
    if not missing:
        return
    reason = "the real-browser test needs " + ", ".join(missing)
    if os.environ.get("CONVDIAG_REQUIRE_BROWSER") == "1":
        pytest.fail(f"{reason} (CONVDIAG_REQUIRE_BROWSER=1 makes this a failure)", pytrace=False)
    pytest.skip(reason)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _write_settings(settings: pathlib.Path) -> None:
    files = {
        "@jupyterlab/apputils-extension/notification.jupyterlab-settings": {"fetchNews": "false",
                                                                            "checkForUpdates": False},
        "@jupyterlab/apputils-extension/sessionDialogs.jupyterlab-settings": {"skipKernelRestartDialog": True},
    }
    for name, content in files.items():
        path = settings / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(json.dumps(content), encoding="utf-8")


@pytest.fixture(scope="session")
def lab_url(browser_ready: None, tmp_path_factory: pytest.TempPathFactory) -> str:
    """A JupyterLab server on a free loopback port, serving a copy of the example notebooks."""
    state = tmp_path_factory.mktemp("jupyterlab")
    notebooks = state / "notebooks"
    shutil.copytree(ROOT / "example_notebooks", notebooks, ignore=shutil.ignore_patterns(".ipynb_checkpoints"))
    _write_settings(state / "settings")
    port = _free_port()
    env = dict(os.environ, JUPYTER_CONFIG_DIR=str(state / "cfg"), JUPYTER_RUNTIME_DIR=str(state / "rt"),
               PYTHONPATH=os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH", "")])))
    cmd = [sys.executable, "-m", "jupyterlab", "--no-browser", "--allow-root", "--ip=127.0.0.1", f"--port={port}",
           "--ServerApp.port_retries=0", "--IdentityProvider.token=", "--ServerApp.password=",
           f"--ServerApp.root_dir={notebooks}", "--expose-app-in-browser",
           f"--LabApp.user_settings_dir={state / 'settings'}", f"--LabApp.workspaces_dir={state / 'ws'}",
           "--LabApp.news_url=None", "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
           "--LabApp.extension_manager=readonly"]
    log_path = state / "server.log"
    with open(log_path, "wb") as log:
        proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, env=env, cwd=state,
                                start_new_session=True)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            if proc.poll() is not None:
                pytest.fail(f"JupyterLab exited with {proc.returncode}:\n{log_path.read_text(errors='replace')[-3000:]}",
                            pytrace=False)
            try:
                with urllib.request.urlopen(f"{base}/api/status", timeout=2) as r:
                    if r.status == 200:
                        break
            except (urllib.error.URLError, OSError):
                pass
            if time.monotonic() > deadline:
                pytest.fail(f"JupyterLab did not answer in 60 s:\n{log_path.read_text(errors='replace')[-3000:]}",
                            pytrace=False)
            time.sleep(0.25)
        yield base
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGTERM)  # the server's own process group: it and its kernels
            try:
                proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, signal.SIGKILL)
                proc.wait(timeout=5)


@pytest.fixture(scope="session")
def chromium(browser_ready: None):  # type: ignore[no-untyped-def]
    """Headless Debian Chromium driven by Playwright's sync API (no browser download)."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(
            executable_path=_chromium(), headless=True,
            args=["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync"])
        try:
            yield browser
        finally:
            browser.close()


@pytest.fixture
def page(chromium):  # type: ignore[no-untyped-def]
    # tall enough that the explorer with its panels (about 1500 px) fits above JupyterLab's status bar
    context = chromium.new_context(viewport={"width": 1400, "height": 2400}, device_scale_factor=1)
    pg = context.new_page()
    try:
        yield pg
    finally:
        context.close()


@pytest.fixture(scope="session")
def artifacts() -> pathlib.Path:
    """Where screenshots go: $CONVDIAG_ARTIFACTS, else test-artifacts/browser/ (git-ignored)."""
    where = pathlib.Path(os.environ.get("CONVDIAG_ARTIFACTS", ROOT / "test-artifacts")) / "browser"
    where.mkdir(parents=True, exist_ok=True)
    return where


def _steady_screenshot(target, path: pathlib.Path, *, tries: int = 12, pause: float = 0.3, **options) -> bool:  # type: ignore[no-untyped-def]
    """Save a screenshot of ``target`` (a page or locator) once two taken ``pause`` s apart are identical.

    A frame caught while a figure is still being redrawn shows half-drawn tick labels; after ``tries``
    attempts the last one is saved anyway. ``options`` go to Playwright's ``screenshot``. Returns whether
    the picture had settled.
    """
    last = target.screenshot(**options)
    for _ in range(tries):
        time.sleep(pause)
        now = target.screenshot(**options)
        if now == last:
            path.write_bytes(now)
            return True
        last = now
    path.write_bytes(last)
    return False


@pytest.fixture(scope="session")
def steady_screenshot():  # type: ignore[no-untyped-def]
    """``steady_screenshot(target, path, **options)``: a screenshot taken once the picture stopped changing."""
    return _steady_screenshot
