"""LatestRunner (explorer/jobs/compute.py) on a served page's event loop: a burst of requests at a person's pace
computes its first and its last, and the last only once the burst has been quiet for the settle time."""
from __future__ import annotations

import asyncio
import threading
import time

import pytest
from panel.io.state import set_curdoc

from porefill.explorer.jobs.compute import SLIDER_SETTLE_S, LatestRunner

# seconds between arrow-key presses at a person's pace (common practice, no source: 150–250 ms), here a
# little quicker at times, as a person's rhythm is uneven
PERSON_GAPS_S = (0.15, 0.1, 0.2, 0.15, 0.12, 0.2)


class _Session:
    """The two document methods LatestRunner uses, on an asyncio loop: a served page's Bokeh document
    stand-in (its callbacks run on the one session thread, as Tornado runs them)."""

    session_context = object()

    def __init__(self, loop: asyncio.AbstractEventLoop):
        self.loop = loop

    def add_next_tick_callback(self, callback):
        self.loop.call_soon_threadsafe(callback)

    def add_timeout_callback(self, callback, timeout_ms: int):
        self.loop.call_soon_threadsafe(self.loop.call_later, timeout_ms / 1e3, callback)


def _bursts(times: list[float], settle_s: float) -> list[int]:
    """The requests the documented rule computes: each burst (requests within ``settle_s`` of the one before)
    its first and its last."""
    out, start = [], 0
    for i in range(1, len(times) + 1):
        if i == len(times) or times[i] - times[i - 1] >= settle_s:
            out += sorted({start, i - 1})
            start = i
    return out


def _press(settle_s: float, gaps=PERSON_GAPS_S):
    """Submit one request per press, ``gaps`` apart; (asked times, computed [(index, time)], applied indices)."""
    computed, applied, asked = [], [], []
    lock = threading.Lock()

    def work(i):
        with lock:
            computed.append((i, time.monotonic()))
        time.sleep(0.02)                     # a quick map: done long before the next press
        return i

    async def main():
        session = _Session(asyncio.get_running_loop())
        runner = LatestRunner("map", name="test map", settle_s=settle_s)
        for i in range(len(gaps) + 1):
            if i:
                await asyncio.sleep(gaps[i - 1])
            asked.append(time.monotonic())
            with set_curdoc(session):
                runner.submit(work, (i,), applied.append, lambda exc: applied.append(exc))
        await asyncio.sleep(settle_s + 0.5)         # anything still waiting has run by now
        return runner.started

    from run_apart import in_a_thread

    # a thread of its own: a browser test run earlier in this process (pytest-xdist's order) leaves
    # Playwright's event loop running in the main thread
    started = in_a_thread(lambda: asyncio.run(main()))
    assert started == len(computed)
    return asked, computed, applied


def test_presses_at_a_persons_pace_compute_the_first_and_the_last():
    asked, computed, applied = _press(SLIDER_SETTLE_S)
    gaps = [b - a for a, b in zip(asked, asked[1:])]
    assert max(gaps) < max(PERSON_GAPS_S) + 0.08, gaps        # the loop kept a person's pace
    expected = _bursts(asked, SLIDER_SETTLE_S)
    assert expected == [0, len(asked) - 1], gaps               # one burst, by the documented rule
    assert [i for i, _ in computed] == expected, gaps
    # each result reaches the view while it is the newest: the first before the second press, then the last
    assert applied == expected
    # the last computes only once the burst has been quiet for the settle time (the timer, not the pace)
    last_at = computed[-1][1]
    assert last_at - asked[-1] >= SLIDER_SETTLE_S - 0.01


def test_without_a_settle_time_every_press_computes():
    # the rule's other side, so that the test above is known to be about the timer: with no settle time
    # the same presses each compute (each ends before the next press)
    asked, computed, applied = _press(0.0)
    assert [i for i, _ in computed] == list(range(len(asked)))
    assert applied[-1] == len(asked) - 1


def test_a_settle_time_covers_a_persons_slowest_presses():
    # the settle time the views use must span the gaps of a person's presses, else each press computes
    assert SLIDER_SETTLE_S > max(PERSON_GAPS_S)


@pytest.mark.parametrize("settle_s", [-0.1, 6.0])
def test_a_settle_time_out_of_range_is_refused(settle_s):
    with pytest.raises(ValueError, match="settle_s"):
        LatestRunner("map", name="test map", settle_s=settle_s)
