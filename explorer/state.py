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
    size_angstrom = param.Number(default=15.0, bounds=(2.0, 200.0), softbounds=(5.0, 60.0), step=0.5,
                                 label="Side length / radius / width (Å)",
                                 doc="Hexagon side (centre to corner), cylinder radius or slit width, Å")
    wall_angstrom = param.Number(default=8.0, bounds=(0.0, 100.0), softbounds=(0.0, 30.0), step=0.5,
                                 label="Wall thickness (Å)",
                                 doc="Solid between neighbouring pores of the array, Å")
    isolated = param.Boolean(default=False, label="Isolated pore (unbounded solid)",
                             doc="Ignore neighbouring pores: one pore in an unbounded solid")
    adsorbate = param.Selector(default="helium-4", objects=list(ADSORBATES), doc="Adsorbed gas")
    temperature_k = param.Number(default=1.5, bounds=(0.05, 400.0), softbounds=(0.5, 100.0), step=0.05,
                                 label="Temperature (K)", doc="Temperature, K")
    solid = param.String(default="silica", constant=True, doc="Solid (catalog name)")
    title = param.String(default="", doc="Scenario title")

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
