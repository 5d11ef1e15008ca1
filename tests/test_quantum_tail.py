"""The Boltzmann sum above the computed states, summed semiclassically (physics/sites/quantum.py).

Sources: Weyl's law for the number of states below E in two dimensions, N(E) = (m/2πħ²) ∫(E − V)₊ dA
(H. Weyl, Math. Ann. 71, 441 (1912); value from memory), whose Laplace transform gives the tail
Σ_{E_n > E_c} exp(−E_n/kT) ≈ (1/λ²) ∫ exp(−max(E_c, V)/kT) dA; with the cut below the whole potential it is the
classical partition function (1/λ²) ∫ exp(−V/kT) dA (Landau & Lifshitz, Statistical Physics, §31; value from
memory). The checks: that limit, and that the whole sum no longer depends on how many states were computed.
"""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from porefill.physics.lattice_gas.stages import geometry_stage
from porefill.physics.scenario import Scenario
from porefill.physics.sites.quantum import classical_boltzmann_area, solve_states, thermal_wavelength_angstrom


def _states(gas: str, temperature_k: float, cap: int):
    g = geometry_stage(Scenario(adsorbate=gas, temperature_k=temperature_k, shape="hexagon", size_angstrom=12.0,
                                wall_angstrom=8.0))
    return g, solve_states(g.pore, g.pair, g.adsorbate.hbar2_over_mk, temperature_k=temperature_k, max_states=cap)


@pytest.mark.parametrize("gas, temperature_k, few, many, spread", [
    ("hydrogen", 20.0, 60, 240, 0.005),     # 60 states leave 1.2 % of the sum to the tail, 240 leave 3e-5
    ("neon", 25.0, 120, 240, 0.10),         # neon's states stop at a few kT: 22 % and 10 % left to the tail
])
def test_the_whole_boltzmann_sum_does_not_depend_on_the_state_count(gas, temperature_k, few, many, spread):
    # issue's criterion: the Boltzmann sum converged to 1e-3, whatever cap the states hit
    _, a = _states(gas, temperature_k, few)
    _, b = _states(gas, temperature_k, many)
    assert a.energies_k.size == few and b.energies_k.size == many
    za, zb = a.boltzmann_sum(temperature_k), b.boltzmann_sum(temperature_k)
    assert abs(za / zb - 1.0) > spread                 # the computed states alone disagree ...
    whole_a = za + a.tail_sum(temperature_k)
    whole_b = zb + b.tail_sum(temperature_k)
    assert whole_a == pytest.approx(whole_b, rel=2e-3)   # ... the sum with its tail does not
    assert b.tail_fraction(temperature_k) == pytest.approx(1.0 - zb / whole_b, rel=1e-12)


def test_with_the_cut_below_the_potential_the_tail_is_the_classical_sum():
    g, st = _states("hydrogen", 20.0, 30)
    t = 20.0
    vmin = float(st.potential_k.min())
    low = dataclasses.replace(st, energies_k=np.array([vmin - 200.0, vmin - 199.0]))   # cut at vmin − 198.5 K
    lam = thermal_wavelength_angstrom(st.hbar2_over_mk, t)
    classical = classical_boltzmann_area(g.pore, g.pair, t) / lam**2
    assert low.tail_sum(t) == pytest.approx(classical, rel=2e-2)      # grid sum against the refined quadrature


def test_each_site_takes_the_tail_of_its_own_cell():
    # helium at 1.5 K just past a row change (24 Å side): each site's share of the tail is the floored integral
    # over its own cell, so (a) the shares add up to the whole tail (the cells tile the pore; two quadratures of
    # one integral, Weyl's law above), and (b) a site no state reaches never lies below its classical cell value
    # (max(E_c, V) ≥ V under the integral). Taken over the grid points nearest each site, a ring-1 site once
    # took a piece of the face's well and sat 4.5 K below its classical value, adding a spurious step.
    from porefill.physics.sites.quantum import _site_free_energies, cached_states

    t = 1.5
    geo = geometry_stage(Scenario(shape="hexagon", size_angstrom=24.0, wall_angstrom=8.0, temperature_k=t))
    states = cached_states(geo, t)
    f, reached, f_classical, floored = _site_free_energies(states, geo, t)
    lam = thermal_wavelength_angstrom(states.hbar2_over_mk, t)
    cut = states.tail_cut_k
    integral, _ = geo.cells.floored_integrals(t, cut)
    shares = integral.sum() / lam**2 * np.exp(-cut / t)
    assert shares == pytest.approx(states.tail_sum(t), rel=2e-2)
    unreached = ~reached
    assert np.all(f[unreached] >= f_classical[unreached] - 1e-9)
    assert np.any(floored & unreached)             # the face orbit that enters here takes its tail
