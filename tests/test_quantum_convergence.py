"""porefill's one-atom quantum states against an independent solver (tests/independent_quantum.py): a square
grid, the five-point Laplacian, parity sectors and Richardson extrapolation in h², first checked on problems
with known answers, then compared with `solve_states` as the model calls it, at four helium pores.

Issue 19, point 1 and "Tests and figures": the ground state to 0.005 K and the quantum Henry constant (the
one-atom free energy F = −kT ln Σ_n e^{−E_n/kT}) to 1e-3 at 0.5–4 K, at the issue's two geometries and two
that were not used to tune porefill.
"""
from __future__ import annotations

import functools

import numpy as np
import pytest
from scipy.special import jn_zeros

from independent_quantum import (SECTORS, all_levels, free_energy_k, grid_levels, hbar2_over_mk_helium4,
                                 quadrant_grid, reference_solution, richardson_h2, sector_hamiltonian, window_for)
from porefill.physics.pore.wall_potential import wall_potential
from porefill.physics.scenario import Scenario
from porefill.physics.sites.quantum import solve_states
from porefill.physics.substances.materials import get_adsorbate

HB = hbar2_over_mk_helium4()
TEMPERATURES_K = (0.5, 1.0, 1.5, 2.0, 4.0)      # issue 19, point 1: "at 0.5–4 K"
E0_TOL_K = 0.005                                # issue 19, "Tests and figures": E0 to 0.005 K
HENRY_RTOL = 1e-3                               # issue 19, point 1: Henry constant to 1e-3, i.e. F to 1e-3 kT

# Bessel zeros j_{n,k}, Abramowitz & Stegun Table 9.5 (values from memory, checked against scipy below)
J01, J11, J21, J02 = 2.4048255577, 3.8317059702, 5.1356223018, 5.5200781103

# (side Å, wall Å): the two geometries (15/8 at 1.5 K, 21.5/6 at 2.0 K) and two of this test's own
# choosing, not used to tune porefill (18/8, 12.5/10); the largest reference is marked slow
GEOMETRIES = [
    pytest.param(15.0, 8.0, id="15A-8A"),
    pytest.param(21.5, 6.0, id="21.5A-6A", marks=pytest.mark.slow),
    pytest.param(18.0, 8.0, id="18A-8A", marks=pytest.mark.slow),
    pytest.param(12.5, 10.0, id="12.5A-10A"),
]
# the reference's grids (Å), each solved for every level below E0 + window_for(4 K) = 74.5 K; F(T) and E0
# extrapolated through all four (h², h⁴, h⁶ removed). Common practice, no source; chosen by a convergence
# study at 15 Å / 8 Å: through the three coarser grids alone F(0.5 K) is off by 9e-4 K (the square grid's
# anisotropic h² error splits the six corner states, comparable to their tunnelling splitting, until h is
# small), through all four the estimate is 2.3e-6 K for E0 and every F
SPACINGS = (0.2, 0.2 / np.sqrt(2.0), 0.1, 0.1 / np.sqrt(2.0))
WINDOWS_K = (window_for(4.0),) * 4


def _scenario(side: float, wall: float) -> Scenario:
    return Scenario(shape="hexagon", size_angstrom=side, wall_angstrom=wall, adsorbate="helium-4",
                    temperature_k=1.5)


def _potential(side: float, wall: float):
    sc = _scenario(side, wall)
    pore, pair = sc.pore(), sc.pair()
    return lambda x, y: wall_potential(x, y, pore=pore, pair=pair)


# --- the constant ------------------------------------------------------------------------------------
def test_hbar2_over_mk_against_porefill():
    # ħ²/(m k_B) = 12.1193 K·Å² for ⁴He (CODATA via scipy.constants); porefill's mass 4.002602 u (helium's
    # standard atomic weight) differs from the ⁴He atom's 4.0026033 u by 3e-7 relative
    porefill_value = get_adsorbate("helium-4").hbar2_over_mk
    assert HB == pytest.approx(12.1193, abs=1e-4)
    assert HB == pytest.approx(porefill_value, rel=1e-6)


# --- the solver on problems with known answers -----------------------------------------------------------
def _full_grid_levels(potential, half_width, h, cut_k):
    """Dense diagonalisation of the whole (unsymmetrised) five-point grid, built here independently."""
    n = int(np.ceil(half_width / h)) + 1
    axis = np.arange(-n, n + 1) * h
    x, y = np.meshgrid(axis, axis, indexing="ij")
    v = potential(x, y)
    keep = v < cut_k
    index = np.full(x.shape, -1)
    index[keep] = np.arange(keep.sum())
    t = HB / (2.0 * h * h)
    h_dense = np.diag(v[keep] + 4.0 * t)
    for a, b in ((index[:-1, :], index[1:, :]), (index[:, :-1], index[:, 1:])):
        both = (a >= 0) & (b >= 0)
        h_dense[a[both], b[both]] = h_dense[b[both], a[both]] = -t
    return np.linalg.eigvalsh(h_dense)


def test_parity_sectors_reproduce_the_whole_grid():
    # an anharmonic, anisotropic well (even in x and y): the four sectors' levels together are the whole
    # grid's, to round-off (exact identity; 1e-9 K for ARPACK's tolerance)
    potential = lambda x, y: 3.0 * x * x + 5.0 * y * y + 0.3 * x**4 + 0.2 * x * x * y * y
    h, cut, window = 0.25, 60.0, 30.0
    sectors = all_levels(grid_levels(potential, 6.0, h, HB, cut_k=cut, window_k=window))
    whole = _full_grid_levels(potential, 6.0, h, cut)
    whole = whole[whole < whole[0] + window]
    assert sectors.size == whole.size
    np.testing.assert_allclose(sectors, whole, rtol=0, atol=1e-9)


def test_sector_hamiltonians_are_symmetric():
    grid = quadrant_grid(lambda x, y: 2.0 * (x * x + y * y), 4.0, 0.5, 30.0)
    for sector in SECTORS:
        m = sector_hamiltonian(grid, sector, HB)
        assert abs(m - m.T).max() == 0.0


def test_square_box_discrete_and_continuum_levels():
    # hard box |x|, |y| < a with walls on grid lines x = ±M h: the five-point levels are exactly
    # (ħ²/2m)(4/h²)[sin²(p π h/4a) + sin²(q π h/4a)] (the discrete Laplacian's eigenvalues; LeVeque, Finite
    # Difference Methods for ODEs and PDEs, SIAM 2007, §3.4, value from memory), and the continuum's
    # (ħ²/2m)(π/2a)²(p² + q²) (textbook particle in a box)
    a = 4.0
    box = lambda x, y: np.where(np.maximum(np.abs(x), np.abs(y)) < a - 1e-9, 0.0, np.inf)
    spacings = np.array([0.4, 0.2, 0.1])
    pq = np.array([(p, q) for p in range(1, 6) for q in range(1, 6)])
    continuum = np.sort(HB / 2 * (np.pi / (2 * a)) ** 2 * (pq ** 2).sum(axis=1))[:10]
    found = []
    for h in spacings:
        levels = all_levels(grid_levels(box, a, h, HB, cut_k=1.0, window_k=continuum[9] - continuum[0] + 0.1))[:10]
        exact = np.sort(HB / 2 * 4 / h**2 * (np.sin(pq * np.pi * h / (4 * a)) ** 2).sum(axis=1))[:10]
        np.testing.assert_allclose(levels, exact, rtol=1e-10)          # eigensolver tolerance
        found.append(levels)
    limit, _ = richardson_h2(np.array(found), spacings)
    # three-grid Richardson leaves O(h⁶): (π h / 4a)⁶ ~ 1e-6 of the highest level at h = 0.4
    np.testing.assert_allclose(limit, continuum, rtol=2e-6)


def test_isotropic_harmonic_oscillator():
    # E = ħω (n_x + n_y + 1), degeneracy n + 1 (textbook 2-D oscillator); V = ½ (ħω)² r² / (ħ²/m), so
    # Z = Σ (n + 1) x^{n+1} = x / (1 − x)², x = exp(−ħω/kT)
    hw = 10.0
    potential = lambda x, y: 0.5 * hw**2 / HB * (x * x + y * y)
    spacings = np.array([0.4, 0.2, 0.1])
    # cut 400 K (ψ of the levels below 55 K is ~e^-40 there: common practice, no source)
    per_grid = [grid_levels(potential, 11.0, h, HB, cut_k=400.0, window_k=window_for(2.0)) for h in spacings]
    levels = np.array([all_levels(g)[:15] for g in per_grid])
    exact = hw * np.repeat(np.arange(1, 6), np.arange(1, 6))
    assert np.max(np.abs(levels[-1] - exact)) > 0.05         # h = 0.1 alone is off by ~0.1 K: second order
    limit, err = richardson_h2(levels, spacings)
    np.testing.assert_allclose(limit, exact, rtol=0, atol=5e-4)     # 1.2e-4 K measured
    assert np.max(err) < 5e-3
    # the degenerate pair n = 1 is odd in x or odd in y: one level in each of those sectors
    finest = per_grid[-1]
    assert finest[(1, 1)][0] == pytest.approx(hw, abs=0.2)
    assert finest[(-1, 1)][0] == pytest.approx(finest[(1, -1)][0], abs=1e-9)
    assert finest[(-1, -1)][0] == pytest.approx(3 * hw, abs=0.2)     # xy: the n = 2 state odd in both
    temps = np.array([1.0, 2.0])                           # the window holds these to 1e-7
    x = np.exp(-hw / temps)
    f_exact = -temps * np.log(x / (1 - x) ** 2)
    f_limit, _ = richardson_h2(np.array([free_energy_k(all_levels(g), temps) for g in per_grid]), spacings)
    np.testing.assert_allclose(f_limit, f_exact, rtol=0, atol=2e-5)


def test_circular_well_bessel_zeros():
    # E = (ħ²/2m) j²_{n,k} / R² (A&S Table 9.5 for the zeros). The grid's hard wall is a staircase, so the
    # error falls only at first order: the test asks for 1 % at h = R/100 and the symmetry of each level
    np.testing.assert_allclose(jn_zeros(0, 2), [J01, J02], rtol=1e-10)
    np.testing.assert_allclose([jn_zeros(1, 1)[0], jn_zeros(2, 1)[0]], [J11, J21], rtol=1e-10)
    radius = 5.0
    disc = lambda x, y: np.where(np.hypot(x, y) < radius, 0.0, np.inf)
    unit = HB / 2 / radius**2
    errors = []
    for h in (0.1, 0.05):
        per = grid_levels(disc, radius, h, HB, cut_k=1.0, window_k=unit * (J02**2 - J01**2) + 0.5)
        e = all_levels(per)
        exact = unit * np.array([J01**2, J11**2, J11**2, J21**2, J21**2, J02**2])
        errors.append(np.max(np.abs(e[:6] - exact) / exact))
        # j01 and j02 even in both; j11 a pair (odd in x, odd in y); j21: cos 2θ even in both, sin 2θ odd
        # in both
        assert per[(1, 1)][0] == pytest.approx(unit * J01**2, rel=0.02)
        assert per[(-1, 1)][0] == pytest.approx(per[(1, -1)][0], rel=1e-9)
        assert per[(-1, 1)][0] == pytest.approx(unit * J11**2, rel=0.02)
        assert per[(-1, -1)][0] == pytest.approx(unit * J21**2, rel=0.02)
        assert per[(1, 1)][1] == pytest.approx(unit * J21**2, rel=0.02)
        assert per[(1, 1)][2] == pytest.approx(unit * J02**2, rel=0.02)
    assert errors[1] < errors[0] and errors[1] < 0.01


# --- the pore: inputs and the reference's own convergence -----------------------------------------------
def test_wall_potential_has_both_mirrors():
    # the sectors need V(−x, y) = V(x, y) = V(x, −y); the hexagon has a corner on +x (porefill geometry)
    potential = _potential(15.0, 8.0)
    rng = np.random.default_rng(19)
    x, y = rng.uniform(-13.0, 13.0, (2, 2000))
    v = potential(x, y)
    inside = v < 1e4                       # where the solver uses it (the cut below); 6e-11 K measured
    np.testing.assert_allclose(potential(-x, y)[inside], v[inside], rtol=1e-10, atol=1e-8)
    np.testing.assert_allclose(potential(x, -y)[inside], v[inside], rtol=1e-10, atol=1e-8)


def test_wall_cut_does_not_matter():
    # the region V < cut: 10 000 K against 20 000 K moves the levels below E0 + 30 K by 2e-8 K (measured at
    # h = 0.2 Å; 2000 K moved E0 by 2e-4 K, 1000 K by 5e-3 K); asserted at 1e-5 K
    potential = _potential(15.0, 8.0)
    a, b = (all_levels(grid_levels(potential, 15.0, 0.2, HB, cut_k=cut, window_k=30.0)) for cut in (1e4, 2e4))
    assert a.size == b.size
    np.testing.assert_allclose(a, b, rtol=0, atol=1e-5)


@pytest.fixture(scope="module")
def reference():
    """The independent answer per geometry, solved once per module."""
    @functools.lru_cache(maxsize=None)
    def solve(side: float, wall: float):
        return reference_solution(_potential(side, wall), side, HB, TEMPERATURES_K, spacings=SPACINGS,
                                  windows_k=WINDOWS_K)
    return solve


@pytest.fixture(scope="module")
def porefill_states():
    """porefill's states per geometry and temperature, solved as the model solves them: `cached_states`
    calls `solve_states` with its defaults at the temperature asked (a fresh geometry solves afresh)."""
    @functools.lru_cache(maxsize=None)
    def solve(side: float, wall: float, temperature_k: float):
        sc = _scenario(side, wall)
        return solve_states(sc.pore(), sc.pair(), get_adsorbate("helium-4").hbar2_over_mk,
                            temperature_k=temperature_k)
    return solve


@pytest.mark.parametrize("side, wall", GEOMETRIES)
def test_reference_is_converged(reference, side, wall):
    # the reference must be an order finer than the tolerances it checks: E0 to 5e-4 K (a tenth of 0.005 K),
    # F to 1e-4 kT (a tenth of 1e-3), the Boltzmann sum complete to 1e-6 (common practice, no source)
    ref = reference(side, wall)
    assert ref.ground_state_error_k < 5e-4
    assert np.all(ref.free_energy_error_k < 1e-4 * ref.temperatures_k)
    assert np.all(ref.tail_fraction < 1e-6)


# --- porefill against the reference ----------------------------------------------------------------------
@pytest.mark.parametrize("side, wall", GEOMETRIES)
def test_porefill_ground_state(reference, porefill_states, side, wall):
    # issue 19: E0 to 0.005 K of the independent solve (porefill's grid does not depend on T for E0; the
    # lowest temperature of the range is solved)
    ref = reference(side, wall)
    states = porefill_states(side, wall, TEMPERATURES_K[0])
    assert states.ground_state_k == pytest.approx(ref.ground_state_k, abs=E0_TOL_K)


@pytest.mark.parametrize("temperature_k", TEMPERATURES_K)
@pytest.mark.parametrize("side, wall", GEOMETRIES)
def test_porefill_henry_constant(reference, porefill_states, side, wall, temperature_k):
    # issue 19: the quantum Henry constant ∝ λ⁻¹ Σ_n e^{−E_n/kT} to 1e-3 of the independent solve, i.e.
    # |F_porefill − F_reference| < 1e-3 kT (λ is the same on both sides)
    ref = reference(side, wall)
    i = TEMPERATURES_K.index(temperature_k)
    states = porefill_states(side, wall, temperature_k)
    f_porefill = -temperature_k * np.log(states.boltzmann_sum(temperature_k))
    log_ratio = (ref.free_energy_k[i] - f_porefill) / temperature_k      # ln(K_porefill / K_reference)
    assert abs(log_ratio) < HENRY_RTOL
