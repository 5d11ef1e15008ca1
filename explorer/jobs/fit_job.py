"""A fit as background work (`porefill.explorer.jobs.background`): the dashboard runs `run_fit` as a
`ProcessJob`, a spawned process of its own with progress and cancel, so a fit (seconds to minutes of CPU)
never holds the server's interpreter from the other sessions. No Panel here."""
from __future__ import annotations

from porefill.explorer.jobs.background import Cancelled

__all__ = ["run_fit", "start_fit"]


def run_fit(request, *, progress, should_stop):
    """`porefill.physics.fitting.solve.fit` in the background protocol: a cancelled fit raises `Cancelled`."""
    from porefill.physics.fitting.solve import FitCancelled, fit

    try:
        return fit(request, progress=progress, should_stop=should_stop)
    except FitCancelled as exc:
        raise Cancelled(str(exc)) from None


def start_fit(request):
    """The fit of ``request`` in a process of its own (`ProcessJob`): poll it for ("progress", fraction,
    text), then ("done", FitResult), ("cancelled", text) or ("error", text)."""
    from porefill.explorer.jobs.background import ProcessJob

    return ProcessJob(run_fit, (request,), name="porefill-fit")
