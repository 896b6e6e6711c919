"""Fixtures of the browser test: system Chromium, the Python Playwright driver, a JupyterLab server.

Everything a user's machine would have is installed here when it is missing, with bounded waits:

* Debian's ``chromium`` (``apt-get update`` + ``apt-get install -y chromium``; needs root).
  Playwright's own browser download is not used (it cannot reach its download host here); the
  browser is launched through ``executable_path``. ``ECATLAB_CHROMIUM`` may name another binary.
* the PyPI ``playwright`` package (``pip install playwright``) when the ``test`` extra did not bring it.

JupyterLab (from the project's ``lab`` extra) is started on 127.0.0.1, a free port and a random
token, in a temporary copy of ``notebooks/``, with its own config/settings/workspace/runtime
folders so that nothing of the developer's own Jupyter set-up leaks in. Teardown asks the server
to shut down (which stops its kernels), then ends its whole process group (SIGTERM, then SIGKILL)
and checks that no process of that group is left.
"""

from __future__ import annotations

import json
import os
import pathlib
import secrets
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
APT_UPDATE_TIMEOUT = 240  # s
APT_INSTALL_TIMEOUT = 420  # s
PIP_TIMEOUT = 300  # s
SERVER_START_TIMEOUT = 90  # s
SERVER_STOP_TIMEOUT = 20  # s


def _log(message: str) -> None:
    print(f"[e2e] {message}", flush=True)


def _run(cmd: list[str], timeout: float, env: dict | None = None) -> None:
    started = time.monotonic()
    _log("running: " + " ".join(cmd))
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, env=env)
    except subprocess.TimeoutExpired:
        pytest.fail(f"{' '.join(cmd)} did not finish within {timeout} s")
    if proc.returncode != 0:
        pytest.fail(f"{' '.join(cmd)} failed with exit code {proc.returncode}:\n{proc.stdout[-2000:]}\n{proc.stderr[-2000:]}")
    _log(f"done in {time.monotonic() - started:.1f} s")


def _find_chromium() -> str | None:
    override = os.environ.get("ECATLAB_CHROMIUM")
    if override:
        return override if os.access(override, os.X_OK) else None
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return None


@pytest.fixture(scope="session")
def chromium_executable() -> str:
    """Path of the system Chromium; installed from Debian's packages when missing (root only)."""
    found = _find_chromium()
    if found:
        return found
    if os.environ.get("ECATLAB_CHROMIUM"):
        pytest.fail(f"ECATLAB_CHROMIUM={os.environ['ECATLAB_CHROMIUM']} is not an executable file")
    if shutil.which("apt-get") is None or os.geteuid() != 0:
        pytest.skip("Chromium is missing and cannot be installed here (needs root and apt-get): "
                    "run `sudo apt-get install -y chromium` or set ECATLAB_CHROMIUM to a Chromium binary")
    env = dict(os.environ, DEBIAN_FRONTEND="noninteractive")
    _run(["apt-get", "update"], APT_UPDATE_TIMEOUT, env)
    _run(["apt-get", "install", "-y", "chromium"], APT_INSTALL_TIMEOUT, env)
    found = _find_chromium()
    if not found:
        pytest.fail("apt-get installed chromium but no chromium binary is on PATH")
    return found


@pytest.fixture(scope="session")
def sync_playwright_factory():
    """``playwright.sync_api.sync_playwright``; ``pip install playwright`` first when it is missing."""
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        _run([sys.executable, "-m", "pip", "install", "--disable-pip-version-check", "playwright"], PIP_TIMEOUT)
        import importlib

        importlib.invalidate_caches()
        from playwright.sync_api import sync_playwright
    return sync_playwright


@pytest.fixture(scope="session")
def artifacts_dir() -> pathlib.Path:
    """Folder for screenshots and the server log: $ECATLAB_E2E_ARTIFACTS or <temp dir>/ecatlab-e2e (never the checkout)."""
    import tempfile

    folder = pathlib.Path(os.environ.get("ECATLAB_E2E_ARTIFACTS") or pathlib.Path(tempfile.gettempdir()) / "ecatlab-e2e").resolve()
    folder.mkdir(parents=True, exist_ok=True)
    for stale in ("failure_page.png", "failure_page.html"):  # from an earlier failed run
        (folder / stale).unlink(missing_ok=True)
    _log(f"artifacts (screenshots, JupyterLab log): {folder}")
    return folder


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _group_alive(pgid: int) -> bool:
    try:
        os.killpg(pgid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # pragma: no cover - a process of the group exists but is not ours
        return True
    return True


class JupyterLabServer:
    """A running JupyterLab: ``url(path)`` gives an address with the token."""

    def __init__(self, proc: subprocess.Popen, port: int, token: str, root_dir: pathlib.Path, log_path: pathlib.Path):
        self.proc, self.port, self.token, self.root_dir, self.log_path = proc, port, token, root_dir, log_path

    def url(self, path: str = "lab", **query: str) -> str:
        q = "&".join([f"token={self.token}"] + [f"{k}={v}" if v else k for k, v in query.items()])
        return f"http://127.0.0.1:{self.port}/{path.lstrip('/')}?{q}"

    def api(self, path: str, method: str = "GET", timeout: float = 5.0):
        request = urllib.request.Request(f"http://127.0.0.1:{self.port}/api/{path}", method=method,
                                         headers={"Authorization": f"token {self.token}"})
        with urllib.request.urlopen(request, timeout=timeout) as response:
            body = response.read()
        return json.loads(body) if body else None

    def log_tail(self, chars: int = 4000) -> str:
        try:
            return self.log_path.read_text(errors="replace")[-chars:]
        except OSError:
            return ""


@pytest.fixture(scope="session")
def jupyterlab(tmp_path_factory: pytest.TempPathFactory, artifacts_dir: pathlib.Path):
    """JupyterLab on 127.0.0.1:<free port> with a random token, serving a temporary copy of notebooks/.

    One server for the whole session (its start-up is a good part of a browser test's time); each
    test opens its own notebook in a fresh browser, and tests that write notebooks write them into
    ``root_dir`` (the temporary copy), never into the checkout."""
    tmp_path = tmp_path_factory.mktemp("jupyterlab")
    root_dir = tmp_path / "notebooks"
    shutil.copytree(ROOT / "notebooks", root_dir, ignore=shutil.ignore_patterns(".ipynb_checkpoints"))
    home = tmp_path / "jupyter"
    env = dict(os.environ)
    env.pop("MPLBACKEND", None)  # with MPLBACKEND=Agg exported, notebook figures never reach the front end
    env.update(
        JUPYTER_CONFIG_DIR=str(home / "config"),
        JUPYTERLAB_SETTINGS_DIR=str(home / "lab-settings"),
        JUPYTERLAB_WORKSPACES_DIR=str(home / "lab-workspaces"),
        JUPYTER_RUNTIME_DIR=str(home / "runtime"),
        IPYTHONDIR=str(home / "ipython"),
        PYTHONUNBUFFERED="1",
    )
    # JupyterLab asks on first start whether to fetch its news feed from the internet; answer "never"
    # in this throw-away settings folder (the toast would otherwise cover part of the notebook)
    news = home / "lab-settings" / "@jupyterlab" / "apputils-extension" / "notification.jupyterlab-settings"
    news.parent.mkdir(parents=True)
    news.write_text(json.dumps({"fetchNews": "false"}), encoding="utf-8")
    port, token = _free_port(), secrets.token_hex(24)
    cmd = [
        sys.executable, "-m", "jupyter", "lab", "--no-browser",
        "--ServerApp.ip=127.0.0.1", f"--ServerApp.port={port}", "--ServerApp.port_retries=0",
        f"--ServerApp.token={token}", f"--ServerApp.root_dir={root_dir}",
        # no calls to the internet from the server: the news feed and the update check are off
        "--LabApp.news_url=None", "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
    ]
    if os.geteuid() == 0:
        cmd.append("--allow-root")
    log_path = artifacts_dir / "jupyterlab.log"
    log = open(log_path, "w", encoding="utf-8")
    _log("starting: " + " ".join(c if token not in c else c.replace(token, "<token>") for c in cmd))
    started = time.monotonic()
    proc = subprocess.Popen(cmd, cwd=root_dir, env=env, stdout=log, stderr=subprocess.STDOUT, stdin=subprocess.DEVNULL,
                            start_new_session=True)
    server = JupyterLabServer(proc, port, token, root_dir, log_path)
    try:
        deadline = time.monotonic() + SERVER_START_TIMEOUT
        while True:
            if proc.poll() is not None:
                pytest.fail(f"JupyterLab exited with code {proc.returncode} during start-up:\n{server.log_tail()}")
            try:
                server.api("status", timeout=2.0)
                break
            except (urllib.error.URLError, ConnectionError, OSError):
                pass
            if time.monotonic() > deadline:
                pytest.fail(f"JupyterLab did not answer within {SERVER_START_TIMEOUT} s:\n{server.log_tail()}")
            time.sleep(0.3)
        _log(f"JupyterLab ready on port {port} after {time.monotonic() - started:.1f} s (root {root_dir})")
        yield server
    finally:
        _stop_server(server)
        log.close()


def _stop_server(server: JupyterLabServer) -> None:
    proc, pgid = server.proc, server.proc.pid  # start_new_session: the server leads its own process group
    if proc.poll() is None:
        try:  # clean shutdown: the server stops its kernels itself
            server.api("shutdown", method="POST", timeout=5.0)
        except (urllib.error.URLError, ConnectionError, OSError) as exc:
            _log(f"shutdown request failed ({exc}); terminating")
        try:
            proc.wait(timeout=SERVER_STOP_TIMEOUT)
        except subprocess.TimeoutExpired:
            _log("JupyterLab did not stop after the shutdown request; SIGTERM to its process group")
    for sig, wait in ((signal.SIGTERM, 10.0), (signal.SIGKILL, 5.0)):
        if not _group_alive(pgid):
            break
        try:
            os.killpg(pgid, sig)
        except ProcessLookupError:
            break
        deadline = time.monotonic() + wait
        while _group_alive(pgid) and time.monotonic() < deadline:
            time.sleep(0.1)
    if proc.poll() is None:
        proc.wait(timeout=5.0)
    assert not _group_alive(pgid), f"processes of JupyterLab's process group {pgid} are still running"
    _log("JupyterLab and its kernels stopped")
