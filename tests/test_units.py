"""Amount units (IUPAC conventions)."""
from __future__ import annotations

import pytest

from physics import units


def test_stp_molar_volume():
    # IUPAC STP 273.15 K, 101.325 kPa: 1 mmol = 22.414 cm³(STP) (Sing et al. 1985; REFERENCES.md §7)
    assert units.STP_CM3_PER_MMOL == pytest.approx(22.414, abs=1e-3)


def test_pore_full_of_liquid_helium():
    # REFERENCES.md §7: a pore volume V_p (cm³/g) full of liquid He-4 holds V_p × 36.26 mmol
    n_liquid = 0.021837                 # Å^-3, Donnelly & Barenghi (1998)
    area = 600.0                        # any cross-section, Å²
    full = n_liquid * area              # atoms per Å of pore
    assert units.amount_mmol_per_g(full, cross_section_angstrom2=area, pore_volume_cm3_g=0.8) == \
        pytest.approx(0.8 * 36.26, rel=1e-3)
    assert units.amount_cm3_stp_per_g(full, cross_section_angstrom2=area, pore_volume_cm3_g=1.0) == \
        pytest.approx(36.26 * 22.414, rel=1e-3)
