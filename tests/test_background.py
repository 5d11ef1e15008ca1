"""The one background-work layer (explorer/jobs/background.py): the same events, cancel and time limit for a
task in a shared pool, a thread and a process of its own."""
from __future__ import annotations

import time
from concurrent.futures import ThreadPoolExecutor

import pytest

from porefill.explorer.jobs.background import Cancelled, PoolJob, ProcessJob, ThreadJob


def counting(n, *, progress, should_stop, pause=0.0):
    """Counts to n with progress; stops when asked (Cancelled), fails on a negative n (ValueError)."""
    if n < 0:
        raise ValueError(f"n must be >= 0; got {n}")
    for i in range(n):
        if should_stop():
            raise Cancelled(f"stopped at {i}")
        progress((i + 1) / n, f"{i + 1} of {n}")
        time.sleep(pause)
    return n * (n + 1) // 2


def slow_counting(n, *, progress, should_stop):
    return counting(n, progress=progress, should_stop=should_stop, pause=0.05)


def _until_finished(job, seconds=60.0):
    events = []
    end = time.monotonic() + seconds
    while not job.finished and time.monotonic() < end:
        events += job.poll()
        time.sleep(0.02)
    return events


@pytest.mark.parametrize("make", [
    lambda n: ThreadJob(counting, (n,), name="t"),
    lambda n: ProcessJob(counting, (n,), name="p"),
])
def test_progress_then_one_outcome(make):
    events = _until_finished(make(10))
    kinds = [e[0] for e in events]
    assert kinds[-1] == "done" and events[-1][1] == 55          # 1 + ... + 10 (arithmetic)
    assert set(kinds[:-1]) == {"progress"} and events[-2][1] == 1.0
    fractions = [e[1] for e in events[:-1]]
    assert fractions == sorted(fractions)


@pytest.mark.parametrize("make", [
    lambda: ThreadJob(slow_counting, (200,), name="t"),
    lambda: ProcessJob(slow_counting, (200,), name="p"),
])
def test_cancel_stops_the_work_at_its_next_check(make):
    job = make()
    time.sleep(0.5)
    job.cancel()
    events = _until_finished(job)
    assert events[-1][0] == "cancelled" and events[-1][1].startswith("stopped at")


@pytest.mark.parametrize("make", [
    lambda: ThreadJob(counting, (-1,), name="t"),
    lambda: ProcessJob(counting, (-1,), name="p"),
])
def test_a_value_error_is_one_line_for_the_page(make):
    events = _until_finished(make())
    assert events == [("error", "n must be >= 0; got -1")]


def test_past_the_time_limit_the_job_ends_in_an_error_and_is_ended():
    job = ProcessJob(slow_counting, (10_000,), name="p", time_limit_s=1.0)
    events = _until_finished(job)
    assert events[-1][0] == "error" and "longer than 1 s" in events[-1][1]
    job.process.join(timeout=10)
    assert not job.process.is_alive()                     # killed, not left running


def test_a_pool_task_is_watched_and_a_late_result_after_the_time_limit_is_dropped():
    with ThreadPoolExecutor(1) as pool:
        seen = []
        job = PoolJob(pool, sum, ([1, 2, 3],), name="sum")
        job.watch(seen.append)
        job.future.result(timeout=10)
        assert seen == [("done", 6)] and job.finished
        slow = PoolJob(pool, time.sleep, (1.5,), name="sleep", time_limit_s=0.2)
        waiting = PoolJob(pool, sum, ([1],), name="queued")
        late = []
        slow.watch(late.append)
        waiting.cancel()                                  # still waiting behind the sleep: dropped
        slow.future.result(timeout=10)
        assert late == [("error", "this took longer than 0.2 s and was given up; try a smaller pore")]
        assert waiting.poll() == [("cancelled", "cancelled before it started")]


def test_workers_end_when_their_parent_is_killed(tmp_path):
    # a server killed outright (SIGKILL skips every shutdown) must not leave its workers computing
    import os
    import subprocess
    import sys

    code = (
        "import os, sys, time, multiprocessing\n"
        "from concurrent.futures import ProcessPoolExecutor\n"
        "from porefill.explorer.jobs.sweep_runner import _init_worker\n"
        "if __name__ == '__main__':\n"
        "    pool = ProcessPoolExecutor(1, mp_context=multiprocessing.get_context('spawn'), initializer=_init_worker)\n"
        "    print(pool.submit(os.getpid).result(), flush=True)\n"
        "    pool.submit(time.sleep, 600)\n"
        "    time.sleep(0.5)\n"
        "    os._exit(0)\n")
    script = tmp_path / "server.py"
    script.write_text(code)
    out = subprocess.run([sys.executable, str(script)], capture_output=True, text=True, timeout=120)
    worker = int(out.stdout.split()[0])
    for _ in range(100):
        try:
            os.kill(worker, 0)
        except ProcessLookupError:
            break
        time.sleep(0.1)
    else:
        os.kill(worker, 9)
        raise AssertionError(f"worker {worker} outlived its parent by 10 s")
