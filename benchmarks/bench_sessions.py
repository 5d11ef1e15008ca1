"""Server memory and redraw latency with many browser sessions open at once (prints JSON lines).

Serves the dashboard (``porefill serve``, on the nitrogen demo scenario unless ``--scenario`` names
another) and drives real Chromium pages with Playwright's async API, every session in its own browser
context, spread over ``--browsers`` Chromium processes. All sessions run at the same time. The server's
memory is the sum over the server process and all its descendants (the isotherm workers, fit processes):
VmRSS from ``/proc/<pid>/status`` (shared pages counted once per process) and, beside it, the
proportional set size from ``/proc/<pid>/smaps_rollup``.

The scripted use of one session: drag the side-length slider (redraw latency: release → readout text
changed, and → steps table changed once the isotherm arrives) and the temperature slider (release → steps
table changed), ``--reps`` times each, alternating directions; open the Quantum states and About & safety
tabs and come back. Latencies are taken on the page's own clock (a pointer-up listener and a mutation
observer), so a busy benchmark process does not inflate them.

Modes
-----
``--mode memory`` (5 sessions)
    Baseline after one warm-up session has opened and closed (so the isotherm worker processes exist),
    memory while the sessions open and are used, then after they close (sampled up to ``--settle`` s; Bokeh
    drops a closed session's state after about 15–30 s). Last line: baseline_mb, peak_mb, after_close_mb,
    under_1gb.
``--mode load`` (20 sessions)
    The scripted use plus, on the Measured data tab, an upload of ``scenarios/invented-nitrogen-77K.csv``;
    ``--fits`` sessions press Fit and wait for the result, ``--cancels`` more press Fit and cancel after a
    few seconds; then one more round of slider drags while the fits run. Prints errors (exceptions and
    timeouts, per session and step), median and 95th-percentile latencies, peak memory and memory after
    close.
``--mode soak --minutes N`` (3 sessions)
    Each session opens a fresh context, does the scripted use with the upload, closes it and starts again,
    until N minutes have passed; memory every ~10 s, then after close against the baseline. In the load and
    soak modes the warm-up is one round of the same use with the upload by as many sessions at once as the
    run has (`warm_up`), so what the server takes once for that use is part of the baseline;
    ``cold_server_mb`` is printed beside it, and each sample carries the server process's own RSS.

Run: ``.venv/bin/python benchmarks/bench_sessions.py --mode memory`` (or ``--mode load --sessions 20``,
``--mode soak --minutes 10``). The figures depend on what else the machine runs: on a 2-core machine the
browsers and the server share the cores, so load-mode latencies measure that contention too.
"""
from __future__ import annotations

import argparse
import asyncio
import json
import os
import subprocess
import tempfile
import time
from collections import Counter
from pathlib import Path

import numpy as np
from playwright.async_api import async_playwright

from bench_browser_redraw import ARGS, free_port
from porefill.explorer.server.testing import serve_scenario

ROOT = Path(__file__).resolve().parents[1]
SCENARIO = ROOT / "scenarios" / "demo-nitrogen-invented-measured.toml"
MEASURED = ROOT / "scenarios" / "invented-nitrogen-77K.csv"
TIMEOUT_MS = 180_000           # one step of a session under load (a page load, a redraw, a tab)
MB = 1024 * 1024

# the release time of the last drag, on the page's clock (set before any of the page's own listeners run)
ON_RELEASE = "window.addEventListener('pointerup', () => { window.__benchRelease = performance.now(); }, true);"
# note when the text of each host (shadow root or element) first changes after this call
ARM = """([hosts, key]) => {
  window.__bench = window.__bench || {};
  window.__benchRelease = null;
  const rec = window.__bench[key] = hosts.map(() => null);
  hosts.forEach((host, i) => {
    const root = host.shadowRoot || host;
    const before = root.textContent;
    const obs = new MutationObserver(() => {
      if (root.textContent !== before) { rec[i] = performance.now(); obs.disconnect(); }
    });
    obs.observe(root, {childList: true, subtree: true, characterData: true});
  });
}"""
SHADOW_TEXT = "e => (e.shadowRoot || e).textContent"


# ---- server and its memory ------------------------------------------------------------------------
def serve(scenario: Path, port: int, log) -> subprocess.Popen:
    """``porefill serve`` in a subprocess writing to ``log``; returned once the port accepts connections."""
    return serve_scenario(scenario, port, output=log, timeout_s=120.0)


def process_tree(root: int) -> list[int]:
    """``root`` and all its descendants, from the parent ids in ``/proc/<pid>/stat``."""
    children: dict[int, list[int]] = {}
    for name in os.listdir("/proc"):
        if name.isdigit():
            try:
                stat = Path(f"/proc/{name}/stat").read_text()
            except OSError:
                continue
            children.setdefault(int(stat.rsplit(")", 1)[1].split()[1]), []).append(int(name))
    tree, todo = [], [root]
    while todo:
        pid = todo.pop()
        tree.append(pid)
        todo.extend(children.get(pid, []))
    return tree


def _kb(path: str, field: str) -> int:
    try:
        for line in Path(path).read_text().splitlines():
            if line.startswith(field):
                return int(line.split()[1])
    except OSError:
        pass
    return 0                   # the process ended between listing and reading


def server_memory(root: int) -> dict:
    """RSS and PSS (MB) summed over the server and its descendants, and how many processes that is."""
    tree = process_tree(root)
    rss = sum(_kb(f"/proc/{pid}/status", "VmRSS:") for pid in tree)
    pss = sum(_kb(f"/proc/{pid}/smaps_rollup", "Pss:") for pid in tree)
    return {"rss_mb": round(rss / 1024, 1), "pss_mb": round(pss / 1024, 1), "processes": len(tree),
            "server_rss_mb": round(_kb(f"/proc/{root}/status", "VmRSS:") / 1024, 1)}


def process_table(root: int) -> list[dict]:
    """Each process of the server's tree: pid, what it is and its RSS (MB)."""
    rows = []
    for pid in process_tree(root):
        try:
            cmd = Path(f"/proc/{pid}/cmdline").read_bytes().replace(b"\0", b" ").decode(errors="replace")
        except OSError:
            continue
        kind = ("resource tracker" if "resource_tracker" in cmd else "spawned worker" if "spawn_main" in cmd
                else "server" if pid == root else cmd[:60])
        rows.append({"pid": pid, "kind": kind, "rss_mb": round(_kb(f"/proc/{pid}/status", "VmRSS:") / 1024, 1)})
    return rows


class Sampler:
    """Samples the server's memory every ``interval`` s in the background and prints each sample."""

    def __init__(self, pid: int, interval: float):
        self.pid, self.interval, self.phase, self.open, self.closed = pid, interval, "start", 0, 0
        self.samples: list[dict] = []
        self._t0 = time.perf_counter()

    def sample(self, quiet: bool = False) -> dict:
        s = {"benchmark": "sessions_memory_sample", "t_s": round(time.perf_counter() - self._t0, 1),
             "phase": self.phase, "open_sessions": self.open, "closed_sessions": self.closed,
             **server_memory(self.pid)}
        self.samples.append(s)
        if not quiet:
            print(json.dumps(s), flush=True)
        return s

    async def run(self) -> None:
        while True:
            self.sample()
            await asyncio.sleep(self.interval)

    def peak(self) -> float:
        return max(s["rss_mb"] for s in self.samples)

    async def settle(self, seconds: float, baseline: float | None = None) -> dict:
        """Sample every 5 s until the RSS is within 5 % of ``baseline`` (without one: moved less than 2 MB
        since the last sample) or ``seconds`` have passed; return the last sample."""
        deadline, last = time.perf_counter() + seconds, self.samples[-1]["rss_mb"]
        while True:
            await asyncio.sleep(5)
            s = self.sample()
            near = s["rss_mb"] <= 1.05 * baseline if baseline is not None else abs(s["rss_mb"] - last) < 2
            if near or time.perf_counter() > deadline:
                return s
            last = s["rss_mb"]


# ---- one browser session --------------------------------------------------------------------------
class Session:
    """One browser context on the dashboard, with its latencies and errors."""

    def __init__(self, index: int, browser, url: str):
        self.index, self.browser, self.url = index, browser, url
        self.latency_ms: dict[str, list[float]] = {"readout": [], "isotherm": []}
        self.errors: list[dict] = []
        self.console_errors: list[str] = []
        self.upload_s: float | None = None
        self.fit: str | None = None
        self.context = self.page = None
        self.rounds = 0

    async def step(self, name: str, coroutine) -> None:
        """Run one step; an exception or timeout is recorded as an error and the session goes on."""
        try:
            await coroutine
        except Exception as exc:        # noqa: BLE001 - every failure of a step is a figure to print
            self.errors.append({"session": self.index, "step": name, "error": f"{type(exc).__name__}: "
                                f"{str(exc).splitlines()[0][:160] if str(exc) else ''}"})

    async def open(self) -> None:
        self.context = await self.browser.new_context(viewport={"width": 1500, "height": 1100})
        self.context.set_default_timeout(TIMEOUT_MS)
        await self.context.add_init_script(ON_RELEASE)
        self.page = await self.context.new_page()
        self.page.on("pageerror", lambda exc: self.console_errors.append(str(exc)[:160]))
        self.page.on("console", lambda m: self.console_errors.append(m.text[:160]) if m.type == "error" else None)
        await self.page.goto(self.url, timeout=TIMEOUT_MS)
        await self.page.locator(".porefill-steps table").first.wait_for(timeout=TIMEOUT_MS)

    async def close(self) -> None:
        if self.context is not None:
            await self.context.close()
            self.context = None

    async def _handle(self, label: str):
        titles = self.page.locator(".bk-slider-title")
        for i, text in enumerate(await titles.all_inner_texts()):
            if text.startswith(label):
                return self.page.locator(".noUi-handle").nth(i)
        raise LookupError(f"no slider titled {label!r}")

    async def redraw(self, label: str, dx: float, watch: dict[str, str]) -> None:
        """Drag slider ``label`` by ``dx`` px; record release → text change of each watched host."""
        page, key = self.page, f"drag{time.perf_counter_ns()}"
        hosts = [await page.locator(sel).first.element_handle() for sel in watch.values()]
        await page.evaluate(ARM, [hosts, key])
        box = await (await self._handle(label)).bounding_box()
        x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
        await page.mouse.move(x, y)
        await page.mouse.down()
        await page.mouse.move(x + dx, y, steps=4)
        await page.mouse.up()
        try:
            await page.wait_for_function("k => window.__bench[k].every(t => t !== null)", arg=key,
                                         timeout=TIMEOUT_MS, polling=100)
        finally:
            release, *changed = await page.evaluate("k => [window.__benchRelease, ...window.__bench[k]]", key)
            for kind, t in zip(watch, changed):
                if t is not None and release is not None:
                    self.latency_ms[kind].append(t - release)

    async def use(self, reps: int) -> None:
        """Slider drags (side length, temperature) and a round of tabs."""
        for _ in range(reps):
            sign = 1 if self.rounds % 2 == 0 else -1     # back and forth about the scenario's values
            self.rounds += 1
            await self.step("side-length", self.redraw(
                "Side length", sign * (20 + 3 * (self.index % 5)),
                {"readout": ".porefill-readout", "isotherm": ".porefill-steps"}))
            await self.step("temperature", self.redraw(
                "Temperature", sign * (6 + self.index % 4), {"isotherm": ".porefill-steps"}))
        for tab in ("Quantum states", "About & safety", "Pore"):
            await self.step(f"tab {tab}", self.tab(tab))

    async def tab(self, name: str) -> None:
        await self.page.get_by_text(name, exact=True).first.click()
        await self.page.wait_for_timeout(1000)

    async def upload(self) -> None:
        """Drop the measured file on the Measured data tab; wait until the page says it was read."""
        page = self.page
        await self.tab("Measured data")
        t0 = time.perf_counter()
        await page.locator(".porefill-dropper input[type=file]").first.set_input_files(str(MEASURED))
        await page.wait_for_function(f"e => (e.shadowRoot || e).textContent.includes('{MEASURED.name}: ')",
                                     arg=await page.locator(".porefill-file-problems").first.element_handle(),
                                     timeout=TIMEOUT_MS, polling=200)
        self.upload_s = time.perf_counter() - t0

    async def run_fit(self, cancel: bool, timeout_s: float) -> None:
        """Press Fit on the Measured data tab; cancel once it reports progress, or wait for the result."""
        page = self.page
        status = page.locator(".porefill-fit-status").first
        await page.get_by_role("button", name="Fit", exact=True).first.click()
        t0 = time.perf_counter()
        await page.wait_for_function("e => e.shadowRoot.textContent.includes('evaluation')",
                                     arg=await status.element_handle(), timeout=TIMEOUT_MS, polling=500)
        if cancel:
            await page.wait_for_timeout(3000)
            await page.get_by_role("button", name="Cancel", exact=True).first.click()
            words = "Cancelled"
        else:
            words = "Fit finished"
        await page.wait_for_function(f"e => e.shadowRoot.textContent.includes('{words}')",
                                     arg=await status.element_handle(), timeout=1e3 * timeout_s, polling=500)
        self.fit = f"{'cancelled' if cancel else 'finished'} after {time.perf_counter() - t0:.0f} s"


# ---- the modes ------------------------------------------------------------------------------------
def spread(browsers: list, n: int, url: str) -> list[Session]:
    return [Session(i, browsers[i % len(browsers)], url) for i in range(n)]


async def load_session(s: Session, args, delay: float) -> None:
    await asyncio.sleep(delay)                     # arrivals a little apart, as people's would be
    await s.step("open", s.open())
    if s.page is None or s.errors:
        return
    await s.use(args.reps)
    if args.mode != "memory":
        await s.step("upload", s.upload())
        if s.index < args.fits + args.cancels:
            await s.step("fit", s.run_fit(cancel=s.index >= args.fits, timeout_s=args.fit_timeout))
        await s.step("tab Pore", s.tab("Pore"))
        await s.use(1)


async def soak_worker(index: int, browser, url: str, args, deadline: float, sampler: Sampler) -> list[Session]:
    done = []
    while time.perf_counter() < deadline:
        s = Session(index, browser, url)
        await s.step("open", s.open())
        sampler.open += 1
        if s.page is not None:
            await s.use(2)
            await s.step("upload", s.upload())
        await s.close()
        sampler.open -= 1
        sampler.closed += 1
        done.append(s)
        await asyncio.sleep(2)
    return done


def report(sessions: list[Session], sampler: Sampler, baseline: float, cold: float, after: dict, args) -> None:
    errors = [e for s in sessions for e in s.errors]
    for e in errors:
        print(json.dumps({"benchmark": "sessions_error", **e}))
    summary = {"benchmark": f"sessions_{args.mode}", "sessions": len(sessions),
               "real_browser_contexts": len(sessions), "chromium_processes": args.browsers,
               "errors": len(errors), "sessions_with_errors": sum(bool(s.errors) for s in sessions),
               "console_errors": sum(len(s.console_errors) for s in sessions)}
    if summary["console_errors"]:
        counts = Counter(m for s in sessions for m in s.console_errors)
        summary["console_errors_most_common"] = counts.most_common(3)
    for kind in ("readout", "isotherm"):
        ms = [v for s in sessions for v in s.latency_ms[kind]]
        if ms:
            summary[f"{kind}_median_ms"] = round(float(np.median(ms)), 1)
            summary[f"{kind}_p95_ms"] = round(float(np.percentile(ms, 95)), 1)
            summary[f"{kind}_n"] = len(ms)
    uploads = [s.upload_s for s in sessions if s.upload_s is not None]
    if uploads:
        summary["upload_median_s"] = round(float(np.median(uploads)), 2)
    fits = [s.fit for s in sessions if s.fit]
    if fits:
        summary["fits"] = fits
    peak = sampler.peak()
    summary.update({"cold_server_mb": cold, "baseline_mb": baseline, "peak_mb": peak,
                    "peak_pss_mb": max(x["pss_mb"] for x in sampler.samples),
                    "after_close_mb": after["rss_mb"], "after_close_pss_mb": after["pss_mb"],
                    "under_1gb": peak < 1024})
    # processes started since the baseline (a second isotherm worker, a fit still ending) apart
    kept = {row["pid"] for row in after["by_process"]["baseline"]}
    rows = after["by_process"]["after_close"]
    summary["after_close_baseline_processes_mb"] = round(sum(r["rss_mb"] for r in rows if r["pid"] in kept), 1)
    summary["after_close_new_processes_mb"] = round(sum(r["rss_mb"] for r in rows if r["pid"] not in kept), 1)
    # the server process alone (its workers come and go with the pools) and the whole tree, against the baseline
    server = {phase: sum(r["rss_mb"] for r in rows_ if r["kind"] == "server")
              for phase, rows_ in after["by_process"].items()}
    summary["server_process_baseline_mb"] = round(server["baseline"], 1)
    summary["server_process_after_close_mb"] = round(server["after_close"], 1)
    if server["baseline"]:
        summary["server_process_growth_percent"] = round(100 * (server["after_close"] / server["baseline"] - 1), 1)
    summary["tree_growth_percent"] = round(100 * (after["rss_mb"] / baseline - 1), 1)
    print(json.dumps(summary, ensure_ascii=False), flush=True)
    print(json.dumps({"benchmark": f"sessions_{args.mode}_rss_by_process", **after["by_process"]}))


async def warm_up(browsers: list, url: str, args) -> None:
    """Memory mode: one session opens and closes (the isotherm workers start). Load and soak modes: one
    round of the same use with the upload, by as many sessions at once as the run will have, so that what the
    server takes once for that much concurrent use (modules, compiled kernels, the parse worker, the
    allocator's high-water mark) is in the baseline and what grows after it is what sessions leave behind."""
    if args.mode == "memory":
        warm = Session(-1, browsers[0], url)
        await warm.open()
        await warm.close()
        return

    async def one(i: int) -> None:
        warm = Session(-1 - i, browsers[i % len(browsers)], url)
        await warm.step("open", warm.open())
        if warm.page is not None:
            await warm.use(1)
            await warm.step("upload", warm.upload())
        await warm.close()

    await asyncio.gather(*(one(i) for i in range(args.sessions)))


async def main(args) -> None:
    port = free_port()
    url = f"http://127.0.0.1:{port}/"
    with tempfile.NamedTemporaryFile("w+", prefix="porefill-serve-", suffix=".log", delete=False) as log:
        proc = serve(args.scenario, port, log)
        try:
            await run(args, proc.pid, url)
        finally:
            proc.terminate()
            proc.wait(timeout=30)
        text = Path(log.name).read_text(errors="replace").splitlines()
    bad = [line for line in text if "Traceback" in line or "ERROR" in line or "Error:" in line]
    print(json.dumps({"benchmark": "sessions_server_log", "log": log.name, "lines": len(text),
                      "error_lines": len(bad), "first_error_lines": bad[:5]}, ensure_ascii=False))


async def run(args, pid: int, url: str) -> None:
    sampler = Sampler(pid, args.interval)
    async with async_playwright() as p:
        browsers = [await p.chromium.launch(executable_path="/usr/bin/chromium", headless=True, args=ARGS)
                    for _ in range(args.browsers)]
        cold = sampler.sample()["rss_mb"]
        sampler.phase = "warm-up"                  # the first session starts the isotherm workers
        await warm_up(browsers, url, args)
        baseline = (await sampler.settle(45))["rss_mb"]
        before = process_table(pid)
        sampler.phase = "sessions"
        ticker = asyncio.create_task(sampler.run())
        if args.mode == "soak":
            deadline = time.perf_counter() + 60 * args.minutes
            done = await asyncio.gather(*(soak_worker(i, browsers[i % len(browsers)], url, args, deadline, sampler)
                                          for i in range(args.sessions)))
            sessions = [s for group in done for s in group]
        else:
            sessions = spread(browsers, args.sessions, url)
            sampler.open = len(sessions)
            await asyncio.gather(*(load_session(s, args, 0.5 * s.index) for s in sessions))
            sampler.phase = "closing"
            for s in sessions:
                await s.close()
            sampler.open = 0
        ticker.cancel()
        sampler.phase = "closed"
        after = await sampler.settle(args.settle, baseline)
        after["by_process"] = {"baseline": before, "after_close": process_table(pid)}
        for b in browsers:
            await b.close()
    report(sessions, sampler, baseline, cold, after, args)


def parse(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--mode", choices=("memory", "load", "soak"), default="memory")
    parser.add_argument("--sessions", type=int, help="browser sessions at once (default 5, 20, 3 by mode)")
    parser.add_argument("--browsers", type=int, help="Chromium processes the contexts share (default 1, 2, 1)")
    parser.add_argument("--reps", type=int, default=3, help="drags of each slider per round of use")
    parser.add_argument("--fits", type=int, default=1, help="load mode: sessions that fit to the end")
    parser.add_argument("--cancels", type=int, default=2, help="load mode: sessions that start a fit and cancel it")
    parser.add_argument("--fit-timeout", type=float, default=900.0, help="s a whole fit may take")
    parser.add_argument("--minutes", type=float, default=10.0, help="soak mode: how long (min)")
    parser.add_argument("--interval", type=float, default=5.0, help="s between memory samples")
    parser.add_argument("--settle", type=float, default=90.0, help="s to wait for memory to fall after close")
    parser.add_argument("--scenario", type=Path, default=SCENARIO, help="scenario file served")
    args = parser.parse_args(argv)
    modes = {"memory": (5, 1), "load": (20, 2), "soak": (3, 1)}
    args.sessions = args.sessions or modes[args.mode][0]
    args.browsers = min(args.browsers or modes[args.mode][1], args.sessions)
    if args.mode == "soak":
        args.interval = max(args.interval, 10.0)
    return args


if __name__ == "__main__":
    asyncio.run(main(parse()))
