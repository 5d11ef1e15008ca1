"""Shared fixtures: catalog pairs and a served dashboard for the browser tests."""
from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]


@pytest.fixture(scope="session")
def helium_pair():
    from porefill.physics.substances.materials import pair_parameters
    return pair_parameters("helium-4")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="session")
def served_app():
    """Serve the dashboard on the demo scenario in a subprocess; yield its URL."""
    port = _free_port()
    exe = Path(sys.executable).with_name("porefill")
    cmd = [str(exe), "serve", "--scenario", str(ROOT / "scenarios" / "demo-hexagon-helium.toml"),
           "--port", str(port)]
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True,
                            env={**os.environ, "PYTHONUNBUFFERED": "1"})
    url = f"http://127.0.0.1:{port}/"
    deadline = time.time() + 60
    while time.time() < deadline:
        try:
            with socket.create_connection(("127.0.0.1", port), timeout=0.5):
                break
        except OSError:
            if proc.poll() is not None:
                raise RuntimeError(f"server exited: {proc.stdout.read()}")
            time.sleep(0.2)
    else:
        proc.kill()
        raise RuntimeError("server did not start within 60 s")
    # the first page starts the worker processes (each imports the physics): take that cost here, once,
    # so that each test's page load measures the page, not the start-up
    import urllib.request
    with urllib.request.urlopen(url, timeout=120) as response:
        response.read()
    yield url
    proc.terminate()
    try:
        proc.wait(timeout=10)
    except subprocess.TimeoutExpired:
        proc.kill()


@pytest.fixture(scope="module")
def argon_url():
    """A server of its own, per test module, on the argon slit demo (classical sites: its isotherms take a
    fraction of a second)."""
    from porefill.explorer.server.testing import serve_scenario

    port = _free_port()
    proc = serve_scenario("demo-slit-argon", port)
    yield f"http://127.0.0.1:{port}/"
    proc.terminate()
    proc.wait(timeout=20)


@pytest.fixture(scope="session")
def browser():
    from playwright.sync_api import sync_playwright

    if not os.path.exists(CHROMIUM):
        pytest.fail(f"{CHROMIUM} is missing: the test command installs Debian's chromium (make test)")
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=CHROMIUM_ARGS)
        yield b
        b.close()


@pytest.fixture()
def page(browser, served_app):
    """A fresh page on the served app, with console errors collected in page.console_errors."""
    context = browser.new_context(viewport={"width": 1500, "height": 1100})
    pg = context.new_page()
    errors: list[str] = []
    pg.on("console", lambda msg: errors.append(msg.text) if msg.type == "error" else None)
    pg.on("pageerror", lambda exc: errors.append(str(exc)))
    pg.console_errors = errors
    pg.goto(served_app, timeout=90_000)
    yield pg
    context.close()


@pytest.fixture
def smooth_wall(monkeypatch):
    """Nitrogen and argon on the smooth continuum wall: their spread of site energies
    (`porefill.physics.substances.materials.WALL_SPREADS`) removed for one test, caches cleared around it."""
    from porefill.physics.caching import clear_caches
    from porefill.physics.substances import materials

    for key in list(materials.WALL_SPREADS):
        monkeypatch.delitem(materials.WALL_SPREADS, key)
    clear_caches()
    yield
    monkeypatch.undo()
    clear_caches()


def pytest_collection_modifyitems(config, items):
    """Tests marked slow (minutes of reference computation, e.g. the independent quantum solver at its larger
    pores) run when POREFILL_SLOW=1; otherwise they are skipped with that reason shown."""
    if os.environ.get("POREFILL_SLOW") == "1":
        return
    skip = pytest.mark.skip(reason="slow reference check: run with POREFILL_SLOW=1")
    for item in items:
        if "slow" in item.keywords:
            item.add_marker(skip)


def _is_xdist_worker(config) -> bool:
    return hasattr(config, "workerinput")


def pytest_configure(config):
    """Kernels the tests build go to a folder of this run (removed at the end), never the user's cache; the
    served dashboard inherits it. Every process the run starts carries a marker (`leftover_processes`).

    Under pytest-xdist (`make test` runs the files on several worker processes) each worker has a cache folder
    of its own, but keeps the controller's marker: the controller looks for leftovers once every worker has
    ended, so a process a worker left behind is found there and fails the run."""
    import tempfile

    from leftover_processes import VARIABLE, mark_run

    config._porefill_cache = tempfile.mkdtemp(prefix="porefill-test-cache-")
    os.environ["POREFILL_CACHE_DIR"] = config._porefill_cache
    if _is_xdist_worker(config) and os.environ.get(VARIABLE):
        config._porefill_run = None                 # the controller's marker, inherited; it checks
    else:
        config._porefill_run = mark_run()


def _retire_own_pools() -> None:
    """Shut down the worker pools that in-process tests started in this process (the dashboard's isotherm
    pool, the Sizing tab's sweep runners), as a server does when its last session closes; their workers then
    end within the grace period."""
    compute = sys.modules.get("porefill.explorer.jobs.compute")
    if compute is not None:
        compute.retire_pools()
    sizing = sys.modules.get("porefill.explorer.views.sizing")
    if sizing is not None:
        sizing.close_runners()


@pytest.hookimpl(trylast=True)
def pytest_sessionfinish(session, exitstatus):
    """The run fails if it leaves a process behind (a served dashboard, a worker, a browser): each one still
    alive 15 s after the last test is named, then killed. Last of the hooks: under pytest-xdist the workers
    have ended by then (their own pools retired as they finished)."""
    import signal

    from leftover_processes import left_behind

    _retire_own_pools()
    marker = getattr(session.config, "_porefill_run", None)
    if marker is None or session.config.option.collectonly:
        return                                      # an xdist worker: the controller checks
    alive = left_behind(marker)
    if not alive:
        return
    for pid, _ in alive:
        try:
            os.kill(pid, signal.SIGKILL)
        except OSError:
            pass
    reporter = session.config.pluginmanager.get_plugin("terminalreporter")
    lines = [f"the test run left {len(alive)} process(es) behind (killed now):"]
    lines += [f"  pid {pid}: {cmd}" for pid, cmd in alive]
    if reporter is not None:
        reporter.write_line("\n".join(lines), red=True)
    else:
        print("\n".join(lines), file=sys.stderr)
    session.exitstatus = pytest.ExitCode.TESTS_FAILED


def pytest_unconfigure(config):
    import shutil

    folder = getattr(config, "_porefill_cache", None)
    if folder:
        shutil.rmtree(folder, ignore_errors=True)
