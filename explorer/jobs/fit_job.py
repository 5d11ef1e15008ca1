"""A fit in a process of its own, with progress and cancel, for the dashboard.

The fit takes seconds to a minute of CPU; in the server's process it would hold the interpreter from every
other session. `FitProcess` starts it in a spawned process (spawn, not fork: the server has threads) and
talks to it through a queue (progress, then the result or an error) and an event (stop). The session polls
the queue from a periodic callback. No Panel here.
"""
from __future__ import annotations

import multiprocessing
import queue as queue_module

__all__ = ["FitProcess"]


def _run(request, messages, stop) -> None:
    from porefill.explorer.jobs.threads import one_blas_thread

    one_blas_thread()          # one fit process beside the isotherm workers (explorer/jobs/threads.py)
    from porefill.physics.fitting.solve import FitCancelled, fit

    last = [0.0]

    def progress(fraction: float, message: str) -> None:
        if fraction - last[0] >= 0.01 or fraction >= 1.0:        # a few hundred messages at most
            last[0] = fraction
            messages.put(("progress", float(fraction), message))

    try:
        result = fit(request, progress=progress, should_stop=stop.is_set)
    except FitCancelled as exc:
        messages.put(("cancelled", str(exc)))
    except ValueError as exc:                   # the data cannot be compared with the model: say why
        messages.put(("error", str(exc)))
    except Exception as exc:                    # noqa: BLE001 - reported in the view, never kills the server
        messages.put(("error", f"the fit failed: {type(exc).__name__}: {exc}"))
    else:
        messages.put(("done", result))


class FitProcess:
    """One fit in a spawned process. ``poll()`` returns the messages that arrived: ("progress", fraction,
    text), then one of ("done", FitResult), ("cancelled", text), ("error", text)."""

    def __init__(self, request) -> None:
        ctx = multiprocessing.get_context("spawn")
        self._messages = ctx.Queue()
        self._stop = ctx.Event()
        self._process = ctx.Process(target=_run, args=(request, self._messages, self._stop), daemon=True,
                                    name="porefill-fit")
        self._process.start()
        self.finished = False

    def poll(self) -> list[tuple]:
        out = []
        while True:
            try:
                message = self._messages.get_nowait()
            except queue_module.Empty:
                break
            out.append(message)
            if message[0] in ("done", "cancelled", "error"):
                self.finished = True
                self._process.join(timeout=5)
        if not self.finished and not self._process.is_alive() and self._messages.empty():
            self.finished = True
            out.append(("error", f"the fit process ended without a result (exit code {self._process.exitcode})"))
        return out

    def cancel(self) -> None:
        """Ask the fit to stop at its next model evaluation."""
        self._stop.set()

    def kill(self) -> None:
        """End the process now (the session went away)."""
        if self._process.is_alive():
            self._process.terminate()
            self._process.join(timeout=5)
        self.finished = True
