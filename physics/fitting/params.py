"""The free parameters of a fit: names, units, default bounds, start values, and the scenario they make.

A0 tie (hexagon): the array spacing a0 = √3·t + w (`porefill.physics.pore.geometry.HexagonPore.lattice_spacing_angstrom`),
so with a0 fixed by d100 (or fitted) the wall follows the side, w = a0 − √3·t. Where that would leave less
than the thinnest physical wall (`porefill.physics.limits.minimum_wall_angstrom`) the wall is held at that minimum and
the fit says so.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.choices import FREE_PARAMETERS
from porefill.physics.limits import MAX_WALL_ANGSTROM, SIZE_RANGE_ANGSTROM, minimum_wall_angstrom
from porefill.physics.substances.materials import pair_parameters
from porefill.physics.fitting.measured import Sample
from porefill.physics.scenario import Scenario

__all__ = ["FREE_PARAMETERS", "PARAMETER_UNITS", "ParameterSpace"]

PARAMETER_UNITS = {"wall-strength": "", "size": "Å", "wall": "Å", "a0": "Å", "pore-volume": "cm³/g"}
DEFAULT_PORE_VOLUME_BOUNDS = (0.01, 5.0)      # cm³/g: from a poorly porous solid to an aerogel-like one
_SQRT3 = float(np.sqrt(3.0))


@dataclass(frozen=True, eq=False)
class ParameterSpace:
    """The free parameters, their bounds and start values, and how a parameter set becomes a scenario."""

    base: Scenario
    free: tuple[str, ...]
    nonlinear: tuple[str, ...]          # the searched ones (all free but pore-volume), FREE_PARAMETERS order
    bounds: dict                        # name -> (low, high) for every free parameter
    start: dict                         # name -> start value of every parameter in play
    catalog_epsilon_k: float
    a0_fixed: float | None              # from the sample's d100 (hexagon only)
    wall_min: float
    needs_pore_volume: bool

    @classmethod
    def build(cls, scenario: Scenario, sample: Sample, free, bounds: dict, *, per_gram: bool) -> "ParameterSpace":
        """Check the free parameters and bounds against the scenario and sample; ValueError naming the problem."""
        unknown = [f for f in free if f not in FREE_PARAMETERS]
        if unknown or not free:
            raise ValueError(f"free parameters must be one or more of {', '.join(FREE_PARAMETERS)}; "
                             f"got {', '.join(map(repr, unknown or free)) or 'none'}")
        stray = sorted(set(bounds) - set(free))
        if stray:
            raise ValueError(f"bounds given for {', '.join(stray)}, which {'is' if len(stray) == 1 else 'are'} "
                             f"not free (free: {', '.join(free)})")
        shape = scenario.shape
        pair = scenario.pair()
        w_min = minimum_wall_angstrom(pair.density_per_a3)
        if ("wall" in free or "a0" in free) and scenario.effective_wall_angstrom is None:
            raise ValueError(f"a {shape} pore {'has no wall' if shape == 'cylinder' else 'without a wall (isolated)'}"
                             "; give a wall thickness to fit the wall or a0")
        if "a0" in free and shape != "hexagon":
            raise ValueError(f"a0 (the array spacing) is a hexagonal array's; the pore is a {shape}")
        a0_fixed = sample.array_spacing_angstrom if shape == "hexagon" else None
        if "wall" in free and ("a0" in free or a0_fixed is not None):
            raise ValueError("the wall follows a0 and the side (w = a0 − √3·t): free the wall or a0, not both, "
                             "and leave d100 out to fit the wall itself")
        if "a0" in free and a0_fixed is not None:
            raise ValueError("the sample's d100 fixes a0 = 2·d100/√3; leave d100 out to fit a0")
        if "pore-volume" in free and not per_gram:
            raise ValueError("pore-volume is free, but no run's amounts are per gram or dosed, so the data cannot "
                             "determine it")
        v0 = sample.pore_volume_cm3_g or scenario.pore_volume_cm3_g
        if per_gram and v0 is None and "pore-volume" not in free:
            raise ValueError("amounts per gram need the sample's specific pore volume (cm³/g): give it or free "
                             "pore-volume")
        eps_cat = pair_parameters(scenario.adsorbate, scenario.solid).epsilon_k
        size = scenario.size_angstrom
        start = {"wall-strength": (scenario.pair_epsilon_k or eps_cat) / eps_cat, "size": size,
                 "pore-volume": v0 if v0 is not None else 1.0}
        if scenario.effective_wall_angstrom is not None or a0_fixed is not None:
            wall = scenario.wall_angstrom if scenario.effective_wall_angstrom is not None else w_min
            start["wall"] = wall
            start["a0"] = a0_fixed if a0_fixed is not None else _SQRT3 * size + wall
        lo_s, hi_s = SIZE_RANGE_ANGSTROM[shape]
        if a0_fixed is not None:
            hi_s = min(hi_s, (a0_fixed - w_min) / _SQRT3)
            if hi_s <= lo_s:
                raise ValueError(f"d100 = {sample.d100_angstrom:g} Å gives a0 = {a0_fixed:.3f} Å, which leaves no "
                                 f"room for a wall of at least {w_min:.2f} Å")
        defaults = {"wall-strength": (0.5, 1.5), "size": (max(0.7 * size, lo_s), min(1.3 * size, hi_s)),
                    "pore-volume": DEFAULT_PORE_VOLUME_BOUNDS}
        physical = {"wall-strength": (0.0, np.inf), "size": (lo_s, hi_s), "pore-volume": (0.0, np.inf),
                    "wall": (w_min, MAX_WALL_ANGSTROM), "a0": (0.0, np.inf)}
        if "wall" in start:
            defaults["wall"] = (w_min, min(MAX_WALL_ANGSTROM, 2.0 * start["wall"] + 5.0))
            defaults["a0"] = (0.8 * start["a0"], 1.2 * start["a0"])
        out_bounds = {}
        for name in free:
            lo, hi = bounds.get(name, defaults[name])
            p_lo, p_hi = physical[name]
            unit = PARAMETER_UNITS[name]
            if not (np.isfinite(lo) and np.isfinite(hi) and lo < hi):
                raise ValueError(f"bounds of {name} must be finite with low < high; got {lo:g} to {hi:g} {unit}")
            if lo < p_lo or hi > p_hi or (p_lo == 0.0 and lo <= 0):
                raise ValueError(f"bounds of {name} ({lo:g} to {hi:g} {unit}) must lie within "
                                 f"{'> 0' if p_lo == 0 else f'{p_lo:g}'} to {p_hi:g} {unit}".replace("inf", "∞"))
            out_bounds[name] = (float(lo), float(hi))
            start[name] = float(np.clip(start[name], lo, hi))
        nonlinear = tuple(n for n in FREE_PARAMETERS if n in free and n != "pore-volume")
        return cls(scenario, tuple(free), nonlinear, out_bounds, start, eps_cat, a0_fixed, w_min, per_gram)

    # u ∈ [0, 1]^k <-> parameter values -------------------------------------------------------------------
    def _span(self, name: str) -> tuple[float, float]:
        lo, hi = self.bounds[name]
        return lo, hi - lo

    def start_u(self) -> np.ndarray:
        return np.array([(self.start[n] - self._span(n)[0]) / self._span(n)[1] for n in self.nonlinear])

    def width(self, name: str) -> float:
        return self._span(name)[1]

    def values_of(self, u) -> dict:
        """Every parameter in play at the scaled point ``u`` (the pore volume at its start value)."""
        values = dict(self.start)
        for name, x in zip(self.nonlinear, np.asarray(u, float)):
            lo, w = self._span(name)
            values[name] = lo + w * float(np.clip(x, 0.0, 1.0))
        if "a0" in values and ("a0" in self.free or self.a0_fixed is not None):
            values["wall"] = max(values["a0"] - _SQRT3 * values["size"], self.wall_min)
        elif "wall" in values:
            values["a0"] = _SQRT3 * values["size"] + values["wall"]
        return values

    def wall_clamped(self, values: dict) -> bool:
        """True when the a0 tie asked for a wall thinner than the thinnest physical one."""
        tied = "a0" in values and ("a0" in self.free or self.a0_fixed is not None)
        return tied and values["a0"] - _SQRT3 * values["size"] < self.wall_min

    def scenario_for(self, values: dict, pore_volume: float | None = None) -> Scenario:
        """The base scenario with these parameter values (ValueError outside the model's limits)."""
        changes = {"size_angstrom": values["size"]}
        if "wall-strength" in self.free or self.base.pair_epsilon_k is not None:
            changes["pair_epsilon_k"] = values["wall-strength"] * self.catalog_epsilon_k
        if "wall" in values and self.base.shape != "cylinder":
            changes["wall_angstrom"] = values["wall"]
        if pore_volume is not None and self.needs_pore_volume:
            changes["pore_volume_cm3_g"] = pore_volume
        return self.base.replace(**changes)

    def pore_volume(self, values: dict, prediction, data, sigma_lnp: float) -> float:
        """The pore volume for this prediction: solved (free) or the given one (fixed)."""
        if "pore-volume" not in self.free:
            return values["pore-volume"]
        from porefill.physics.fitting.model import solve_pore_volume
        return solve_pore_volume(prediction, data, self.bounds["pore-volume"], values["pore-volume"], sigma_lnp)
