"""A user's file parsed in a worker process with a time and a memory limit (`porefill.explorer.jobs.file_parse`):
the parser's own refusal, a time or memory overrun, each one line naming the file; the caller's event loop
keeps running meanwhile (issue 22, point 3)."""
from __future__ import annotations

import asyncio
import multiprocessing
import os
import time

import numpy as np
import pytest

from porefill.explorer.files.measured import MeasuredFileError, read_measured
from porefill.explorer.files.scenario_file import ScenarioFileError, dump_document, parse_document
from porefill.explorer.jobs.file_parse import ParseRefused, parse_in_worker, parse_off_loop

CSV = b"P (Pa),n (mmol/g)\n1,0.5\n3,0.9\n"


def _no_parse_workers_left() -> bool:
    return not [p for p in multiprocessing.active_children() if p.name.startswith("reading ")]


def test_a_file_read_in_the_worker_equals_the_direct_read():
    # common practice, no source: the worker changes where the parser runs, not what it returns
    direct = read_measured("run.csv", CSV)
    through = parse_in_worker(read_measured, "run.csv", CSV, file_name="run.csv", refusals=(MeasuredFileError,))
    np.testing.assert_array_equal(through.runs[0].amount, direct.runs[0].amount)
    np.testing.assert_array_equal(through.runs[0].pressure, direct.runs[0].pressure)
    text = dump_document(parse_document('[scenario]\nshape = "slit"\nsize_angstrom = 20.0\n'))
    doc = parse_in_worker(parse_document, text, file_name="s.toml", refusals=(ScenarioFileError,))
    assert doc.scenario == parse_document(text).scenario


@pytest.mark.parametrize("fn,args,refusals,words", [
    (read_measured, ("empty.csv", b""), (MeasuredFileError,), "empty.csv: the file is empty"),
    (parse_document, ("[scenario\n",), (ScenarioFileError,), "scenario.toml, line 1"),
])
def test_the_parsers_own_refusal_comes_back_as_one_line(fn, args, refusals, words):
    with pytest.raises(ParseRefused) as caught:
        parse_in_worker(fn, *args, file_name="the file", refusals=refusals)
    assert str(caught.value).startswith(words) and "Traceback" not in str(caught.value)


def test_a_parse_past_the_time_limit_is_refused_while_the_loop_runs_on():
    # common practice, no source: a slow parser (here one that sleeps a minute) is ended at the limit, and
    # the caller's event loop serves other work while it waits (ticks counted, no duration asserted)
    ticks = []

    async def other_session():
        while True:
            ticks.append(1)
            await asyncio.sleep(0.05)

    async def main():
        other = asyncio.create_task(other_session())
        try:
            with pytest.raises(ParseRefused) as caught:
                await parse_off_loop(time.sleep, 60, file_name="slow.csv", time_limit_s=2)
            return str(caught.value), len(ticks)
        finally:
            other.cancel()

    from run_apart import in_a_thread

    message, ticked = in_a_thread(lambda: asyncio.run(main()))
    assert message == "slow.csv: reading it took longer than 2 s; refused"
    assert ticked >= 3                                 # the loop turned while the worker was busy
    assert _no_parse_workers_left()


def test_a_parse_past_the_memory_limit_is_refused():
    # common practice, no source: RLIMIT_AS makes the worker's own allocation fail (4 GiB asked, 256 MiB allowed)
    with pytest.raises(ParseRefused, match=r"^huge\.csv: reading it needed more than 256 MB of memory; refused$"):
        parse_in_worker(bytearray, 2**32, file_name="huge.csv", memory_bytes=256 * 2**20)
    assert _no_parse_workers_left()


def test_an_unexpected_failure_names_the_file():
    with pytest.raises(ParseRefused, match=r"^odd\.csv: could not be read \(.*ZeroDivisionError"):
        parse_in_worker(divmod, 1, 0, file_name="odd.csv")


def test_the_parsers_own_keywords_reach_it():
    # a parser's own ``name`` keyword is the parser's (the file name of the messages is ``file_name``)
    with pytest.raises(ParseRefused, match=r"^bad\.toml, line 1"):
        parse_in_worker(parse_document, "[scenario\n", name="bad.toml", file_name="bad.toml",
                        refusals=(ScenarioFileError,))



def test_the_next_file_goes_to_the_reader_started_ahead_and_each_file_gets_a_fresh_one():
    # common practice, no source: a standby process saves the next file Python's start-up and the readers'
    # imports, but is used once (a file cannot see what an earlier one left); os.getpid run as the "parser"
    # says which process read each file
    from porefill.explorer.jobs import file_parse

    file_parse.keep_ready()
    ready = file_parse._standby.process.pid          # noqa: SLF001 - which process is waiting
    first = parse_in_worker(os.getpid, file_name="a.csv")
    waiting = file_parse._standby.process.pid        # noqa: SLF001 - started while the first file was read
    second = parse_in_worker(os.getpid, file_name="b.csv")
    assert first == ready and second == waiting
    assert len({first, second, os.getpid()}) == 3


def test_the_reader_started_ahead_keeps_the_memory_limit():
    # common practice, no source: RLIMIT_AS is set when the file arrives (4 GiB asked, the default 1 GiB allowed)
    from porefill.explorer.jobs import file_parse

    file_parse.keep_ready()
    with pytest.raises(ParseRefused, match=r"^huge\.csv: reading it needed more than 1024 MB of memory; refused$"):
        parse_in_worker(bytearray, 2**32, file_name="huge.csv")
    assert _no_parse_workers_left()


def test_an_unused_standby_ends_when_closed():
    from porefill.explorer.jobs.background import Standby

    standby = Standby(compiled=False)
    standby.close()
    standby.process.join(timeout=10)
    assert not standby.process.is_alive() and not standby.fits(memory_limit_bytes=None, compiled=False)


def test_files_dropped_while_the_reader_started_ahead_is_still_starting_are_read():
    # common practice, no source: a file may arrive the moment a page opens or right after another, while
    # the reader started ahead has not yet unpickled its queues; before the job held the standby, its queues'
    # semaphores were removed under it and the file came back "could not be read"
    from porefill.explorer.jobs import file_parse

    file_parse.keep_ready()
    for name in ("first.csv", "second.csv", "third.csv"):
        run = parse_in_worker(read_measured, name, CSV, file_name=name, refusals=(MeasuredFileError,))
        np.testing.assert_array_equal(run.runs[0].amount, [0.5, 0.9])
    assert _no_parse_workers_left()


_SERVER_LIKE = """
import sys, time
from porefill.explorer.jobs import file_parse
if __name__ == "__main__":
    file_parse.keep_ready()                       # as a page opening does: the fork server and a reader wait
    time.sleep(2.0)
    print("ready", flush=True)
    time.sleep(120)
"""


def _descendants(pid: int) -> set[int]:
    from pathlib import Path

    parents = {}
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                parents[int(entry.name)] = int((entry / "stat").read_text().rsplit(")", 1)[1].split()[1])
            except (OSError, IndexError, ValueError):
                pass
    found, frontier = set(), {pid}
    while frontier:
        frontier = {child for child, parent in parents.items() if parent in frontier} - found
        found |= frontier
    return found


@pytest.mark.skipif(not os.path.isdir("/proc"), reason="reads /proc")
def test_the_readers_end_when_the_server_that_started_them_is_ended(tmp_path):
    # common practice, no source: a server ended with SIGTERM (as a service manager stops it) leaves no file
    # reader behind (the reader forked by the fork server once watched the fork server, its parent, while the
    # fork server waited for it: both outlived the server)
    import subprocess
    import sys

    script = tmp_path / "server_like.py"
    script.write_text(_SERVER_LIKE, encoding="utf-8")
    server = subprocess.Popen([sys.executable, str(script)], stdout=subprocess.PIPE, text=True)
    try:
        assert server.stdout.readline().strip() == "ready"
        started = _descendants(server.pid)
        assert len(started) >= 2                  # at least the fork server and the reader it forked
    finally:
        server.terminate()
        server.wait(timeout=20)
    deadline = time.monotonic() + 15.0
    while time.monotonic() < deadline and any(os.path.exists(f"/proc/{pid}") for pid in started):
        time.sleep(0.25)
    alive = [pid for pid in started if os.path.exists(f"/proc/{pid}")
             and "Z" not in open(f"/proc/{pid}/stat").read().rsplit(")", 1)[1].split()[0]]
    assert alive == []
