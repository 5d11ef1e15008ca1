"""A scenario: the frozen, explicit, serialisable inputs of one porefill calculation.

Everything the physics needs is here; the dashboard, the command line and saved files build one of
these and hand it down. `to_dict` / `from_dict` round-trip through plain types (TOML, JSON, URLs).
"""
from __future__ import annotations

from dataclasses import asdict, dataclass, fields

import numpy as np

from .geometry import PORE_SHAPES, Pore, make_pore
from .materials import ADSORBATES, SOLIDS, PairParameters, pair_parameters

__all__ = ["Scenario"]


@dataclass(frozen=True)
class Scenario:
    """Inputs of one calculation. Lengths in Å, temperature in K, density in Å^-3.

    ``wall_angstrom`` None (the default, and what a file without it means) is an isolated pore in an
    unbounded solid. The three pair overrides, when set, replace the catalog's adsorbate–solid ε, σ and
    the solid's density. The lattice-gas model takes its site spacing (default: the bulk liquid's density),
    its bond energy ε_b (default: by ``bond_calibration``, see `physics.bond`) and, for amounts per gram,
    the sample's specific pore volume.
    """

    shape: str = "hexagon"
    size_angstrom: float = 15.0
    wall_angstrom: float | None = None
    adsorbate: str = "helium-4"
    solid: str = "silica"
    temperature_k: float = 1.5
    pair_epsilon_k: float | None = None
    pair_sigma_angstrom: float | None = None
    solid_density_per_a3: float | None = None
    lattice_spacing_angstrom: float | None = None
    bond_energy_k: float | None = None
    bond_calibration: str | None = None
    pore_volume_cm3_g: float | None = None
    title: str = ""
    notes: str = ""

    def __post_init__(self) -> None:
        if self.shape not in PORE_SHAPES:
            raise ValueError(f"shape must be one of {', '.join(PORE_SHAPES)}; got {self.shape!r}")
        if self.adsorbate not in ADSORBATES:
            raise ValueError(f"adsorbate must be one of {', '.join(ADSORBATES)}; got {self.adsorbate!r}")
        if self.solid not in SOLIDS:
            raise ValueError(f"solid must be one of {', '.join(SOLIDS)}; got {self.solid!r}")
        t = self.temperature_k
        if not (isinstance(t, (int, float, np.floating)) and np.isfinite(t) and t > 0):
            raise ValueError(f"temperature_k must be a positive temperature in K; got {t!r}")
        self.pore()   # validates size and wall
        self.pair()   # validates overrides
        for name in ("lattice_spacing_angstrom", "pore_volume_cm3_g"):
            value = getattr(self, name)
            if value is not None and not (isinstance(value, (int, float)) and np.isfinite(value) and value > 0):
                raise ValueError(f"{name} must be a positive number; got {value!r}")
        eb = self.bond_energy_k
        if eb is not None and not (isinstance(eb, (int, float)) and np.isfinite(eb) and eb >= 0):
            raise ValueError(f"bond_energy_k must be a non-negative energy in K; got {eb!r}")
        from .bond import BOND_RULES
        if self.bond_calibration is not None and self.bond_calibration not in BOND_RULES:
            raise ValueError(f"bond_calibration must be one of {', '.join(BOND_RULES)}; "
                             f"got {self.bond_calibration!r}")

    def pore(self) -> Pore:
        wall = self.wall_angstrom if self.shape != "cylinder" else None
        return make_pore(self.shape, self.size_angstrom, wall)

    def pair(self) -> PairParameters:
        return pair_parameters(self.adsorbate, self.solid, epsilon_k=self.pair_epsilon_k,
                               sigma_angstrom=self.pair_sigma_angstrom,
                               density_per_a3=self.solid_density_per_a3)

    def to_dict(self) -> dict:
        """Plain-type dict; None values are left out (TOML has no null)."""
        return {k: v for k, v in asdict(self).items() if v is not None}

    @classmethod
    def from_dict(cls, data: dict) -> "Scenario":
        """Build from a plain dict, rejecting unknown keys by name."""
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"unknown scenario key(s) {', '.join(unknown)}; known: {', '.join(sorted(known))}")
        return cls(**data)

    def replace(self, **changes) -> "Scenario":
        return Scenario.from_dict({**asdict(self), **changes})
