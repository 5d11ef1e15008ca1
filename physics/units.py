"""Unit conversions at the edges. Internal: Å, K, Pa; amounts as atoms per Å of pore length."""
from __future__ import annotations

import numpy as np
from scipy import constants

__all__ = ["STP_CM3_PER_MMOL", "amount_mmol_per_g", "amount_cm3_stp_per_g"]

# IUPAC physisorption STP: 273.15 K and 101.325 kPa (Sing et al., Pure Appl. Chem. 57, 603 (1985))
STP_TEMPERATURE_K = 273.15
STP_PRESSURE_PA = constants.atm
STP_CM3_PER_MMOL = constants.R * STP_TEMPERATURE_K / STP_PRESSURE_PA * 1e6 / 1e3   # ideal gas: 22.414


def amount_mmol_per_g(atoms_per_angstrom, *, cross_section_angstrom2: float, pore_volume_cm3_g: float):
    """Amount adsorbed in mmol per gram of sample, from atoms per Å of one pore.

    The sample's specific pore volume V_p (cm³/g) holds V_p / A Å of pore per gram (A the pore's
    cross-section in Å², 1 cm³ = 1e24 Å³).
    """
    length_per_g = pore_volume_cm3_g * 1e24 / cross_section_angstrom2
    return np.asarray(atoms_per_angstrom, float) * length_per_g / constants.Avogadro * 1e3


def amount_cm3_stp_per_g(atoms_per_angstrom, *, cross_section_angstrom2: float, pore_volume_cm3_g: float):
    """Amount adsorbed as gas volume at STP (273.15 K, 101.325 kPa) per gram."""
    return amount_mmol_per_g(atoms_per_angstrom, cross_section_angstrom2=cross_section_angstrom2,
                             pore_volume_cm3_g=pore_volume_cm3_g) * STP_CM3_PER_MMOL
