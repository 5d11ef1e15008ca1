"""Mean-field lattice-gas solver: exact limits, bulk Bragg–Williams facts, the sum rule dΩ/dμ = −N."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import sparse
from scipy.optimize import brentq
from scipy.special import expit

from porefill.physics.lattice_gas.meanfield import MeanFieldProblem, grand_potential, solve_branch, solve_state

Z = 8


def periodic_triangular(nx: int, ny: int) -> sparse.csr_matrix:
    """Torus of nx × ny sites, 6 in-plane neighbours, axial pair on the diagonal (z = 8)."""
    idx = lambda i, j: (i % nx) * ny + (j % ny)
    rows, cols = [], []
    for i in range(nx):
        for j in range(ny):
            for di, dj in ((1, 0), (-1, 0), (0, 1), (0, -1), (1, -1), (-1, 1)):
                rows.append(idx(i, j))
                cols.append(idx(i + di, j + dj))
    n = nx * ny
    a = sparse.csr_matrix((np.ones(len(rows)), (rows, cols)), shape=(n, n))
    return (a + 2.0 * sparse.identity(n)).tocsr()


class TestLimits:
    def test_no_interaction_is_langmuir(self):
        # ε_b = 0: every site follows Langmuir's isotherm n = 1/(1 + exp[(f − μ)/kT]) (Langmuir 1918)
        rng = np.random.default_rng(0)
        f = rng.uniform(-50, 0, 40)
        p = MeanFieldProblem(f, periodic_triangular(5, 8), 0.0, 2.0)
        mu = np.linspace(-60, 5, 50)
        b = solve_branch(mu, p, np.zeros(40))
        np.testing.assert_allclose(b.occupancy, expit((mu[:, None] - f) / 2.0), rtol=1e-12, atol=1e-14)
        assert b.converged.all()

    @pytest.mark.parametrize("t_over_tc", [0.5, 0.8])
    def test_bulk_coexistence_at_minus_z_eb_over_2(self, t_over_tc):
        # Bragg–Williams (Hill 1960): μ_coex = −z ε_b / 2, and ρ_gas + ρ_liquid = 1 (particle–hole symmetry)
        eb = 3.0
        t = t_over_tc * Z * eb / 4
        a = periodic_triangular(4, 4)
        p = MeanFieldProblem(np.zeros(16), a, eb, t)
        gas = lambda m: solve_state(np.full(16, -20.0), m, p)[0]
        liquid = lambda m: solve_state(np.full(16, 20.0), m, p)[0]
        d_omega = lambda m: grand_potential(gas(m), m, p) - grand_potential(liquid(m), m, p)
        mu_coex = brentq(d_omega, -Z * eb / 2 - 0.05 * eb, -Z * eb / 2 + 0.05 * eb, xtol=1e-12)
        assert mu_coex == pytest.approx(-Z * eb / 2, abs=1e-8)
        rho_g, rho_l = expit(gas(mu_coex)).mean(), expit(liquid(mu_coex)).mean()
        assert rho_l - rho_g > 0.2
        assert rho_g + rho_l == pytest.approx(1.0, abs=1e-8)

    def test_critical_temperature(self):
        # kT_c = z ε_b / 4 (Bragg–Williams; Hill 1960): a loop just below, none just above
        eb = 2.0
        tc = Z * eb / 4
        a = periodic_triangular(3, 3)
        mu = np.linspace(-Z * eb / 2 - 2, -Z * eb / 2 + 2, 201)
        widths = []
        for t in (0.97 * tc, 1.03 * tc):
            p = MeanFieldProblem(np.zeros(9), a, eb, t)
            up = solve_branch(mu, p, np.full(9, -10.0)).total
            down = solve_branch(mu[::-1], p, np.full(9, 10.0)).total[::-1]
            widths.append(np.max(down - up))
        assert widths[0] > 1.0 and widths[1] < 1e-6


class TestSumRule:
    def test_d_omega_d_mu_is_minus_n(self):
        # dΩ/dμ = −N at a stationary state (∂Ω/∂n = 0); central difference with δ = 1e-4 K, rtol 1e-6
        rng = np.random.default_rng(2)
        f = rng.uniform(-30, -5, 25)
        p = MeanFieldProblem(f, periodic_triangular(5, 5), 1.5, 1.0)
        mu = np.linspace(-35, -8, 60)
        b = solve_branch(mu, p, np.full(25, -30.0))
        for k in range(2, 58, 5):
            x = b.logits[k]
            h = 1e-4
            om_p = grand_potential(solve_state(x, mu[k] + h, p)[0], mu[k] + h, p)
            om_m = grand_potential(solve_state(x, mu[k] - h, p)[0], mu[k] - h, p)
            assert (om_p - om_m) / (2 * h) == pytest.approx(-b.total[k], rel=1e-6, abs=1e-8)


class TestRobustness:
    def test_low_temperature_converges_tightly(self):
        # stiff regime: T = 0.05 ε_b; every state converged to |∂Ω/∂n| < 1e-10 K
        rng = np.random.default_rng(5)
        f = rng.uniform(-20, 0, 36)
        p = MeanFieldProblem(f, periodic_triangular(6, 6), 4.0, 0.2)
        mu = np.linspace(-60, 0, 300)
        b = solve_branch(mu, p, np.full(36, -100.0))
        assert b.converged.all()
        assert np.all(np.diff(b.total) >= -1e-9)        # adsorption branch never loses atoms

    def test_weighted_orbits_match_full_problem(self):
        # a problem reduced to orbits (weights, W·B symmetric) gives the full problem's state
        a = periodic_triangular(4, 4)
        full = MeanFieldProblem(np.full(16, -5.0), a, 1.0, 1.0)
        reduced = MeanFieldProblem(np.array([-5.0]), np.array([[8.0]]), 1.0, 1.0, np.array([16.0]))
        for m in (-12.0, -9.0, -4.0):
            xf = solve_state(np.zeros(16), m, full)[0]
            xr = solve_state(np.zeros(1), m, reduced)[0]
            np.testing.assert_allclose(xf, xr[0], atol=1e-9)
            assert grand_potential(xf, m, full) == pytest.approx(grand_potential(xr, m, reduced), rel=1e-12)

    def test_rejects_infinite_free_energies(self):
        with pytest.raises(ValueError, match="finite"):
            MeanFieldProblem(np.array([0.0, np.inf]), sparse.identity(2, format="csr"), 1.0, 1.0)


@pytest.mark.parametrize("with_spread", [False, True])
@pytest.mark.parametrize("seed", range(6))
def test_compiled_descent_matches_the_python_reference(seed, with_spread, monkeypatch):
    # the same damped Newton written twice (physics/lattice_gas/compiled.py): the same stable state, to the
    # solver's own tolerance (self-consistent solvers ~1e-6 in STYLE.md; here far tighter, 1e-9 in n)
    from porefill.physics.lattice_gas import compiled
    from porefill.physics.lattice_gas.meanfield import MeanFieldProblem, SiteSpread, solve_state

    from porefill.physics.pore import compiled as kernels

    monkeypatch.setattr(kernels, "_enabled", True)
    assert compiled.available()                 # numba is a declared dependency (pyproject.toml)
    rng = np.random.default_rng(seed)
    m = int(rng.integers(3, 40))
    a = (rng.random((m, m)) < 0.3).astype(float)
    a = np.triu(a, 1)
    a = a + a.T
    spread = None
    if with_spread:     # a Gaussian spread of site free energies on some sites (the wall spread's form)
        nodes, weights = np.polynomial.hermite_e.hermegauss(12)
        spread = SiteSpread(shift_k=rng.uniform(0.5, 4.0, (m, 1)) * nodes - rng.uniform(0.0, 3.0, (m, 1)),
                            fraction=weights / weights.sum(), orbits=rng.random(m) < 0.4)
    problem = MeanFieldProblem(rng.normal(-20.0, 8.0, m), a, bond_k=float(rng.uniform(1.0, 6.0)), temperature_k=1.5,
                               spread=spread)
    x0 = rng.normal(0.0, 3.0, m)
    mu = float(rng.uniform(-25.0, -5.0))
    fast = solve_state(x0, mu, problem)
    monkeypatch.setenv("POREFILL_NUMBA", "0")
    reference = solve_state(x0, mu, problem)
    assert fast[1] == reference[1]
    np.testing.assert_allclose(problem.occupancy(fast[0]), problem.occupancy(reference[0]), rtol=0, atol=1e-9)
    assert fast[3] == pytest.approx(reference[3], abs=1e-9)
    probe = rng.normal(size=m)
    np.testing.assert_allclose(fast[2](probe), reference[2](probe), rtol=1e-9, atol=1e-12)


def _large_problem():
    from porefill.physics.lattice_gas.stages import thermal_stage
    from porefill.physics.scenario import Scenario

    sc = Scenario(shape="hexagon", size_angstrom=100.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical")
    return thermal_stage(sc).problem


def test_banded_newton_solve_equals_the_sparse_lu():
    # the Newton matrix kT(1+λ)I − ε_b A D of a 100 Å hexagon (196 orbits) in reverse Cuthill–McKee order is a
    # band; LAPACK's banded LU (dgbtrf, partial pivoting) must solve it as SciPy's general sparse LU does
    # (both exact factorisations: agreement to rounding; common practice, no source)
    from scipy.sparse.linalg import splu

    from porefill.physics.lattice_gas import meanfield as mf

    p = _large_problem()
    assert p.weights.size > mf._DENSE_MAX_SITES and mf._band_layout(p) is not None
    perm, kl, ku, _ = mf._band_layout(p)
    # a narrow band, not the whole matrix: 14 measured here for 196 orbits (common practice, no source)
    assert kl <= 20 and ku <= 20
    rng = np.random.default_rng(7)
    pattern, columns, diagonal = mf._jacobian_pattern(p)
    for damping in (0.0, 0.5, 30.0):
        d = rng.uniform(0.0, 0.25, p.weights.size)
        r = rng.standard_normal(p.weights.size)
        j = pattern.copy()
        j.data = -p.bond_k * pattern.data * d[columns]
        j.data[diagonal] += p.temperature_k * (1.0 + damping)
        want = splu(j.tocsc()).solve(r)
        got = mf._factor(p, None, d, damping)(r)
        np.testing.assert_allclose(got, want, rtol=1e-10, atol=1e-12 * np.max(np.abs(want)))


def test_large_branches_do_not_depend_on_the_linear_solver(monkeypatch):
    # the same branches whether the Newton steps use the banded LU or the general sparse LU (to 1e-10)
    from porefill.physics.lattice_gas import meanfield as mf

    p = _large_problem()
    mu = np.linspace(float(np.min(p.site_free_energy)) - 30.0, -12.0, 25)
    start = (mu[0] - p.site_free_energy) / p.temperature_k
    banded = solve_branch(mu, p, start)
    monkeypatch.setattr(mf, "_band_layout", lambda problem: None)
    general = solve_branch(mu, p, start)
    assert banded.converged.all() and general.converged.all()
    np.testing.assert_allclose(banded.occupancy, general.occupancy, rtol=0, atol=1e-10)
    np.testing.assert_allclose(banded.grand_potential, general.grand_potential, rtol=1e-10)
