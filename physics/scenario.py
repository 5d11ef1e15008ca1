"""A scenario: the frozen, explicit, serialisable inputs of one porefill calculation.

Everything the physics needs is here; the dashboard, the command line and saved files build one of
these and hand it down, and caches and sweep workers take it as their only key. `to_dict` / `from_dict`
round-trip through plain types (TOML, JSON, URLs). Limits are checked once, in `porefill.physics.limits`.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass, fields

from porefill.physics.pore.geometry import PORE_SHAPES, Pore, make_pore
from porefill.physics.limits import SCENARIO_NUMBER_RANGES, check_geometry, check_number
from porefill.physics.substances.materials import ADSORBATES, SOLIDS, PairParameters, pair_parameters
from porefill.physics.sites.site_models import SITE_MODEL_NAMES, default_site_model

__all__ = ["Scenario"]

_GEOMETRY_FIELDS = ("shape", "size_angstrom", "wall_angstrom", "adsorbate", "solid", "pair_epsilon_k",
                    "pair_sigma_angstrom", "solid_density_per_a3", "lattice_spacing_angstrom", "plating",
                    "plating_layers")


@dataclass(frozen=True)
class Scenario:
    """Inputs of one calculation. Lengths in Å, temperature in K, density in Å^-3.

    ``wall_angstrom`` None (the default, and what a file without it means) is an isolated pore in an
    unbounded solid; the cylinder is always isolated. The three pair overrides, when set, replace the
    catalog's adsorbate–solid ε, σ and the solid's density. The lattice-gas model takes its site spacing
    (default: the bulk liquid's density), its bond energy ε_b (default: by ``bond_calibration``, see
    `porefill.physics.lattice_gas.bond`), the site model (how site free energies are computed; None: the adsorbate's default,
    `site_model_used`) and, for amounts per gram, the sample's specific pore volume. ``pore_ends`` says
    which branch a measurement follows (`porefill.physics.lattice_gas.branches`: "open" at both ends, the default; "closed-end";
    "infinite"). ``plating`` names a gas whose ``plating_layers`` adsorbed layers (default 1) cover the wall
    before the adsorbate comes in (`porefill.physics.pore.plating`); None: the bare wall.
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
    site_model: str | None = None
    pore_volume_cm3_g: float | None = None
    pore_ends: str = "open"
    plating: str | None = None
    plating_layers: int | None = None
    title: str = ""
    notes: str = ""

    def __post_init__(self) -> None:
        for name, known in (("shape", PORE_SHAPES), ("adsorbate", ADSORBATES), ("solid", SOLIDS),
                            ("site_model", SITE_MODEL_NAMES)):
            value = getattr(self, name)
            if name == "site_model" and value is None:
                continue
            if not isinstance(value, str) or value not in known:
                raise ValueError(f"{name} must be one of {', '.join(known)}; got {value!r}")
        from porefill.physics.lattice_gas.branches import PORE_ENDS
        if self.pore_ends not in PORE_ENDS:
            raise ValueError(f"pore_ends must be one of {', '.join(PORE_ENDS)}; got {self.pore_ends!r}")
        for name in ("title", "notes"):
            if not isinstance(getattr(self, name), str):
                raise ValueError(f"{name} must be text; got {getattr(self, name)!r}")
        for name, (low, high, low_open, unit) in SCENARIO_NUMBER_RANGES.items():
            if getattr(self, name) is not None or name == "temperature_k":
                check_number(name, getattr(self, name), low=low, high=high, low_open=low_open, unit=unit)
        from porefill.physics.choices import BOND_RULES
        if self.bond_calibration is not None and self.bond_calibration not in BOND_RULES:
            raise ValueError(f"bond_calibration must be one of {', '.join(BOND_RULES)}; "
                             f"got {self.bond_calibration!r}")
        if self.plating_layers is not None and self.plating is None:
            raise ValueError("plating_layers needs a plating gas (plating = \"argon\", ...)")
        from porefill.physics.choices import PLATING_GASES
        if self.plating is not None and not isinstance(self.plating, str):
            raise ValueError(f"plating gas must be one of {', '.join(PLATING_GASES)}; got {self.plating!r}")
        pair = self.pair()
        check_geometry(self.shape, self.size_angstrom, self.effective_wall_angstrom,
                       solid_density_per_a3=pair.density_per_a3, spacing_angstrom=self.lattice_spacing_angstrom)
        self.pore()

    @property
    def effective_wall_angstrom(self) -> float | None:
        """The wall thickness the physics uses: None for the cylinder, which is always isolated."""
        return None if self.shape == "cylinder" else self.wall_angstrom

    @property
    def site_model_used(self) -> str:
        """The site model computed with: the one named, or the adsorbate's default ("quantum" for
        helium-4, hydrogen and neon; `porefill.physics.sites.site_models.default_site_model`)."""
        return self.site_model if self.site_model is not None else default_site_model(self.adsorbate)

    def pore(self) -> Pore:
        return make_pore(self.shape, self.size_angstrom, self.effective_wall_angstrom)

    def pair(self) -> PairParameters:
        pair = pair_parameters(self.adsorbate, self.solid, epsilon_k=self.pair_epsilon_k,
                               sigma_angstrom=self.pair_sigma_angstrom,
                               density_per_a3=self.solid_density_per_a3)
        if self.plating is None:
            return pair
        from dataclasses import replace

        from porefill.physics.pore.plating import make_plating
        return replace(pair, plating=make_plating(self.plating, 1 if self.plating_layers is None else self.plating_layers,
                                                  self.adsorbate, self.solid))

    def geometry_key(self) -> tuple:
        """The inputs the temperature-independent stage depends on (hashable): pore, pair, lattice."""
        values = {name: getattr(self, name) for name in _GEOMETRY_FIELDS}
        values["wall_angstrom"] = self.effective_wall_angstrom
        return tuple(values.items())

    def model_key(self) -> "Scenario":
        """The scenario less its words (title, notes): what a computed result depends on."""
        return self.replace(title="", notes="")

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
