"""Unit conversions, both ways, in one place. Internal: Å, K, Pa; amounts as atoms per Å of pore length.

Pressures: Pa (SI), kPa, mbar (100 Pa), bar (10⁵ Pa, SI-accepted), Torr (101 325/760 Pa, by definition of
the standard atmosphere), and the relative pressure p/p0 (needs p0).

Amounts (internal: atoms per Å of pore length; for the slit, per Å of length and per Å along x):
- per nm of pore (slit: per nm²);
- per nm² of wall (the pore's perimeter, `Pore.perimeter_angstrom`);
- mmol/g and cm³(STP)/g of sample, from the sample's specific pore volume V_p (cm³/g): a gram holds
  V_p / A_l of pore length. V_p is the pore volume as a measurement gives it by the Gurvich rule (the amount a
  full pore holds, as bulk liquid: IUPAC, Thommes et al. 2015, §6), so A_l is the cross-section of the liquid
  a full pore holds (`GeometryStage.liquid_area_angstrom2`), not the geometric one (`Pore.area_angstrom2`),
  which also counts the layer by the wall that no atom's centre reaches. So a full pore holds V_p of liquid.
STP for gas volumes is the IUPAC physisorption convention, 273.15 K and 101.325 kPa (Sing et al., Pure
Appl. Chem. 57, 603 (1985); Thommes et al., Pure Appl. Chem. 87, 1051 (2015)): 1 mmol = 22.414 cm³(STP).
It is kept, rather than IUPAC's newer 100 kPa standard pressure (22.711 cm³ per mmol), because
adsorption instruments and the literature they feed report cm³(STP) at 101.325 kPa.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import constants

__all__ = ["STP_TEMPERATURE_K", "STP_PRESSURE_PA", "STP_CM3_PER_MMOL", "PRESSURE_UNITS", "AMOUNT_UNITS",
           "to_pascal", "from_pascal", "AmountBasis", "to_atoms_per_angstrom", "from_atoms_per_angstrom",
           "amount_mmol_per_g", "amount_cm3_stp_per_g", "particle_word"]

STP_TEMPERATURE_K = 273.15                        # IUPAC physisorption STP (Sing et al. 1985)
STP_PRESSURE_PA = constants.atm                   # 101 325 Pa, by definition
STP_CM3_PER_MMOL = constants.R * STP_TEMPERATURE_K / STP_PRESSURE_PA * 1e6 / 1e3   # ideal gas: 22.414

# Pa per unit. Torr: 1/760 of the standard atmosphere (by definition); mbar, bar: SI multiples of Pa.
PRESSURE_UNITS: dict[str, float | None] = {
    "Pa": 1.0, "kPa": 1e3, "mbar": 1e2, "bar": 1e5, "Torr": constants.atm / 760.0, "p/p0": None,
}

AMOUNT_UNITS = ("per nm", "per nm2 wall", "mmol/g", "cm3(STP)/g")


def _pressure_factor(unit: str, p0_pa: float | None) -> float:
    if unit not in PRESSURE_UNITS:
        raise ValueError(f"unknown pressure unit {unit!r}; known: {', '.join(PRESSURE_UNITS)}")
    factor = PRESSURE_UNITS[unit]
    if factor is None:
        if p0_pa is None or not (np.isfinite(p0_pa) and p0_pa > 0):
            raise ValueError(f"relative pressure p/p0 needs a positive p0 in Pa; got {p0_pa!r}")
        return float(p0_pa)
    return factor


def to_pascal(values, unit: str, *, p0_pa: float | None = None) -> np.ndarray:
    """Pressures in ``unit`` (one of PRESSURE_UNITS) to Pa; p/p0 needs ``p0_pa``."""
    return np.asarray(values, float) * _pressure_factor(unit, p0_pa)


def from_pascal(values_pa, unit: str, *, p0_pa: float | None = None) -> np.ndarray:
    """Pressures in Pa to ``unit``; the inverse of `to_pascal`."""
    return np.asarray(values_pa, float) / _pressure_factor(unit, p0_pa)


@dataclass(frozen=True)
class AmountBasis:
    """What turns atoms per Å of one pore into other amounts.

    ``area_angstrom2`` is the cross-section of the liquid a full pore holds, the pore volume per Å of length
    that per-gram amounts are counted on (see the module's notes); ``perimeter_angstrom`` the pore's (for the
    slit, both per Å along x); ``pore_volume_cm3_g`` the sample's specific pore volume (Gurvich), needed for
    amounts per gram.
    """

    area_angstrom2: float
    perimeter_angstrom: float
    pore_volume_cm3_g: float | None = None
    per_area: bool = False              # slit: "per nm" is per nm²

    @classmethod
    def of(cls, geometry, pore_volume_cm3_g: float | None = None) -> "AmountBasis":
        """The basis of a geometry stage (`porefill.physics.lattice_gas.stages.GeometryStage`: its pore and
        its ``liquid_area_angstrom2``)."""
        pore = geometry.pore
        return cls(float(geometry.liquid_area_angstrom2), float(pore.perimeter_angstrom), pore_volume_cm3_g,
                   pore.lattice_kind == "rows")

    def _factor(self, unit: str) -> float:
        """Amount in ``unit`` per (atom per Å of pore)."""
        if unit == "per nm":
            return 100.0 if self.per_area else 10.0
        if unit == "per nm2 wall":
            return 100.0 / self.perimeter_angstrom
        if unit in ("mmol/g", "cm3(STP)/g"):
            if self.pore_volume_cm3_g is None:
                raise ValueError(f"amounts in {unit} need the sample's specific pore volume (cm³/g)")
            length_per_g = self.pore_volume_cm3_g * 1e24 / self.area_angstrom2   # Å of pore per gram (Gurvich)
            mmol = length_per_g / constants.Avogadro * 1e3
            return mmol * (STP_CM3_PER_MMOL if unit == "cm3(STP)/g" else 1.0)
        raise ValueError(f"unknown amount unit {unit!r}; known: {', '.join(AMOUNT_UNITS)}")


def from_atoms_per_angstrom(values, unit: str, basis: AmountBasis) -> np.ndarray:
    """Atoms per Å of pore length to ``unit`` (one of AMOUNT_UNITS)."""
    return np.asarray(values, float) * basis._factor(unit)


def to_atoms_per_angstrom(values, unit: str, basis: AmountBasis) -> np.ndarray:
    """Amounts in ``unit`` to atoms per Å of pore length; the inverse of `from_atoms_per_angstrom`."""
    return np.asarray(values, float) / basis._factor(unit)


def amount_mmol_per_g(atoms_per_angstrom, *, cross_section_angstrom2: float, pore_volume_cm3_g: float):
    """Amount adsorbed in mmol per gram of sample, from atoms per Å of one pore."""
    basis = AmountBasis(cross_section_angstrom2, 1.0, pore_volume_cm3_g)
    return from_atoms_per_angstrom(atoms_per_angstrom, "mmol/g", basis)


def amount_cm3_stp_per_g(atoms_per_angstrom, *, cross_section_angstrom2: float, pore_volume_cm3_g: float):
    """Amount adsorbed as gas volume at STP (273.15 K, 101.325 kPa) per gram."""
    basis = AmountBasis(cross_section_angstrom2, 1.0, pore_volume_cm3_g)
    return from_atoms_per_angstrom(atoms_per_angstrom, "cm3(STP)/g", basis)


def particle_word(adsorbate: str) -> str:
    """'atoms' for the noble gases, 'molecules' for molecular ones (the catalog's `molecular` flag)."""
    from porefill.physics.substances.materials import get_adsorbate
    return "molecules" if get_adsorbate(adsorbate).molecular else "atoms"
