"""A pore-size distribution and its carried prediction as background work (`porefill.explorer.jobs.background`).

The dashboard runs each as a `ThreadJob`: the thread asks `porefill.explorer.jobs.kernels.kernel_for` for the
kernel (this server's memory, the disk cache, or a build in worker processes with progress and a stop), so
every session of one server shares the kernels it has built. The inversion (a second or two of non-negative
least squares and its bootstrap, which holds the GIL) then runs in the shared worker pool when one is given,
so the event loop stays free. No Panel here.
"""
from __future__ import annotations

import time
from dataclasses import dataclass

from porefill.explorer.jobs.background import Cancelled

__all__ = ["DistributionRequest", "CarryRequest", "distribution_work", "carry_work", "invert_job"]

_WAIT_S = 0.2
KERNEL_SHARE = 0.85          # of the progress bar: the kernel; the rest is the inversion


@dataclass(frozen=True, eq=False)
class DistributionRequest:
    """What the page asks for: the kernel ``spec`` (`KernelSpec`), the per-gram measured ``runs``, the
    ``sample``, and the inversion's bootstrap count and seed."""

    spec: object
    runs: tuple
    sample: object
    bootstrap: int = 200
    seed: int = 0


@dataclass(frozen=True, eq=False)
class CarryRequest:
    """The carried prediction: the other gas's kernel ``spec`` on the distribution's own sizes and the pore
    volume ``weights_cm3_g`` per size."""

    spec: object
    weights_cm3_g: tuple


def _kernel(spec, label: str, progress, should_stop, share: float):
    from porefill.explorer.jobs.kernels import KernelStopped, kernel_for

    def report(done, total):
        progress(share * done / max(total, 1), f"{label} kernel: {done} of {total} pore sizes")

    try:
        return kernel_for(spec, progress=report, stop=should_stop)
    except KernelStopped as exc:
        raise Cancelled(str(exc)) from None


def invert_job(kernel, runs, sample, bootstrap: int, seed: int):
    """`porefill.physics.distribution.inversion.invert` by name, for a worker process."""
    from porefill.physics.distribution.inversion import invert

    return invert(kernel, runs, sample, bootstrap=bootstrap, seed=seed)


def distribution_work(request: DistributionRequest, executor=None, *, progress, should_stop):
    """The kernel, then the `Distribution` of ``request``'s runs on it (in ``executor`` when given); a stop
    during the kernel's build or the inversion raises `Cancelled`, a run the inversion cannot use ValueError."""
    spec = request.spec
    kernel = _kernel(spec, f"{spec.base.adsorbate} {spec.base.temperature_k:g} K", progress, should_stop,
                     KERNEL_SHARE)
    progress(KERNEL_SHARE, "Finding the distribution (non-negative, smoothed; bootstrap errors) …")
    args = (kernel, tuple(request.runs), request.sample, int(request.bootstrap), int(request.seed))
    if executor is None:
        return invert_job(*args)
    future = executor.submit(invert_job, *args)
    while not future.done():
        if should_stop():
            future.cancel()
            raise Cancelled("stopped before the inversion finished")
        time.sleep(_WAIT_S)
    return future.result()


def carry_work(request: CarryRequest, *, progress, should_stop):
    """The other gas's kernel on the distribution's sizes, then `porefill.physics.distribution.carry.carry`."""
    from porefill.physics.distribution.carry import carry

    base = request.spec.base
    kernel = _kernel(request.spec, f"{base.adsorbate} {base.temperature_k:g} K ({base.site_model_used} sites)",
                     progress, should_stop, 0.98)
    progress(0.98, "Weighting the carried isotherms by the distribution …")
    return carry(request.spec.sizes_angstrom, request.weights_cm3_g, kernel)
