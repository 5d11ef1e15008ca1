"""Pre-plated walls: one or more adsorbed layers of another gas on the pore wall, as a continuum shell each.

Helium experiments often plate the substrate first with a few layers of a heavier gas. Each plating layer is
modelled as a sheet of the plating gas's atoms, of areal density n_s, parallel to the wall at the distance z_k
from the solid's surface; the adsorbate feels it through the Lorentz–Berthelot pair of the two gases,
integrated over the sheet:

- a **flat sheet** (the slit): the 10-4 potential V(z) = 2π n_s ε σ² [(2/5)(σ/z)^10 − (σ/z)^4] (Steele, Surf.
  Sci. 36, 317 (1973));
- a **cylindrical shell** of radius R (the cylinder): the closed form of Tjatjopoulos, Feke & Mann, J. Phys.
  Chem. 92, 4006 (1988) (attribution from memory; docs/REFERENCES.md §1, checked in the tests against direct
  quadrature), V(r) = π² n_s ε σ² [(63/32) (σ/(R(1−x²)))^10 F(−9/2, −9/2; 1; x²) − 3 (σ/(R(1−x²)))^4
  F(−3/2, −3/2; 1; x²)], x = r/R;
- a **polygon of strips** (the hexagon, and any regular polygon): per face, the z-integrated pair kernel
  4ε[(63π/256)σ^12 s^-11 − (3π/8)σ^6 s^-5] integrated along the strip in closed form (with u = d tan φ the
  integrals are ∫cos⁹φ dφ and ∫cos³φ dφ).

Where the layers sit and how dense they are (common practice): the first layer at the minimum of the plating
gas's own 9-3 wall potential, z_1 = (2/5)^(1/6) σ_gs (Steele 1973); each further layer one (111) spacing
of the close-packed solid further in, √(2/3)·a with a = (√2/ρ_L)^(1/3) the fcc nearest-neighbour distance
of the gas's triple-point liquid density ρ_L (CoolProp); each layer as dense as a (111) plane of that
solid, n_s = 2/(√3 a²) — the same as the Emmett–Brunauer monolayer area a_m = 1.091 (1/ρ_L)^(2/3) (Emmett
& Brunauer, J. Am. Chem. Soc. 59, 1553 (1937)). The region behind the innermost layer (between it and the
solid) is taken as filled: the potential there is +inf.

Hexagonal arrays: only the pore's own plating is summed (the neighbours' shells lie a wall thickness away).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import hyp2f1

from porefill.physics.choices import MAX_PLATING_LAYERS
from porefill.physics.choices import PLATING_GASES as PLATING_GAS_NAMES

__all__ = ["PLATING_GASES", "Plating", "make_plating", "plating_potential", "sheet_10_4", "cylinder_shell",
           "strip_potential", "MAX_PLATING_LAYERS"]

# plating gases (the names in porefill.physics.choices): (LJ ε K, σ Å, source, CoolProp name); the catalog
# adsorbates' own, and krypton
_GAS_PARAMETERS = {
    "argon": (119.8, 3.405, "Michels; Rahman, Phys. Rev. 136, A405 (1964) (value from memory)", "Argon"),
    "krypton": (171.0, 3.60, "Hirschfelder, Curtiss & Bird, Molecular Theory of Gases and Liquids (1954) "
                             "(value from memory)", "Krypton"),
    "neon": (35.6, 2.75, "Hirschfelder, Curtiss & Bird (1954) (value from memory)", "Neon"),
    "hydrogen": (34.2, 2.96, "Buch, J. Chem. Phys. 100, 7610 (1994) (value from memory)", "Hydrogen"),
}
PLATING_GASES = {name: _GAS_PARAMETERS[name] for name in PLATING_GAS_NAMES}


@dataclass(frozen=True)
class Plating:
    """Layers of ``gas`` on the wall, as the adsorbate feels them: ``distances_angstrom`` of each sheet from
    the solid's surface, their areal density (Å⁻²) and the adsorbate–plating pair (ε K, σ Å)."""

    gas: str
    layers: int
    distances_angstrom: tuple
    areal_density_per_a2: float
    epsilon_k: float
    sigma_angstrom: float
    source: str = ""

    def to_dict(self) -> dict:
        return {"gas": self.gas, "layers": self.layers, "distances_angstrom": list(self.distances_angstrom),
                "areal_density_per_a2": self.areal_density_per_a2, "epsilon_k": self.epsilon_k,
                "sigma_angstrom": self.sigma_angstrom, "source": self.source}


@lru_cache(maxsize=None)
def _triple_point_density(coolprop_name: str) -> float:
    """Number density (Å⁻³) of the saturated liquid at the triple point (CoolProp)."""
    from scipy import constants

    from porefill.physics.substances.vapour_pressure import _coolprop

    cp = _coolprop()
    t = float(cp.PropsSI("Ttriple", coolprop_name))
    return float(cp.PropsSI("Dmolar", "T", t + 1e-6, "Q", 0, coolprop_name)) * constants.Avogadro * 1e-30


def make_plating(gas: str, layers: int, adsorbate: str, solid: str = "silica") -> Plating:
    """The plating of ``layers`` layers of ``gas`` for ``adsorbate`` on ``solid`` (module notes)."""
    from porefill.physics.substances.materials import get_adsorbate, get_solid, lorentz_berthelot, pair_parameters

    if gas not in PLATING_GASES:
        raise ValueError(f"plating gas must be one of {', '.join(PLATING_GASES)}; got {gas!r}")
    if isinstance(layers, bool) or not isinstance(layers, int) or not 1 <= layers <= MAX_PLATING_LAYERS:
        raise ValueError(f"plating layers must be a whole number from 1 to {MAX_PLATING_LAYERS}; got {layers!r}")
    eps_g, sig_g, source, coolprop_name = PLATING_GASES[gas]
    rho = _triple_point_density(coolprop_name)
    a = (math.sqrt(2.0) / rho) ** (1.0 / 3.0)                 # fcc nearest-neighbour distance
    n_s = 2.0 / (math.sqrt(3.0) * a * a)                      # a (111) plane
    spacing = math.sqrt(2.0 / 3.0) * a
    sol = get_solid(solid)
    try:
        sig_gs = pair_parameters(gas, solid).sigma_angstrom
    except ValueError:                                        # not an adsorbate of the catalog (krypton)
        sig_gs = lorentz_berthelot(eps_g, sig_g, sol.epsilon_k, sol.sigma_angstrom)[1]
    z1 = (2.0 / 5.0) ** (1.0 / 6.0) * sig_gs
    ads = get_adsorbate(adsorbate)
    eps, sig = lorentz_berthelot(ads.epsilon_k, ads.sigma_angstrom, eps_g, sig_g)
    return Plating(gas, layers, tuple(z1 + k * spacing for k in range(layers)), n_s, eps, sig,
                   f"{gas} LJ: {source}; layers at the 9-3 minimum and fcc (111) spacings of the triple-point "
                   "liquid (CoolProp); Lorentz–Berthelot with the adsorbate")


# --- kernels ------------------------------------------------------------------------------------
def sheet_10_4(z, *, n_s: float, epsilon_k: float, sigma_angstrom: float) -> np.ndarray:
    """Steele's 10-4 potential (K) of a flat sheet at distance z (Å)."""
    z = np.asarray(z, float)
    s = sigma_angstrom
    return 2.0 * np.pi * n_s * epsilon_k * s * s * (0.4 * (s / z) ** 10 - (s / z) ** 4)


def cylinder_shell(r, radius: float, *, n_s: float, epsilon_k: float, sigma_angstrom: float) -> np.ndarray:
    """Potential (K) at distance r (Å) from the axis inside a cylindrical sheet of radius ``radius``
    (Tjatjopoulos, Feke & Mann 1988); +inf at and beyond the sheet."""
    r = np.asarray(r, float)
    x2 = (r / radius) ** 2
    s = sigma_angstrom
    out = np.full(r.shape, np.inf)
    ok = x2 < 1.0
    q = 1.0 - x2[ok]
    out[ok] = np.pi ** 2 * n_s * epsilon_k * s * s * (
        (63.0 / 32.0) * (s / radius) ** 10 * q ** -10 * hyp2f1(-4.5, -4.5, 1.0, x2[ok])
        - 3.0 * (s / radius) ** 4 * q ** -4 * hyp2f1(-1.5, -1.5, 1.0, x2[ok]))
    return out


def _cos_power_integral(t1, t2, odd: int):
    """∫ cos^odd φ dφ between the angles whose sines are t1, t2 (odd = 3 or 9), as a polynomial in sin φ."""
    if odd == 3:
        f = lambda t: t - t ** 3 / 3.0                                                    # noqa: E731
    else:
        f = lambda t: t - 4.0 * t ** 3 / 3.0 + 6.0 * t ** 5 / 5.0 - 4.0 * t ** 7 / 7.0 + t ** 9 / 9.0  # noqa: E731
    return f(t2) - f(t1)


def strip_potential(x, y, p1, p2, *, n_s: float, epsilon_k: float, sigma_angstrom: float) -> np.ndarray:
    """Potential (K) at (x, y) of a sheet that is the straight segment p1→p2 in the cross-section and
    infinite along z: n_s ∫ 4ε[(63π/256)σ¹²s⁻¹¹ − (3π/8)σ⁶s⁻⁵] dl along the segment, in closed form. Meant
    for points off the segment's line (d > 0)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    (ax, ay), (bx, by) = p1, p2
    length = math.hypot(bx - ax, by - ay)
    tx, ty = (bx - ax) / length, (by - ay) / length
    d = np.abs((x - ax) * ty - (y - ay) * tx)                 # distance to the segment's line
    u1 = (ax - x) * tx + (ay - y) * ty                        # along the line, from the foot of the perpendicular
    u2 = u1 + length
    t1, t2 = u1 / np.hypot(d, u1), u2 / np.hypot(d, u2)       # sin φ at the ends
    s = sigma_angstrom
    with np.errstate(divide="ignore", invalid="ignore"):
        rep = (63.0 * np.pi / 256.0) * s ** 12 * d ** -10 * _cos_power_integral(t1, t2, 9)
        att = (3.0 * np.pi / 8.0) * s ** 6 * d ** -4 * _cos_power_integral(t1, t2, 3)
    return 4.0 * epsilon_k * n_s * (rep - att)


def plating_potential(x, y, pore, plating: Plating) -> np.ndarray:
    """Potential (K) of the plating layers at in-plane points inside the pore: the sum over its sheets, +inf
    behind the innermost one (module notes)."""
    from porefill.physics.pore.geometry import CylinderPore, RegularPolygonPore, SlitPore

    x, y = np.asarray(x, float), np.asarray(y, float)
    kw = dict(n_s=plating.areal_density_per_a2, epsilon_k=plating.epsilon_k, sigma_angstrom=plating.sigma_angstrom)
    total = np.zeros(np.broadcast(x, y).shape)
    if isinstance(pore, SlitPore):
        half = 0.5 * pore.size_angstrom
        for z in plating.distances_angstrom:
            h = half - z
            total = total + sheet_10_4(h - y, **kw) + sheet_10_4(h + y, **kw)
        inner = half - plating.distances_angstrom[-1]
        return np.where(np.abs(y) < inner, total, np.inf)
    if isinstance(pore, CylinderPore):
        r = np.hypot(x, y)
        for z in plating.distances_angstrom:
            total = total + cylinder_shell(r, pore.size_angstrom - z, **kw)
        return total
    if isinstance(pore, RegularPolygonPore):
        vertices = np.asarray(pore.vertices, float)
        apothem = pore.apothem_angstrom
        inside = np.ones(total.shape, bool)
        for z in plating.distances_angstrom:
            if z >= apothem:
                return np.full(total.shape, np.inf)
            shell = vertices * (apothem - z) / apothem
            inside = np.asarray(_strictly_inside(x, y, shell), bool)
            for k in range(len(shell)):
                part = strip_potential(x, y, shell[k], shell[(k + 1) % len(shell)], **kw)
                total = total + np.where(inside, part, 0.0)
        return np.where(inside, total, np.inf)
    raise ValueError(f"no plating for a pore of type {type(pore).__name__}")


def _strictly_inside(x, y, vertices: np.ndarray) -> np.ndarray:
    """Points strictly inside a convex polygon (counter-clockwise vertices)."""
    inside = np.ones(np.broadcast(x, y).shape, bool)
    for k in range(len(vertices)):
        (ax, ay), (bx, by) = vertices[k], vertices[(k + 1) % len(vertices)]
        inside &= (bx - ax) * (y - ay) - (by - ay) * (x - ax) > 1e-9
    return inside
