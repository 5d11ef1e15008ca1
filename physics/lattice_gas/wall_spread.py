"""The energetic heterogeneity of a real wall: a spread of site free energies on the rows next to it.

An amorphous silica surface is not the smooth continuum of `porefill.physics.pore.wall_potential`: silanol groups
bind a molecule with a quadrupole (nitrogen) more strongly than the bare oxide does, and the surface is rough on
the scale of a molecule, so a contact site sits nearer to or farther from the solid than the mean wall. Adsorption
on such a surface is the sum of local isotherms over a distribution of adsorption energies (Ross & Olivier, On
Physical Adsorption, Wiley 1964: Gaussian distributions of the adsorption energy; Rudziński & Everett, Adsorption
of Gases on Heterogeneous Surfaces, Academic Press 1992 — value from memory). Without it a mean-field lattice gas
lays its first layer down by a first-order two-dimensional condensation and its second by another, where silica
shows a continuous knee and a smooth multilayer film.

Here every site of row j from the wall (j = 0: the contact row) stands for a mixture of sub-sites whose free
energy is f_i + δ, δ Gaussian with mean −m_j and standard deviation s_j (K), held on a fixed Gauss–Hermite rule of
`NODES` points, all sub-sites feeling the same mean field (random mixing; `porefill.physics.lattice_gas.meanfield.SiteSpread`).
m_0 > 0 is the extra specific binding of the contact row; the widths fall with distance from the wall as the
roughness is smoothed over by the layers below. The values are a property of the adsorbate–solid pair
(`porefill.physics.substances.materials.WALL_SPREADS`), calibrated once and then held for every pore size, shape
and temperature; a pair without an entry (helium, hydrogen, neon) keeps the smooth wall.
"""
from __future__ import annotations

import numpy as np

from porefill.physics.lattice_gas.meanfield import SiteSpread
from porefill.physics.substances.materials import WALL_SPREADS

__all__ = ["NODES", "wall_spread", "spread_description"]

NODES = 12          # Gauss–Hermite points of each row's distribution (moments exact to order 23)


def _rule() -> tuple[np.ndarray, np.ndarray]:
    g, w = np.polynomial.hermite_e.hermegauss(NODES)      # ∫ e^{−x²/2}: nodes of the unit normal
    return g, w / w.sum()


def wall_spread(adsorbate: str, solid: str, ring: np.ndarray) -> SiteSpread | None:
    """The spread for sites whose row from the wall is ``ring`` (0: contact row), or None for a smooth wall."""
    entry = WALL_SPREADS.get((adsorbate, solid))
    if entry is None:
        return None
    rows = entry["rows"]
    g, w = _rule()
    ring = np.asarray(ring)
    shift = np.zeros((ring.size, NODES))
    for j, (mean, width) in enumerate(rows):
        shift[ring == j] = -mean + width * g
    marked = ring < len(rows)
    if not np.any(marked):
        return None
    return SiteSpread(shift, w, marked)


def spread_description(adsorbate: str, solid: str) -> dict | None:
    """What `wall_spread` applies, as plain values for exports and the page (None for a smooth wall)."""
    entry = WALL_SPREADS.get((adsorbate, solid))
    if entry is None:
        return None
    return {"rows": [{"row_from_wall": j, "mean_extra_binding_k": m, "width_k": s}
                     for j, (m, s) in enumerate(entry["rows"])],
            "distribution": f"Gaussian, {NODES}-point Gauss–Hermite rule, random mixing",
            "source": entry["source"]}
