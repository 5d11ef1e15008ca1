"""Fluid–fluid bond energy ε_b of the lattice gas, and the rules that calibrate it.

Rules (the user may instead give ε_b directly):

- ``vapour-pressure``: ε_b(T) = −(2kT/z) ln(p0(T) v / kT), v the cell volume. With it the lattice's bulk
  coexistence falls at the real saturated vapour pressure p0 *and* a site's free energy
  −kT ln⟨e^{−V/kT}⟩ gives the exact ideal-vapour Henry limit N/L = (p/kT)∫dA e^{−V/kT}, because
  p = p0 exp[(μ − μ_coex)/kT] = (kT/v) e^{μ/kT} then. Both ends of the isotherm are right. The default:
  it matters most for helium-4, whose first layers form many decades below p0, and for nitrogen at 77 K
  in 3–8 nm cylinders it puts the equilibrium condensation near the Kelvin-based values (tests).
  It makes ε_b depend on T, and the mean-field hysteresis loops it gives are wide.
- ``critical-temperature``: kT_c = z ε_b / 4 (Bragg–Williams; Hill 1960) with the bulk T_c: the
  lattice's reduced temperature T/T_c follows the real fluid, but the Henry regime is off by the
  mismatch of the lattice's vapour with an ideal one.
- ``binding-energy``: z ε_b / 2 = the bulk liquid's zero-temperature binding per atom (helium-4:
  L0/R = 7.196 K, Donnelly & Barenghi 1998).

In every case pressures come from p = p0(T) exp[(μ − μ_coex)/kT] with μ_coex = −z ε_b / 2.
"""
from __future__ import annotations

import numpy as np
from scipy import constants

from porefill.physics.sites.lattice import COORDINATION
from porefill.physics.substances.vapour_pressure import HELIUM4_BINDING_0K_K, critical_temperature, saturated_vapour_pressure
from porefill.physics.choices import BOND_RULES

__all__ = ["BOND_RULES", "default_bond_rule", "bond_energy", "calibration_facts"]



def default_bond_rule(adsorbate: str) -> str:
    """The rule used when a scenario names none (the same for every adsorbate)."""
    return "vapour-pressure"


def bond_energy(rule: str, *, adsorbate: str, temperature_k: float, cell_volume_angstrom3: float,
                coordination: int = COORDINATION) -> tuple[float, str]:
    """ε_b (K) by a calibration rule, and a sentence saying what was done."""
    z = coordination
    if rule == "vapour-pressure":
        p0 = saturated_vapour_pressure(adsorbate, temperature_k)
        x = p0 * cell_volume_angstrom3 * 1e-30 / (constants.k * temperature_k)
        if x >= 1.0:
            raise ValueError(f"vapour-pressure calibration needs p0·v/kT < 1; got {x:.3g} at {temperature_k} K "
                             "(the vapour is as dense as the lattice): choose another rule")
        eb = -2.0 * temperature_k / z * np.log(x)
        return float(eb), (f"vapour-pressure calibration: ε_b = −(2kT/z) ln(p0 v/kT) = {eb:.4g} K "
                           f"(bulk coexistence at p0, exact Henry limit)")
    if rule == "critical-temperature":
        tc = critical_temperature(adsorbate)
        eb = 4.0 * tc / z
        return float(eb), f"critical-temperature calibration: ε_b = 4 k T_c / z = {eb:.4g} K (T_c = {tc:.4g} K)"
    if rule == "binding-energy":
        if adsorbate != "helium-4":
            raise ValueError(f"the binding-energy rule is defined for helium-4 only, not {adsorbate}")
        eb = 2.0 * HELIUM4_BINDING_0K_K / z
        return float(eb), (f"binding-energy calibration: z ε_b / 2 = L0/R = {HELIUM4_BINDING_0K_K} K, "
                           f"ε_b = {eb:.4g} K")
    raise ValueError(f"unknown bond calibration {rule!r}; known: {', '.join(BOND_RULES)}")


def calibration_facts(*, adsorbate: str, temperature_k: float, bond_k: float, rule: str | None,
                      cell_volume_angstrom3: float, atom_volume_angstrom3: float | None = None,
                      coordination: int = COORDINATION) -> list[dict]:
    """Which bulk facts the lattice fluid keeps at this temperature and by how much it misses the others.

    One dict per fact: ``fact``, ``kept`` (True when the calibration holds it by construction), ``model``,
    ``reference`` (with ``unit`` and ``source``) and ``miss`` (model/reference − 1; None when kept exactly).
    The lattice's critical temperature is the Bragg–Williams kT_c = zε_b/4 of this temperature's bond (Hill 1960);
    its liquid density is one atom per cell, against the saturated liquid at T (CoolProp; helium-4: the T → 0
    liquid of Donnelly & Barenghi 1998).
    """
    from porefill.physics.substances.vapour_pressure import critical_temperature, liquid_number_density

    rule_used = rule or "set by the user"
    tc_model = coordination * bond_k / 4.0
    tc_real = critical_temperature(adsorbate)
    facts = [
        {"fact": "bulk coexistence at p0", "kept": True, "model": None, "reference": None, "unit": "Pa",
         "source": "the pressure scale p = p0 exp[(μ − μ_coex)/kT] puts it there for every rule", "miss": None},
        {"fact": "ideal-vapour Henry limit", "kept": rule_used == "vapour-pressure", "model": None,
         "reference": None, "unit": "", "miss": None,
         "source": "exact with the vapour-pressure rule (ε_b = −(2kT/z) ln(p0 v/kT)); otherwise off by the "
                   "lattice vapour's non-ideality"},
        {"fact": "critical temperature", "kept": rule_used == "critical-temperature", "model": float(tc_model),
         "reference": tc_real, "unit": "K", "source": "CoolProp critical constants",
         "miss": tc_model / tc_real - 1.0},
    ]
    # the lattice liquid: one atom per atom volume (the cell volume, except the slit's per-row sites)
    liquid = 1.0 / (atom_volume_angstrom3 if atom_volume_angstrom3 is not None else cell_volume_angstrom3)
    if adsorbate == "helium-4":
        ref, source = liquid_number_density(adsorbate)
    else:
        from porefill.physics.substances.materials import get_adsorbate
        from porefill.physics.substances.vapour_pressure import _coolprop
        name = get_adsorbate(adsorbate).coolprop_name
        t_triple = float(_coolprop().PropsSI("Ttriple", name))
        t = max(temperature_k, t_triple)
        ref = float(_coolprop().PropsSI("Dmolar", "T", t, "Q", 0, name)) * constants.Avogadro * 1e-30
        source = f"CoolProp saturated liquid at {t:.2f} K" + (" (triple point)" if t > temperature_k else "")
    facts.append({"fact": "liquid density (capacity)", "kept": bool(abs(liquid / ref - 1.0) < 1e-3), "model": liquid,
                  "reference": ref, "unit": "Å⁻³", "source": source, "miss": liquid / ref - 1.0})
    return facts
