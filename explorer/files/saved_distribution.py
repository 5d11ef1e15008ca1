"""A pore-size distribution as a scenario file's ``[distribution]`` table holds it.

It keeps what the inversion found, not how to find it again: the kernel's sizes and what it was built with
(``[distribution.kernel]``: the base scenario; beside it the points per isotherm, the pores averaged per size
and the p/p0 range), the pore volume per size with its bootstrap error, the summary with its bootstrap errors,
the regularisation strength, the fit's χ², the best single size beside it (the simplest model, to compare) and
the notes. Reopening the file shows the distribution without inverting again; a carried prediction is computed
from it (with the kernel cache, `porefill.explorer.jobs.kernels`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from porefill.physics.scenario import Scenario

__all__ = ["SavedDistribution", "MAX_SIZES"]

MAX_SIZES = 1000
_SUMMARY_KEYS = ("total_cm3_g", "mean", "median", "mode", "width")
_SINGLE_SIZE_KEYS = ("size_angstrom", "pore_volume_cm3_g", "chi2", "reduced_chi2")


def _numbers(name: str, values, *, count: int | None = None, non_negative: bool = False,
             allow_nan: bool = False) -> tuple:
    if not isinstance(values, (list, tuple)) or not values:
        raise ValueError(f"{name} must be a non-empty list of numbers")
    if len(values) > MAX_SIZES:
        raise ValueError(f"{name} holds {len(values)} values; at most {MAX_SIZES}")
    out = []
    for k, v in enumerate(values):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise ValueError(f"{name}[{k}] must be a number; got {v!r}")
        v = float(v)
        if not math.isfinite(v) and not (allow_nan and math.isnan(v)):
            raise ValueError(f"{name}[{k}] must be finite; got {v!r}")
        if non_negative and v < 0:
            raise ValueError(f"{name}[{k}] must not be negative; got {v!r}")
        out.append(v)
    if count is not None and len(out) != count:
        raise ValueError(f"{name} holds {len(out)} values; sizes_angstrom holds {count}")
    return tuple(out)


@dataclass(frozen=True)
class SavedDistribution:
    """The ``[distribution]`` table (module docstring). ``kernel`` is the base `Scenario` the kernel varied
    the size of; ``relative_pressure_range`` None for each pore's own range."""

    kernel: Scenario
    sizes_angstrom: tuple
    pore_volume_cm3_g: tuple
    stderr_cm3_g: tuple = ()
    n_points: int = 200
    relative_pressure_range: tuple | None = None
    summary: tuple = ()
    lam: float | None = None
    reduced_chi2: float | None = None
    notes: tuple = ()
    parts: int = 3
    summary_stderr: tuple = ()
    single_size: tuple = ()

    def __post_init__(self) -> None:
        if not isinstance(self.kernel, Scenario):
            raise ValueError("kernel must be a scenario table")
        sizes = _numbers("sizes_angstrom", list(self.sizes_angstrom))
        if len(sizes) < 3 or any(b <= a for a, b in zip(sizes, sizes[1:])):
            raise ValueError("sizes_angstrom must hold at least 3 sizes in ascending order")
        object.__setattr__(self, "sizes_angstrom", sizes)
        object.__setattr__(self, "pore_volume_cm3_g", _numbers("pore_volume_cm3_g", list(self.pore_volume_cm3_g),
                                                               count=len(sizes), non_negative=True))
        if self.stderr_cm3_g:
            object.__setattr__(self, "stderr_cm3_g", _numbers("stderr_cm3_g", list(self.stderr_cm3_g),
                                                              count=len(sizes), allow_nan=True))
        if isinstance(self.parts, bool) or not isinstance(self.parts, int) or not 1 <= self.parts <= 9:
            raise ValueError(f"parts must be a whole number from 1 to 9; got {self.parts!r}")
        if isinstance(self.n_points, bool) or not isinstance(self.n_points, int) or not 3 <= self.n_points <= 5000:
            raise ValueError(f"n_points must be a whole number from 3 to 5000; got {self.n_points!r}")
        if self.relative_pressure_range is not None:
            vals = _numbers("relative_pressure_range", list(self.relative_pressure_range))
            lo, hi = (vals + (math.nan, math.nan))[:2]
            if len(vals) != 2 or not (0.0 < lo < hi <= 1.0):
                raise ValueError("relative_pressure_range must be [low, high] with 0 < low < high <= 1")
            object.__setattr__(self, "relative_pressure_range", (lo, hi))
        summary = dict(self.summary)
        unknown = sorted(set(summary) - set(_SUMMARY_KEYS))
        if unknown:
            raise ValueError(f"unknown summary key(s) {', '.join(unknown)}; known: {', '.join(_SUMMARY_KEYS)}")
        for k, v in summary.items():
            _numbers(f"summary.{k}", [v], allow_nan=True)
        object.__setattr__(self, "summary", tuple((k, float(v)) for k, v in summary.items()))
        for name, keys in (("summary_stderr", _SUMMARY_KEYS), ("single_size", _SINGLE_SIZE_KEYS)):
            table = dict(getattr(self, name))
            unknown = sorted(set(table) - set(keys))
            if unknown:
                raise ValueError(f"unknown {name} key(s) {', '.join(unknown)}; known: {', '.join(keys)}")
            for k, v in table.items():
                _numbers(f"{name}.{k}", [v], allow_nan=True)
            object.__setattr__(self, name, tuple((k, float(v)) for k, v in table.items()))
        for name in ("lam", "reduced_chi2"):
            v = getattr(self, name)
            if v is not None:
                object.__setattr__(self, name, _numbers(name, [v], allow_nan=True)[0])
        notes = tuple(self.notes)
        if not all(isinstance(n, str) for n in notes):
            raise ValueError("notes must be a list of text")
        object.__setattr__(self, "notes", notes)

    @property
    def weights(self) -> np.ndarray:
        return np.asarray(self.pore_volume_cm3_g, float)

    def spec(self):
        """The `KernelSpec` the distribution was found with."""
        from porefill.physics.distribution.kernel import KernelSpec

        return KernelSpec(self.kernel, self.sizes_angstrom, n_points=self.n_points,
                          relative_pressure_range=self.relative_pressure_range, parts=self.parts)

    @classmethod
    def from_result(cls, dist) -> "SavedDistribution":
        """The record of a `porefill.physics.distribution.inversion.Distribution`."""
        spec = dist.kernel.spec
        return cls(spec.base, spec.sizes_angstrom, tuple(float(v) for v in dist.pore_volume_cm3_g),
                   tuple(float(v) for v in dist.stderr_cm3_g), int(spec.n_points), spec.relative_pressure_range,
                   tuple((k, float(v)) for k, v in dist.summary.items()), float(dist.lam), float(dist.reduced_chi2),
                   tuple(dist.notes), int(spec.parts), tuple((k, float(v)) for k, v in dist.summary_stderr.items()),
                   tuple((k, float(v)) for k, v in dist.single_size.items() if k in _SINGLE_SIZE_KEYS))

    def to_dict(self) -> dict:
        out: dict = {"sizes_angstrom": list(self.sizes_angstrom), "pore_volume_cm3_g": list(self.pore_volume_cm3_g)}
        if self.stderr_cm3_g:
            out["stderr_cm3_g"] = list(self.stderr_cm3_g)
        out["n_points"] = self.n_points
        out["parts"] = self.parts
        if self.relative_pressure_range is not None:
            out["relative_pressure_range"] = list(self.relative_pressure_range)
        for name in ("lam", "reduced_chi2"):
            if getattr(self, name) is not None:
                out[name] = getattr(self, name)
        if self.notes:
            out["notes"] = list(self.notes)
        if self.summary:
            out["summary"] = dict(self.summary)
        if self.summary_stderr:
            out["summary_stderr"] = dict(self.summary_stderr)
        if self.single_size:
            out["single_size"] = dict(self.single_size)
        kernel = self.kernel.to_dict()
        for word in ("title", "notes"):
            kernel.pop(word, None)
        out["kernel"] = kernel
        return out

    @classmethod
    def from_dict(cls, data: dict) -> "SavedDistribution":
        data = dict(data)
        known = {"sizes_angstrom", "pore_volume_cm3_g", "stderr_cm3_g", "n_points", "parts", "relative_pressure_range",
                 "lam", "reduced_chi2", "notes", "summary", "summary_stderr", "single_size", "kernel"}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"unknown distribution key(s) {', '.join(unknown)}; known: {', '.join(sorted(known))}")
        for name in ("kernel", "summary", "summary_stderr", "single_size"):
            if name in data and not isinstance(data[name], dict):
                raise ValueError(f"{name} must be a table")
        if "kernel" not in data:
            raise ValueError("a [distribution] needs its [distribution.kernel] table (the scenario it was built on)")
        summary = data.get("summary", {})
        return cls(Scenario.from_dict(data["kernel"]), tuple(data.get("sizes_angstrom", ())),
                   tuple(data.get("pore_volume_cm3_g", ())), tuple(data.get("stderr_cm3_g", ())),
                   data.get("n_points", 200), data.get("relative_pressure_range"), tuple(summary.items()),
                   data.get("lam"), data.get("reduced_chi2"), tuple(data.get("notes", ())), data.get("parts", 3),
                   tuple(data.get("summary_stderr", {}).items()), tuple(data.get("single_size", {}).items()))
