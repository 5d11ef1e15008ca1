"""A fit as background work (`porefill.explorer.jobs.background`): the dashboard runs `run_fit` as a
`ProcessJob`, a spawned process of its own with progress and cancel, so a fit (seconds to minutes of CPU)
never holds the server's interpreter from the other sessions. No Panel here."""
from __future__ import annotations

from dataclasses import dataclass

from porefill.explorer.jobs.background import Cancelled

__all__ = ["FitDone", "run_fit", "start_fit"]


@dataclass(frozen=True, eq=False)
class FitDone:
    """A finished fit and the isotherm of its fitted scenario as the Pore tab computes one
    (`porefill.explorer.jobs.compute.isotherm_job`), so the page draws the fitted model the moment the fit
    is done; ``isotherm`` is None (and ``isotherm_error`` says why) where that isotherm could not be made."""

    result: object
    isotherm: object | None
    isotherm_error: str = ""


def fitted_isotherm(scenario):
    """The dashboard's isotherm of ``scenario`` (the same call as `porefill.explorer.jobs.compute.isotherm_job`,
    without importing Panel into the fit's process)."""
    from porefill.physics.choices import DEFAULT_POINTS
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    return compute_isotherm(scenario.replace(title="", notes=""), n_points=DEFAULT_POINTS)


def run_fit(request, *, progress, should_stop) -> FitDone:
    """`porefill.physics.fitting.solve.fit` in the background protocol, then the fitted scenario's isotherm
    for the plot: a cancelled fit raises `Cancelled`."""
    from porefill.physics.fitting.solve import FitCancelled, fit

    try:
        result = fit(request, progress=progress, should_stop=should_stop)
    except FitCancelled as exc:
        raise Cancelled(str(exc)) from None
    progress(1.0, "Drawing the fitted model …")
    try:
        return FitDone(result, fitted_isotherm(result.scenario))
    except ValueError as exc:          # the fit's answer stands even where the page's isotherm cannot be made
        return FitDone(result, None, str(exc))


def start_fit(request):
    """The fit of ``request`` in a process of its own (`ProcessJob`): poll it for ("progress", fraction,
    text), then ("done", `FitDone`), ("cancelled", text) or ("error", text)."""
    from porefill.explorer.jobs.background import ProcessJob

    return ProcessJob(run_fit, (request,), name="porefill-fit")
