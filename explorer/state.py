"""Dashboard state: the user's choices as parameters, turned into a frozen Scenario on demand."""
from __future__ import annotations

import param

from physics.geometry import PORE_SHAPES
from physics.materials import ADSORBATES
from physics.scenario import Scenario

__all__ = ["ExplorerState"]


class ExplorerState(param.Parameterized):
    """What the sliders and menus hold. Lengths in Å, temperature in K."""

    shape = param.Selector(default="hexagon", objects=list(PORE_SHAPES), doc="Pore cross-section")
    size_angstrom = param.Number(default=15.0, bounds=(2.0, 100.0), softbounds=(5.0, 60.0), step=0.5,
                                 label="Side length / radius / width (Å)",
                                 doc="Hexagon side (centre to corner), cylinder radius or slit width, Å")
    wall_angstrom = param.Number(default=8.0, bounds=(0.0, 100.0), softbounds=(0.0, 30.0), step=0.5,
                                 label="Wall thickness (Å)",
                                 doc="Solid between neighbouring pores of the array, Å")
    isolated = param.Boolean(default=False, label="Isolated pore (unbounded solid)",
                             doc="Ignore neighbouring pores: one pore in an unbounded solid")
    adsorbate = param.Selector(default="helium-4", objects=list(ADSORBATES), doc="Adsorbed gas")
    temperature_k = param.Number(default=1.5, bounds=(0.2, 400.0), step=0.01, label="Temperature (K)",
                                 doc="Temperature, K; the range is that of the adsorbate's vapour-pressure equation")
    solid = param.String(default="silica", constant=True, doc="Solid (catalog name)")
    title = param.String(default="", doc="Scenario title")

    def __init__(self, **params):
        super().__init__(**params)
        self._fit_temperature_range()

    @param.depends("adsorbate", watch=True)
    def _fit_temperature_range(self):
        """Temperature slider spans the adsorbate's vapour-pressure range (needed for real pressures)."""
        from physics.vapour_pressure import temperature_range, typical_temperature

        lo, hi, _ = temperature_range(self.adsorbate)
        lo, hi = round(lo + 0.005, 2), round(hi - 0.005, 2)
        current = self.temperature_k
        value = current if lo <= current <= hi else round(typical_temperature(self.adsorbate), 2)
        self.param.temperature_k.step = 0.01 if hi - lo < 20 else 0.05
        self.param.temperature_k.bounds = (min(lo, current), max(hi, current))
        self.temperature_k = value
        self.param.temperature_k.bounds = (lo, hi)

    @classmethod
    def from_scenario(cls, scenario: Scenario) -> "ExplorerState":
        return cls(shape=scenario.shape, size_angstrom=scenario.size_angstrom,
                   wall_angstrom=scenario.wall_angstrom if scenario.wall_angstrom is not None else 8.0,
                   isolated=scenario.wall_angstrom is None, adsorbate=scenario.adsorbate,
                   temperature_k=scenario.temperature_k, solid=scenario.solid, title=scenario.title)

    def scenario(self) -> Scenario:
        return Scenario(shape=self.shape, size_angstrom=float(self.size_angstrom),
                        wall_angstrom=None if self.isolated else float(self.wall_angstrom),
                        adsorbate=self.adsorbate, solid=self.solid, temperature_k=float(self.temperature_k),
                        title=self.title)
