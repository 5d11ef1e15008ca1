"""Adsorbates, solids and adsorbate–solid interaction parameters.

Internal units: Å for length, K for energy (E/k_B), Å^-3 for number density, u for mass.
Every stored value carries its source; values computed here from other values are marked *derived*.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy import constants

__all__ = [
    "Adsorbate", "Solid", "PairParameters", "ADSORBATES", "SOLIDS",
    "WALL_FACTORS", "WALL_SPREADS", "get_adsorbate", "get_solid", "lorentz_berthelot", "pair_parameters",
    "number_density_from_mass_density",
]


@dataclass(frozen=True)
class Adsorbate:
    """A gas that adsorbs, treated as one Lennard-Jones site.

    Parameters
    ----------
    name : catalog key, e.g. ``"helium-4"``
    label : text for plots
    mass_u : molar mass in g/mol (= atomic mass units per particle)
    epsilon_k : LJ well depth ε/k_B in K
    sigma_angstrom : LJ diameter σ in Å
    source : where ε and σ come from
    """

    name: str
    label: str
    mass_u: float
    epsilon_k: float
    sigma_angstrom: float
    source: str
    mass_source: str = "IUPAC standard atomic weights (value from memory)"
    coolprop_name: str | None = None
    molecular: bool = False            # amounts count molecules rather than atoms

    def __post_init__(self) -> None:
        for attr in ("mass_u", "epsilon_k", "sigma_angstrom"):
            value = getattr(self, attr)
            if not (np.isfinite(value) and value > 0):
                raise ValueError(f"Adsorbate {attr} must be a positive number, got {value!r}")

    @property
    def mass_kg(self) -> float:
        return self.mass_u * constants.atomic_mass

    @property
    def hbar2_over_mk(self) -> float:
        """ħ²/(m k_B) in K·Å² (sets the quantum kinetic scale)."""
        return constants.hbar**2 / (self.mass_kg * constants.k) * 1e20


@dataclass(frozen=True)
class Solid:
    """A continuum solid: number density of its force centres and their LJ parameters."""

    name: str
    label: str
    density_per_a3: float
    density_source: str
    atom: str
    epsilon_k: float
    sigma_angstrom: float
    source: str

    def __post_init__(self) -> None:
        for attr in ("density_per_a3", "epsilon_k", "sigma_angstrom"):
            value = getattr(self, attr)
            if not (np.isfinite(value) and value > 0):
                raise ValueError(f"Solid {attr} must be a positive number, got {value!r}")


@dataclass(frozen=True)
class PairParameters:
    """Adsorbate–solid interaction: ε (K), σ (Å) and the solid's force-centre density ρ (Å^-3).

    ``origin`` says where the numbers come from (published pair, mixing rule, user override).
    """

    epsilon_k: float
    sigma_angstrom: float
    density_per_a3: float
    origin: str = "user"
    plating: object = None             # porefill.physics.pore.plating.Plating: layers of another gas on the wall

    def __post_init__(self) -> None:
        for attr in ("epsilon_k", "sigma_angstrom", "density_per_a3"):
            value = getattr(self, attr)
            if not (isinstance(value, (int, float, np.floating)) and np.isfinite(value) and value > 0):
                raise ValueError(f"pair {attr} must be a positive finite number, got {value!r}")

    def to_dict(self) -> dict:
        out = {"epsilon_k": self.epsilon_k, "sigma_angstrom": self.sigma_angstrom,
               "density_per_a3": self.density_per_a3, "origin": self.origin}
        if self.plating is not None:
            out["plating"] = self.plating.to_dict()
        return out


def number_density_from_mass_density(mass_density_g_cm3: float, molar_mass_g_mol: float,
                                     atoms_per_formula: int) -> float:
    """Number density in Å^-3 of one kind of atom in a compound of given mass density."""
    per_cm3 = mass_density_g_cm3 / molar_mass_g_mol * constants.Avogadro * atoms_per_formula
    return per_cm3 * 1e-24


def lorentz_berthelot(eps1: float, sig1: float, eps2: float, sig2: float) -> tuple[float, float]:
    """Lorentz–Berthelot mixing: ε = √(ε1 ε2), σ = (σ1 + σ2)/2."""
    return float(np.sqrt(eps1 * eps2)), 0.5 * (sig1 + sig2)


# --- adsorbates -------------------------------------------------------------------------------
ADSORBATES: dict[str, Adsorbate] = {
    a.name: a
    for a in (
        Adsorbate("helium-4", "⁴He", 4.002602, 10.22, 2.556,
                  "de Boer & Michels, Physica 5, 945 (1938)",
                  mass_source="He-4 atomic mass 4.002602 u (value from memory)", coolprop_name="Helium"),
        Adsorbate("hydrogen", "H₂", 2.01588, 34.2, 2.96,
                  "Buch, J. Chem. Phys. 100, 7610 (1994) (value from memory)", coolprop_name="Hydrogen",
                  molecular=True),
        Adsorbate("neon", "Ne", 20.1797, 35.6, 2.75,
                  "second-virial fit, Hirschfelder, Curtiss & Bird (1954) (value from memory)",
                  coolprop_name="Neon"),
        Adsorbate("argon", "Ar", 39.948, 119.8, 3.405,
                  "classic fit, Michels; Rahman, Phys. Rev. 136, A405 (1964) (value from memory)",
                  coolprop_name="Argon"),
        Adsorbate("nitrogen", "N₂", 28.0134, 95.77, 3.572,
                  "one-site model, Lastoskie, Gubbins & Quirke, J. Phys. Chem. 97, 4786 (1993) "
                  "(value from memory)", coolprop_name="Nitrogen", molecular=True),
    )
}

# --- solids -----------------------------------------------------------------------------------
# Published Ar–O pair in silica (Talu & Myers, Colloids Surf. A 187-188, 83 (2001)); oxygen's own
# parameters are backed out of it with Lorentz–Berthelot, which makes them *derived*.
_AR_O_EPSILON_K = 93.0
_AR_O_SIGMA = 3.335
_ARGON = ADSORBATES["argon"]
_O_EPSILON_K = _AR_O_EPSILON_K**2 / _ARGON.epsilon_k          # derived: ε_O = ε_ArO² / ε_Ar
_O_SIGMA = 2.0 * _AR_O_SIGMA - _ARGON.sigma_angstrom           # derived: σ_O = 2σ_ArO − σ_Ar

SOLIDS: dict[str, Solid] = {
    "silica": Solid(
        "silica", "amorphous silica (oxygen centres)",
        density_per_a3=number_density_from_mass_density(2.20, 60.08, 2),
        density_source="derived from 2.20 g/cm³ (vitreous silica, handbook value) and 60.08 g/mol, "
                       "two O per SiO₂; silicon left out of the dispersion sum (common practice)",
        atom="O", epsilon_k=_O_EPSILON_K, sigma_angstrom=_O_SIGMA,
        source="derived: backed out of the Ar–O pair of Talu & Myers (2001) with Lorentz–Berthelot",
    ),
}

# Published adsorbate–solid pairs: (adsorbate, solid) -> (ε K, σ Å, source)
PUBLISHED_PAIRS: dict[tuple[str, str], tuple[float, float, str]] = {
    ("argon", "silica"): (_AR_O_EPSILON_K, _AR_O_SIGMA,
                          "published: Talu & Myers, Colloids Surf. A 187-188, 83 (2001)"),
    ("nitrogen", "silica"): (147.3, 3.17,
                             "published: Ravikovitch, Ó Domhnaill, Neimark, Schüth & Unger, Langmuir 11, 4765 "
                             "(1995), N2–oxide pair (value from memory)"),
}


# Wall-strength factors: (adsorbate, solid) -> (factor on the published ε, source). The factor belongs to
# porefill's wall-following lattice (its first row holds fewer contact sites than a continuum film), is
# calibrated once against a named reference and then held fixed for every size and temperature.
WALL_FACTORS: dict[tuple[str, str], tuple[float, str]] = {
    ("nitrogen", "silica"): (1.08, "calibrated once by benchmarks/calibrate_wall_factor.py: least-squares "
                                   "condensation p/p0 against the Kelvin–KJS relation (Kruk, Jaroniec & Sayari, "
                                   "Langmuir 13, 6267 (1997)) in 3–8 nm cylinders at 77.35 K, with a monolayer "
                                   "by p/p0 0.2; made on the smooth wall, and held when the wall spread "
                                   "(WALL_SPREADS) was calibrated with it: with the spread its rms miss is 0.025, "
                                   "the scan's optimum lying above 1.15"),
    ("argon", "silica"): (1.45, "calibrated once by benchmarks/calibrate_wall_factor.py --gas argon: condensation "
                               "p/p0 against the Kelvin equation with argon's γ and V_L (CoolProp) and the KJS film "
                               "in 3–8 nm cylinders at 87.3 K, with the wall spread of WALL_SPREADS"),
}


# Energetic heterogeneity of the wall (`porefill.physics.lattice_gas.wall_spread`): (adsorbate, solid) -> rows from the wall,
# each (mean extra binding m_j K, Gaussian width s_j K) of the sites' free energies, and the source. Held fixed for
# every size, shape and temperature; calibrated once, with the wall-strength factor held, by
# benchmarks/calibrate_wall_spread.py against the KJS t-curve of a reference silica (Kruk, Jaroniec & Sayari,
# Langmuir 13, 6267 (1997)) over p/p0 0.1–0.35 and BET C of 50–200 for nitrogen on silica (IUPAC 2015,
# Thommes et al., Pure Appl. Chem. 87, 1051; range value from memory). Argon has no quadrupole to bind to silanols
# (its contact-row mean is smaller) and has a wall-strength factor of its own.
WALL_SPREADS: dict[tuple[str, str], dict] = {
    ("nitrogen", "silica"): {
        "rows": ((300.0, 300.0), (15.0, 170.0), (0.0, 90.0)),
        "source": "calibrated once by benchmarks/calibrate_wall_spread.py (KJS t-curve 0.1–0.35 and BET C 50–200 "
                  "in 4.3, 6.7 and 20 nm cylinders at 77.35 K); Gaussian site-energy distributions after Ross & "
                  "Olivier, On Physical Adsorption (1964)",
    },
    ("argon", "silica"): {
        "rows": ((200.0, 300.0), (15.0, 170.0), (0.0, 90.0)),
        "source": "nitrogen's roughness rows (the same solid); a contact-row mean of 200 K without nitrogen's "
                  "quadrupole–silanol binding, chosen for BET C ≈ 30–40 (argon on silica, value from memory) with "
                  "argon's wall-strength factor (WALL_FACTORS)",
    },
}


def _lookup(table: dict, name: str, what: str):
    try:
        return table[name]
    except KeyError:
        known = ", ".join(sorted(table))
        raise ValueError(f"unknown {what} {name!r}; known: {known}") from None


def get_adsorbate(name: str) -> Adsorbate:
    """Catalog adsorbate by name (raises ValueError naming the known ones)."""
    return _lookup(ADSORBATES, name, "adsorbate")


def get_solid(name: str) -> Solid:
    """Catalog solid by name (raises ValueError naming the known ones)."""
    return _lookup(SOLIDS, name, "solid")


def pair_parameters(adsorbate: str | Adsorbate, solid: str | Solid = "silica", *,
                    epsilon_k: float | None = None, sigma_angstrom: float | None = None,
                    density_per_a3: float | None = None) -> PairParameters:
    """Adsorbate–solid LJ parameters: a published pair if one is known, else Lorentz–Berthelot.

    A published ε is multiplied by the pair's calibrated wall-strength factor (`WALL_FACTORS`), if it has
    one. Any of ε, σ and the solid density can be overridden (an ε given is used as it is, with no factor);
    ``origin`` then says so.
    """
    ads = get_adsorbate(adsorbate) if isinstance(adsorbate, str) else adsorbate
    sol = get_solid(solid) if isinstance(solid, str) else solid
    published = PUBLISHED_PAIRS.get((ads.name, sol.name))
    factor, factor_source = WALL_FACTORS.get((ads.name, sol.name), (1.0, ""))
    if published is not None:
        eps, sig, origin = published
        if factor != 1.0:
            origin = f"{origin}; ε × {factor:g} wall-strength factor ({factor_source})"
            eps = eps * factor
    else:
        eps, sig = lorentz_berthelot(ads.epsilon_k, ads.sigma_angstrom, sol.epsilon_k, sol.sigma_angstrom)
        origin = (f"derived: Lorentz–Berthelot of {ads.name} ({ads.source}) with {sol.name} "
                  f"{sol.atom} ({sol.source})")
    pair = PairParameters(eps, sig, sol.density_per_a3, origin)
    overrides = {k: v for k, v in (("epsilon_k", epsilon_k), ("sigma_angstrom", sigma_angstrom),
                                   ("density_per_a3", density_per_a3)) if v is not None}
    if overrides:
        note = ", ".join(f"{k}={v:g}" for k, v in overrides.items())
        pair = replace(pair, **overrides, origin=f"user override ({note}); otherwise {pair.origin}")
    return pair
