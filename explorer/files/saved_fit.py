"""A fit as a scenario file keeps it: the numbers of a `porefill.physics.fitting.solve.FitResult`, not the objects.

A saved fit is a record of what was found — parameter values with their standard errors, units and bounds,
which parameters were free, the correlation matrix, the goodness-of-fit statistics, the warnings, and the
fitted scenario — so a report or a reopened dashboard can show it without fitting again. It is not a
request: reopening a file never reruns the fit.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from porefill.physics.scenario import Scenario

__all__ = ["FitParameter", "SavedFit"]


def _number(name: str, value, *, allow_none: bool = False) -> float | None:
    if value is None and allow_none:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError(f"{name} must be a number; got {value!r}")
    return float(value)


@dataclass(frozen=True)
class FitParameter:
    """One fitted parameter: value, standard error (None: the data do not determine it), unit, bounds."""

    name: str
    value: float
    stderr: float | None = None
    unit: str = ""
    low: float | None = None
    high: float | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name:
            raise ValueError(f"name must be a parameter name; got {self.name!r}")
        if not isinstance(self.unit, str):
            raise ValueError(f"unit must be text; got {self.unit!r}")
        object.__setattr__(self, "value", _number("value", self.value))
        for key in ("stderr", "low", "high"):
            value = _number(key, getattr(self, key), allow_none=True)
            if value is not None and math.isnan(value):
                value = None                # NaN stderr: not determined, written as absent
            object.__setattr__(self, key, value)
        if self.stderr is not None and self.stderr < 0:
            raise ValueError(f"stderr must not be negative; got {self.stderr!r}")
        if self.low is not None and self.high is not None and not self.low <= self.high:
            raise ValueError(f"low must not exceed high; got {self.low!r} > {self.high!r}")

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in ("name", "value", "stderr", "unit", "low", "high")
                if getattr(self, k) is not None}


_STATISTICS = ("chi2", "reduced_chi2", "rms_normalised", "r_squared", "points", "coverage_points",
               "parameters", "degrees_of_freedom", "evaluations", "noise_relative_assumed",
               "noise_relative_estimated")


@dataclass(frozen=True)
class SavedFit:
    """What a scenario file's ``[fit]`` table holds (see `porefill.explorer.files.scenario_file` for the layout).

    ``free`` the free parameter names in the fit's order; ``parameters`` one `FitParameter` each;
    ``statistics`` {name: number} from `FitResult.statistics` (chi2, reduced_chi2, r_squared, points, ...);
    ``correlation`` rows in ``free`` order (NaN where a parameter is not determined); ``warnings`` as the
    fit said them; ``scenario`` the fitted scenario (None when not saved).
    """

    free: tuple[str, ...]
    parameters: tuple[FitParameter, ...]
    statistics: tuple[tuple[str, float], ...] = ()
    correlation: tuple[tuple[float, ...], ...] = ()
    warnings: tuple[str, ...] = ()
    scenario: Scenario | None = None

    def __post_init__(self) -> None:
        free = tuple(self.free)
        if not all(isinstance(f, str) for f in free):
            raise ValueError(f"free must be a list of parameter names; got {self.free!r}")
        object.__setattr__(self, "free", free)
        params = tuple(self.parameters)
        if not all(isinstance(p, FitParameter) for p in params):
            raise ValueError("parameters must be FitParameter records")
        object.__setattr__(self, "parameters", params)
        names = [p.name for p in params]
        missing = [f for f in free if f not in names]
        if missing:
            raise ValueError(f"free parameter(s) {', '.join(missing)} have no value in [fit.parameters]")
        stats = tuple((str(k), _number(f"statistics.{k}", v)) for k, v in dict(self.statistics).items())
        unknown = [k for k, _ in stats if k not in _STATISTICS]
        if unknown:
            raise ValueError(f"unknown fit statistic(s) {', '.join(unknown)}; known: {', '.join(_STATISTICS)}")
        object.__setattr__(self, "statistics", stats)
        corr = tuple(tuple(_number("correlation", v) for v in row) for row in self.correlation)
        if corr and (len(corr) != len(free) or any(len(row) != len(free) for row in corr)):
            raise ValueError(f"correlation must be a {len(free)} × {len(free)} matrix (one row per free "
                             "parameter)")
        object.__setattr__(self, "correlation", corr)
        warnings = tuple(self.warnings)
        if not all(isinstance(w, str) for w in warnings):
            raise ValueError("warnings must be a list of text")
        object.__setattr__(self, "warnings", warnings)
        if self.scenario is not None and not isinstance(self.scenario, Scenario):
            raise ValueError("scenario must be a Scenario")

    def parameter(self, name: str) -> FitParameter:
        for p in self.parameters:
            if p.name == name:
                return p
        raise KeyError(name)

    @classmethod
    def from_result(cls, result) -> "SavedFit":
        """The record of a `porefill.physics.fitting.solve.FitResult` (values, stderr, bounds, statistics, warnings)."""
        from porefill.physics.fitting.params import PARAMETER_UNITS

        params = []
        for name in result.names:
            value, stderr = result.parameters[name]
            low, high = result.bounds.get(name, (None, None))
            params.append(FitParameter(name, value, None if stderr is None else float(stderr),
                                       PARAMETER_UNITS.get(name, ""), low, high))
        stats = {k: v for k, v in result.statistics().items() if v is not None}
        corr = tuple(tuple(float(v) for v in row) for row in result.correlation)
        return cls(tuple(result.names), tuple(params), tuple(stats.items()), corr, tuple(result.warnings),
                   result.scenario)

    def to_dict(self) -> dict:
        """Plain types for the ``[fit]`` table (parameters as an array of tables)."""
        out: dict = {"free": list(self.free)}
        if self.warnings:
            out["warnings"] = list(self.warnings)
        if self.correlation:
            out["correlation"] = [list(row) for row in self.correlation]
        out["statistics"] = dict(self.statistics)
        if self.scenario is not None:
            out["scenario"] = self.scenario.to_dict()
        out["parameters"] = [p.to_dict() for p in self.parameters]
        return out

    @classmethod
    def from_dict(cls, data: dict) -> "SavedFit":
        data = dict(data)
        known = {"free", "warnings", "correlation", "statistics", "scenario", "parameters"}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"unknown fit key(s) {', '.join(unknown)}; known: {', '.join(sorted(known))}")
        rows = data.get("parameters", [])
        if not isinstance(rows, list) or not all(isinstance(r, dict) for r in rows):
            raise ValueError("parameters must be [[fit.parameters]] tables")
        params = []
        for row in rows:
            extra = sorted(set(row) - {"name", "value", "stderr", "unit", "low", "high"})
            if extra:
                raise ValueError(f"unknown fit parameter key(s) {', '.join(extra)}")
            params.append(FitParameter(**row))
        scenario = data.get("scenario")
        stats = data.get("statistics", {})
        if not isinstance(stats, dict):
            raise ValueError("statistics must be a table")
        return cls(tuple(data.get("free", ())), tuple(params), tuple(stats.items()),
                   tuple(tuple(r) for r in data.get("correlation", ())), tuple(data.get("warnings", ())),
                   None if scenario is None else Scenario.from_dict(scenario))
