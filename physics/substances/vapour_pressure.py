"""Saturated vapour pressure p0(T) and bulk-liquid properties of the adsorbates.

Helium-4 uses the ITS-90 vapour-pressure equation (Preston-Thomas, Metrologia 27, 3 (1990)), with an
ideal-vapour Clausius–Clapeyron extrapolation below 1.25 K from the zero-temperature latent heat
(L0 = 59.83 J/mol, Donnelly & Barenghi, J. Phys. Chem. Ref. Data 27, 1217 (1998)):
ln p = ln p(1.25 K) − (L0/R)(1/T − 1/1.25 K) + (5/2) ln(T/1.25 K), i.e. dlnp/dT = (L0 + 5RT/2)/(RT²)
for a liquid of negligible heat capacity and an ideal monatomic vapour.
The other gases use CoolProp's reference equations of state between the triple and critical points. Argon is
also served down to 75 K as a supercooled liquid (argon at 77 K, below its 83.8 K triple point, is common
practice for pore analysis): p0 is extrapolated from the triple point along the liquid's Clausius–Clapeyron
line, ln p = ln p_t − (ΔH_vap/R)(1/T − 1/T_t), with CoolProp's p_t and ΔH_vap at T_t, and flagged as extrapolated.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np
from scipy import constants
from scipy.optimize import brentq

__all__ = ["saturated_vapour_pressure", "temperature_range", "typical_temperature", "its90_helium4_temperature",
           "liquid_number_density", "critical_temperature", "VapourPressureRangeError",
           "HELIUM4_EXTRAPOLATION_MIN_K", "p0_is_extrapolated"]

# ITS-90 helium-4 vapour-pressure equation: T90 = A0 + Σ_{i=1..9} A_i [(ln(p/Pa) − B)/C]^i
_ITS90_LOW = dict(t_range=(1.25, 2.1768), B=5.6, C=2.9, lnp_bracket=(np.log(80.0), np.log(6.0e3)),
                  A=(1.392408, 0.527153, 0.166756, 0.050988, 0.026514, 0.001975, -0.017976, 0.005409,
                     0.013259, 0.0))
_ITS90_HIGH = dict(t_range=(2.1768, 5.0), B=10.3, C=1.9, lnp_bracket=(np.log(4.0e3), np.log(2.0e5)),
                   A=(3.146631, 1.357655, 0.413923, 0.091159, 0.016349, 0.001826, -0.004325, -0.004973,
                      0.0, 0.0))
LAMBDA_POINT_K = 2.1768                       # ITS-90
HELIUM4_LATENT_HEAT_0K_J_MOL = 59.83          # Donnelly & Barenghi (1998)
HELIUM4_EXTRAPOLATION_MIN_K = 0.2             # lowest temperature served (p0 ~ 1e-13 Pa there)
HELIUM4_LIQUID_DENSITY_0K_PER_A3 = 0.021837   # 0.14514 g/cm³, Donnelly & Barenghi (1998)
HELIUM4_BINDING_0K_K = 7.196                  # L0/R, Donnelly & Barenghi (1998)
SUPERCOOLED_MIN_K = {"argon": 75.0}           # lowest supercooled-liquid temperature served (common practice)


class VapourPressureRangeError(ValueError):
    """Temperature outside the range of the vapour-pressure equation."""


def its90_helium4_temperature(pressure_pa: float) -> float:
    """T90 (K) at saturated vapour pressure p (Pa), ITS-90 helium-4 equation, 1.25 K to 5.0 K."""
    lnp = np.log(pressure_pa)
    for rng in (_ITS90_LOW, _ITS90_HIGH):
        t = _its90(lnp, rng)
        if rng["t_range"][0] <= t <= rng["t_range"][1]:
            return t
    raise VapourPressureRangeError(f"pressure {pressure_pa} Pa is outside the ITS-90 helium-4 range (1.25–5.0 K)")


def _its90(lnp: float, rng: dict) -> float:
    u = (lnp - rng["B"]) / rng["C"]
    a = rng["A"]
    return a[0] + sum(a[i] * u**i for i in range(1, 10))


def _its90_pressure(t: float) -> float:
    rng = _ITS90_LOW if t < LAMBDA_POINT_K else _ITS90_HIGH
    lo, hi = rng["lnp_bracket"]   # the polynomial is monotonic only over its own range
    return float(np.exp(brentq(lambda lnp: _its90(lnp, rng) - t, lo, hi, xtol=1e-14, rtol=4e-15)))


def _helium4_pressure(t: float) -> float:
    if t >= 1.25:
        return _its90_pressure(t)
    p125 = _its90_pressure(1.25)
    r = constants.R
    return p125 * np.exp(-HELIUM4_LATENT_HEAT_0K_J_MOL / r * (1.0 / t - 1.0 / 1.25) + 2.5 * np.log(t / 1.25))


def _coolprop():
    import CoolProp.CoolProp as CP   # imported lazily: it is only needed for the classical gases
    return CP


@lru_cache(maxsize=None)
def temperature_range(adsorbate: str) -> tuple[float, float, str]:
    """(T_min, T_max, description) of the vapour-pressure equation used for an adsorbate."""
    from porefill.physics.substances.materials import get_adsorbate

    ads = get_adsorbate(adsorbate)
    if ads.name == "helium-4":
        return (HELIUM4_EXTRAPOLATION_MIN_K, 5.0,
                "ITS-90 helium-4 equation, 1.25–5.0 K; ideal-vapour extrapolation with L0 = 59.83 J/mol below")
    t_triple, t_crit, _ = EQUATION_TEMPERATURES_K[ads.name]
    if ads.name in SUPERCOOLED_MIN_K:
        return (SUPERCOOLED_MIN_K[ads.name], t_crit,
                f"CoolProp reference equation of state for {ads.coolprop_name}, triple to critical point; "
                f"supercooled liquid extrapolated by Clausius–Clapeyron below the triple point {t_triple:.2f} K")
    return (t_triple, t_crit, f"CoolProp reference equation of state for {ads.coolprop_name}, triple to critical point")


@lru_cache(maxsize=None)
def _triple_point(name: str) -> tuple[float, float, float]:
    """(T_t K, p_t Pa, ΔH_vap J/mol at T_t) of a CoolProp fluid's liquid–vapour line."""
    cp = _coolprop()
    t = float(cp.PropsSI("Ttriple", name))
    p = float(cp.PropsSI("P", "T", t, "Q", 0, name))
    dh = float(cp.PropsSI("Hmolar", "T", t, "Q", 1, name) - cp.PropsSI("Hmolar", "T", t, "Q", 0, name))
    return t, p, dh


def p0_is_extrapolated(adsorbate: str, temperature_k: float) -> bool:
    """True where p0 comes from an extrapolation beyond its equation's own range (helium-4 below 1.25 K,
    a supercooled liquid below its triple point)."""
    t = float(temperature_k)
    if adsorbate == "helium-4":
        return t < _ITS90_LOW["t_range"][0]
    if adsorbate in SUPERCOOLED_MIN_K:
        from porefill.physics.substances.materials import get_adsorbate
        return t < _triple_point(get_adsorbate(adsorbate).coolprop_name)[0]
    return False


def saturated_vapour_pressure(adsorbate: str, temperature_k: float) -> float:
    """Saturated vapour pressure p0 (Pa) of an adsorbate at temperature T (K).

    Raises
    ------
    VapourPressureRangeError
        If T is outside the range of the equation (named in the message).
    """
    t_min, t_max, what = temperature_range(adsorbate)
    t = float(temperature_k)
    if not (np.isfinite(t) and t_min <= t <= t_max):
        raise VapourPressureRangeError(
            f"temperature {temperature_k!r} K is outside {t_min:.4g}–{t_max:.4g} K for {adsorbate} ({what})")
    if adsorbate == "helium-4":
        return _helium4_pressure(t)
    from porefill.physics.substances.materials import get_adsorbate
    name = get_adsorbate(adsorbate).coolprop_name
    if t >= t_max:
        return float(_coolprop().PropsSI("pcrit", name))
    t_triple, p_triple, dh = _triple_point(name)
    if t < t_triple:                      # supercooled liquid (only where temperature_range allows it)
        return float(p_triple * np.exp(-dh / constants.R * (1.0 / t - 1.0 / t_triple)))
    return float(_coolprop().PropsSI("P", "T", t, "Q", 0, name))


@lru_cache(maxsize=None)
def liquid_number_density(adsorbate: str) -> tuple[float, str]:
    """Reference bulk-liquid number density (Å^-3) and its source, used to size the lattice cell.

    Helium-4: the T → 0 liquid at saturated vapour pressure (Donnelly & Barenghi 1998). Others: the
    saturated liquid at the normal boiling point, or at the triple point where that lies above it (CoolProp).
    """
    if adsorbate == "helium-4":
        return HELIUM4_LIQUID_DENSITY_0K_PER_A3, "liquid ⁴He at T → 0, Donnelly & Barenghi (1998)"
    from porefill.physics.substances.materials import get_adsorbate
    name = get_adsorbate(adsorbate).coolprop_name
    cp = _coolprop()
    t_nbp = float(cp.PropsSI("T", "P", constants.atm, "Q", 0, name))
    mol_m3 = float(cp.PropsSI("Dmolar", "T", t_nbp, "Q", 0, name))
    return mol_m3 * constants.Avogadro * 1e-30, f"saturated liquid at the normal boiling point {t_nbp:.2f} K (CoolProp)"


HELIUM4_CRITICAL_K = 5.1953       # K, CoolProp's helium-4 equation of state (Tcrit)

# (triple point, critical point, normal boiling point) in K of the CoolProp reference equations of state
# (CoolProp 6.x: PropsSI 'Ttriple', 'Tcrit', and T at 1 atm on the saturated liquid), held here so that the
# temperature windows (every page's sliders) need no CoolProp import, which takes seconds;
# tests/test_vapour_pressure.py checks each against CoolProp itself.
EQUATION_TEMPERATURES_K: dict[str, tuple[float, float, float]] = {
    "hydrogen": (13.957, 33.1443326883113, 20.36890353912106),
    "neon": (24.56, 44.39999970498691, 27.09997968642402),
    "argon": (83.806, 150.68700000001058, 87.30213623016851),
    "nitrogen": (63.151, 126.19199999958556, 77.3549939095929),
}


@lru_cache(maxsize=None)
def critical_temperature(adsorbate: str) -> float:
    """Bulk critical temperature (K): CoolProp's reference equation of state. Helium-4's value is held here
    (5.1953 K, CoolProp's helium-4 equation of state; tests/test_vapour_pressure.py checks it against CoolProp)
    so that helium, whose vapour pressure is ITS-90's, never loads CoolProp (seconds to import)."""
    if adsorbate == "helium-4":
        return HELIUM4_CRITICAL_K
    from porefill.physics.substances.materials import get_adsorbate
    return float(_coolprop().PropsSI("Tcrit", get_adsorbate(adsorbate).coolprop_name))


def typical_temperature(adsorbate: str) -> float:
    """A sensible starting temperature (K): 1.5 K for helium-4 (superfluid film work), else the normal
    boiling point (CoolProp)."""
    if adsorbate == "helium-4":
        return 1.5
    return EQUATION_TEMPERATURES_K[adsorbate][2]
