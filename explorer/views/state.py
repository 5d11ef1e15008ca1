"""Dashboard state: the user's choices as parameters, turned into a frozen Scenario on demand."""
from __future__ import annotations

import numpy as np
import param

from porefill.physics.choices import (DEFAULT_PORE_ENDS, MAX_PLATING_LAYERS, PLATING_GASES, PORE_ENDS, SHAPES,
                                     SITE_MODELS, SIZE_NAMES)
from porefill.physics.limits import MAX_WALL_ANGSTROM, SIZE_RANGE_ANGSTROM, check_number, minimum_wall_angstrom
from porefill.physics.substances.materials import ADSORBATES, SOLIDS
from porefill.physics.scenario import Scenario

NO_PLATING = "none"          # the wall plating control: the bare wall

# the thinnest wall the scenario accepts (one spacing of silica's force centres), on the slider's 0.5 Å steps
_WALL_MIN = float(np.ceil(2.0 * minimum_wall_angstrom(SOLIDS["silica"].density_per_a3)) / 2.0)

# open above: a new state checks its size with the limits' own words, then narrows the bounds to its shape's
_SIZE_BOUNDS = (min(lo for lo, _ in SIZE_RANGE_ANGSTROM.values()), None)

__all__ = ["ExplorerState", "describe", "wall_is_used"]


def wall_is_used(shape: str, isolated: bool) -> bool:
    """The wall thickness matters only for an array of hexagonal or slit pores (the cylinder is always
    computed as one pore in an unbounded solid)."""
    return shape != "cylinder" and not isolated


def describe(scenario: Scenario, *, temperature: bool = True) -> str:
    """The inputs a result belongs to, in a few words (plain text; escape it before putting it in HTML)."""
    parts = [f"{scenario.shape}, {SIZE_NAMES[scenario.shape]} {scenario.size_angstrom:g} Å"]
    if scenario.shape != "cylinder":
        parts.append("isolated" if scenario.wall_angstrom is None else f"walls {scenario.wall_angstrom:g} Å")
    if scenario.plating is not None:
        layers = scenario.plating_layers or 1
        parts.append(f"{scenario.plating}-plated ({layers} layer{'s' if layers > 1 else ''})")
    parts.append(scenario.adsorbate)
    if temperature:
        parts.append(f"{scenario.temperature_k:.2f} K")
    return ", ".join(parts)


class ExplorerState(param.Parameterized):
    """What the sliders and menus hold. Lengths in Å, temperature in K."""

    shape = param.Selector(default="hexagon", objects=list(SHAPES),
                           doc="Hexagon: a pore of a hexagonal array; cylinder: one round pore; slit: two flat "
                               "walls (or a stack of slabs). Changes the map, the lattice and every result.")
    size_angstrom = param.Number(default=15.0, bounds=_SIZE_BOUNDS, step=0.5,
                                 label="Side length / radius / width (Å)",
                                 doc="Hexagon: centre to corner; cylinder: radius; slit: wall-to-wall width. "
                                     "Within porefill's limits for the shape (porefill.physics.limits); "
                                     "isotherms of pores above ~60 Å take seconds.")
    wall_angstrom = param.Number(default=8.0, bounds=(_WALL_MIN, MAX_WALL_ANGSTROM), step=0.5,
                                 label="Wall thickness (Å)",
                                 doc=f"Solid between neighbouring pores of a hexagonal or slit array, {_WALL_MIN:g}–{MAX_WALL_ANGSTROM:g} Å "
                                     "(no thinner than one layer of the solid's atoms); "
                                     "thinner walls let the neighbours' missing solid weaken the potential. "
                                     "Not used for the cylinder (always one pore in an unbounded solid) or "
                                     "for an isolated pore.")
    isolated = param.Boolean(default=False, label="Isolated pore (unbounded solid)",
                             doc="One pore in solid that extends without end: no neighbouring pores, so the "
                                 "wall thickness is not used. The cylinder is always computed this way.")
    adsorbate = param.Selector(default="helium-4", objects=list(ADSORBATES),
                               doc="Sets the atom–wall pair (published where known, otherwise Lorentz–Berthelot), "
                                   "the vapour pressure p₀(T) and the temperature slider's range.")
    temperature_k = param.Number(default=1.5, bounds=(0.2, 400.0), step=0.01, label="Temperature (K)",
                                 doc="K, within the range of the adsorbate's vapour-pressure equation; changes "
                                     "the isotherm and the depth / kT readout, not the wall potential.")
    pore_ends = param.Selector(default=DEFAULT_PORE_ENDS, objects=list(PORE_ENDS), label="Pore ends",
                               doc="Decides which model branch a measurement follows. Open (both ends): the pore "
                                   "fills on the adsorption branch and empties at the equilibrium transition "
                                   "(a receding meniscus). Closed at one end: fills and empties at equilibrium, no "
                                   "hysteresis. Infinite: the raw mean-field branches, both spinodals (limits).")
    site_model = param.Selector(default="quantum", objects=list(SITE_MODELS), label="Site model",
                                doc="How a site's free energy is found. Classical: the Boltzmann integral of the wall "
                                    "potential over the site's cell (fast). Quantum: the exact one-atom states of the "
                                    "cross-section (helium, hydrogen and neon default; slower, and for helium the "
                                    "layer steps move by orders of magnitude in pressure). The Quantum states tab "
                                    "compares the two.")
    plating = param.Selector(default=NO_PLATING, objects=[NO_PLATING, *PLATING_GASES], label="Wall plating",
                             doc="Layers of another gas adsorbed on the wall before the adsorbate comes in, as "
                                 "helium experiments prepare them (porefill.physics.pore.plating): the pore's free "
                                 "radius shrinks and the wall binds as the plating gas does. The plating is "
                                 "held fixed: its gas is taken to stay on the wall, far below its own p₀ at "
                                 "the adsorbate's temperature.")
    plating_layers = param.Integer(default=1, bounds=(1, MAX_PLATING_LAYERS), label="Plating layers",
                                   doc="How many layers of the plating gas cover the wall.")
    solid = param.String(default="silica", constant=True, doc="Solid (catalog name)")
    title = param.String(default="", doc="Scenario title (from the scenario file; shown as plain text)")
    base = param.ClassSelector(class_=Scenario, default=Scenario(), precedence=-1,
                               doc="The loaded scenario: every field the controls do not set comes from here")

    def __init__(self, **params):
        super().__init__(**params)
        lo, hi = SIZE_RANGE_ANGSTROM[self.shape]       # the limits' own check and words (physics/limits.py)
        check_number(f"{self.shape} {SIZE_NAMES[self.shape]} (size_angstrom)", self.size_angstrom, low=lo, high=hi,
                     unit="Å")
        self._fit_size_range()
        self._fit_temperature_range()

    @param.depends("shape", watch=True)
    def _fit_size_range(self):
        """The size slider spans the limits of the shape on show; a size beyond them is brought inside."""
        lo, hi = SIZE_RANGE_ANGSTROM[self.shape]
        current = self.size_angstrom
        self.param.size_angstrom.bounds = (min(lo, current), max(hi, current))
        self.size_angstrom = min(max(current, lo), hi)
        self.param.size_angstrom.bounds = (lo, hi)

    @property
    def wall_used(self) -> bool:
        return wall_is_used(self.shape, self.isolated)

    @param.depends("adsorbate", watch=True)
    def _fit_temperature_range(self):
        """Temperature slider spans the adsorbate's vapour-pressure range (needed for real pressures)."""
        from porefill.explorer.jobs.compute import temperature_window

        lo, hi, typical = temperature_window(self.adsorbate)
        lo, hi = round(lo + 0.005, 2), round(hi - 0.005, 2)
        current = self.temperature_k
        value = current if lo <= current <= hi else round(typical, 2)
        self.param.temperature_k.step = 0.01 if hi - lo < 20 else 0.05
        self.param.temperature_k.bounds = (min(lo, current), max(hi, current))
        self.temperature_k = value
        self.param.temperature_k.bounds = (lo, hi)

    @param.depends("size_angstrom", "wall_angstrom", "temperature_k", watch=True)
    def _tidy_numbers(self):
        """A slider's float steps (22.999999999999996) held as the number meant (23): in the link, the saved
        file and every title."""
        for name in ("size_angstrom", "wall_angstrom", "temperature_k"):
            value = getattr(self, name)
            tidy = round(value, 6)          # only float noise is taken off; a fitted 17.257025437988446 stays
            if tidy != value and abs(tidy - value) <= 1e-12 * max(1.0, abs(value)):
                setattr(self, name, tidy)

    def changes(self) -> list[str]:
        """What the controls hold that differs from the loaded scenario, in words ([] when nothing does)."""
        held, base = self._held(), self.base
        words = []
        for name, label, unit in (("shape", "shape", ""), ("size_angstrom", "size", " Å"),
                                  ("wall_angstrom", "walls", " Å"), ("adsorbate", "gas", ""),
                                  ("temperature_k", "temperature", " K"), ("pore_ends", "pore ends", ""),
                                  ("site_model_used", "site model", ""), ("plating", "plating", ""),
                                  ("plating_layers", "plating layers", "")):
            old, new = getattr(base, name), getattr(held, name)
            if old != new:
                absent = "none (isolated)" if name == "wall_angstrom" else "none"      # None: no walls, no plating
                show = (lambda v: absent if v is None else (f"{v:g}{unit}" if isinstance(v, float)
                                                          else f"{v}{unit}"))
                words.append(f"{label} {show(old)} → {show(new)}")
        return words

    @param.depends("shape", "size_angstrom", "wall_angstrom", "isolated", "adsorbate", "temperature_k",
                   "pore_ends", "site_model", "plating", "plating_layers", watch=True)
    def _retitle(self):
        """The title says what is on show: the loaded scenario's own while the controls hold its inputs, and a
        new one naming the inputs (and where they came from) once they differ."""
        title = self.base.title
        if self.changes():
            held = self._held()
            title = describe(held) + (f" (changed on the page from “{self.base.title}”)" if self.base.title else "")
        if title != self.title:
            self.title = title

    def _held(self) -> Scenario:
        held = self.base.replace(shape=self.shape, size_angstrom=float(self.size_angstrom),
                                 wall_angstrom=None if self.isolated else float(self.wall_angstrom),
                                 adsorbate=self.adsorbate, solid=self.solid, temperature_k=float(self.temperature_k),
                                 pore_ends=self.pore_ends, **self._plating_fields())
        # the gas's default stays unnamed (None) as a file without the line has it
        unnamed = self.base.site_model is None and self.site_model == held.replace(site_model=None).site_model_used
        return held.replace(site_model=None if unnamed else self.site_model)

    def _plating_fields(self) -> dict:
        """The scenario's plating fields from the controls: none, or the gas with its layers (one layer left
        unnamed, as a file without the line has it)."""
        if self.plating == NO_PLATING:
            return {"plating": None, "plating_layers": None}
        layers = int(self.plating_layers)
        named = layers != 1 or self.base.plating_layers == 1
        return {"plating": self.plating, "plating_layers": layers if named else None}

    @param.depends("adsorbate", watch=True)
    def _fit_site_model(self):
        """A new gas starts on its own default site model (the file's, for the file's gas)."""
        named = self.base.site_model if self.adsorbate == self.base.adsorbate else None
        wanted = self.base.replace(adsorbate=self.adsorbate, site_model=named).site_model_used
        if wanted != self.site_model:
            self.site_model = wanted

    @classmethod
    def from_scenario(cls, scenario: Scenario) -> "ExplorerState":
        wall = scenario.wall_angstrom
        return cls(shape=scenario.shape, size_angstrom=scenario.size_angstrom,
                   wall_angstrom=wall if wall is not None else 8.0,
                   isolated=wall is None, adsorbate=scenario.adsorbate,
                   temperature_k=scenario.temperature_k, solid=scenario.solid, title=scenario.title,
                   pore_ends=scenario.pore_ends, site_model=scenario.site_model_used,
                   plating=scenario.plating or NO_PLATING, plating_layers=scenario.plating_layers or 1, base=scenario)

    def scenario(self) -> Scenario:
        """The loaded scenario with what the controls hold: every other field (pair overrides, lattice,
        bond, site model, pore volume) is kept as loaded. Once the controls differ from it, the title names the
        new inputs (`_retitle`) and the notes begin with what was changed."""
        notes, changes = self.base.notes, self.changes()
        if changes:
            head = (f"Changed on the page from “{self.base.title}”: " if self.base.title
                    else "Changed on the page: ") + "; ".join(changes) + "."
            notes = head + (f" Its notes: {notes}" if notes else "")
        return self._held().replace(title=self.title, notes=notes)
