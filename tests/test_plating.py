"""Pre-plated walls (porefill.physics.pore.plating): each closed form against direct quadrature of the same
pair sum, the layer density against a published cross-section, and what plating does to a pore's steps."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from porefill.physics.pore.plating import (cylinder_shell, make_plating, plating_potential, sheet_10_4,
                                           strip_potential)
from porefill.physics.pore.wall_potential import deepest_minimum
from porefill.physics.scenario import Scenario

KW = dict(n_s=0.07, epsilon_k=35.0, sigma_angstrom=3.0)


def _line_kernel(s, eps=35.0, sig=3.0):
    # the LJ pair 4ε[(σ/r)^12 − (σ/r)^6] integrated along z at in-plane distance s (docs/REFERENCES.md §1)
    return 4 * eps * ((63 * math.pi / 256) * sig**12 * s**-11 - (3 * math.pi / 8) * sig**6 * s**-5)


@pytest.mark.parametrize("z", [2.7, 3.0, 3.37, 4.5, 7.0])
def test_flat_sheet_is_the_10_4_potential(z):
    # the plane integral n_s ∫ 2πρ u(√(z²+ρ²)) dρ (Steele 1973; docs/REFERENCES.md §1)
    u = lambda r: 4 * 35.0 * ((3.0 / r) ** 12 - (3.0 / r) ** 6)                       # noqa: E731
    direct = 0.07 * integrate.quad(lambda rho: 2 * math.pi * rho * u(math.hypot(z, rho)), 0, np.inf,
                                   epsabs=1e-12, epsrel=1e-12)[0]
    assert float(sheet_10_4(z, **KW)) == pytest.approx(direct, rel=1e-9)


@pytest.mark.parametrize("r", [0.0, 2.0, 4.5, 6.3])
def test_cylindrical_shell_closed_form_against_quadrature(r):
    # n_s R ∫_0^{2π} K(s(θ)) dθ, s² = r² + R² − 2rR cos θ (Tjatjopoulos, Feke & Mann 1988 closed form)
    big_r = 9.0
    direct = 0.07 * big_r * integrate.quad(
        lambda t: _line_kernel(math.sqrt(r * r + big_r * big_r - 2 * r * big_r * math.cos(t))), 0, 2 * math.pi,
        epsabs=1e-12, epsrel=1e-12, limit=200)[0]
    assert float(cylinder_shell(r, big_r, **KW)) == pytest.approx(direct, rel=1e-9)


@pytest.mark.parametrize("point", [(0.0, 3.0), (1.5, 4.2), (-2.0, 6.0), (7.5, 2.0)])
def test_strip_closed_form_against_quadrature(point):
    # a face of the hexagonal shell: the kernel integrated along the segment (plane geometry)
    p1, p2 = (-4.0, 0.0), (4.0, 0.0)
    x, y = point
    direct = 0.07 * integrate.quad(lambda u: _line_kernel(math.hypot(x - u, y)), -4.0, 4.0,
                                   epsabs=1e-13, epsrel=1e-12, limit=200)[0]
    assert float(strip_potential(x, y, p1, p2, **KW)) == pytest.approx(direct, rel=1e-9)


def test_hexagonal_shell_is_its_six_faces_offset_inward():
    # the shell of a layer at distance z is the hexagon of apothem a − z; its potential at a point is the sum of
    # the six faces' line integrals, here by quadrature (plane geometry)
    from porefill.physics.pore.geometry import HexagonPore
    from porefill.physics.pore.plating import Plating

    z = 2.9
    layer = Plating("argon", 1, (z,), 0.07, 35.0, 3.0)
    hexagon = HexagonPore(12.0)
    verts = np.asarray(hexagon.vertices, float) * (hexagon.apothem_angstrom - z) / hexagon.apothem_angstrom
    x, y = 1.3, -2.1
    direct = 0.0
    for k in range(6):
        (ax, ay), (bx, by) = verts[k], verts[(k + 1) % 6]
        length = math.hypot(bx - ax, by - ay)
        direct += 0.07 * integrate.quad(lambda t: _line_kernel(math.hypot(x - ax - t * (bx - ax),
                                                                          y - ay - t * (by - ay))) * length,
                                        0.0, 1.0, epsabs=1e-13, epsrel=1e-12, limit=200)[0]
    got = float(plating_potential(np.array([x]), np.array([y]), hexagon, layer)[0])
    assert got == pytest.approx(direct, rel=1e-9)


def test_argon_layer_density_is_its_published_cross_section():
    # a (111) plane of the triple-point liquid = Emmett & Brunauer's 1.091 (M/ρN)^(2/3): for argon 14.2 Å² per
    # atom, against the IUPAC 2015 cross-sectional area 0.142 nm² (Thommes et al., Pure Appl. Chem. 87, 1051;
    # value from memory)
    layer = make_plating("argon", 1, "helium-4")
    assert 1.0 / layer.areal_density_per_a2 == pytest.approx(14.2, rel=0.02)
    # the first layer at argon's own 9-3 minimum on silica, (2/5)^(1/6) σ (Steele 1973)
    assert layer.distances_angstrom[0] == pytest.approx((0.4) ** (1 / 6) * 3.335, rel=1e-12)
    two = make_plating("argon", 2, "helium-4")
    # the next layer one (111) spacing further in: from the triple-point liquid 3.30 Å, within 10 % of solid
    # argon's 3.07 Å (fcc, nearest neighbours 3.76 Å: value from memory)
    assert two.distances_angstrom[1] - two.distances_angstrom[0] == pytest.approx(3.07, rel=0.10)


def test_behind_the_plating_is_closed_and_bad_platings_are_refused():
    sc = Scenario(shape="hexagon", size_angstrom=15.0, wall_angstrom=8.0, plating="argon")
    layer = sc.pair().plating
    apothem = 15.0 * math.sqrt(3) / 2
    y = np.array([apothem - 0.5 * layer.distances_angstrom[0], 0.0])
    v = plating_potential(np.zeros(2), y, sc.pore(), layer)
    assert np.isinf(v[0]) and np.isfinite(v[1])
    with pytest.raises(ValueError, match="plating gas must be one of"):
        Scenario(plating="xenon")
    with pytest.raises(ValueError, match="plating layers must be a whole number"):
        Scenario(plating="argon", plating_layers=7)
    with pytest.raises(ValueError, match="plating_layers needs a plating gas"):
        Scenario(plating_layers=2)


def test_plating_moves_the_wells_inward_and_hydrogen_binds_helium_more_weakly():
    # the well moves in by the layer's distance (its atoms sit where helium sat); a hydrogen layer binds helium
    # more weakly than bare silica in every shape (its ε_HeH2 = 18.7 K and 0.074 Å⁻² against silica's oxygens)
    for shape, wall in (("hexagon", 8.0), ("cylinder", None), ("slit", 8.0)):
        bare = Scenario(shape=shape, size_angstrom=14.0, wall_angstrom=wall)
        h2 = bare.replace(plating="hydrogen")
        mb = deepest_minimum(pore=bare.pore(), pair=bare.pair())
        mh = deepest_minimum(pore=h2.pore(), pair=h2.pair())
        assert mh.depth_k > mb.depth_k                        # shallower
        assert mh.wall_distance_angstrom > mb.wall_distance_angstrom + 2.0


def test_a_plated_pores_smaller_free_radius_shows_in_its_steps():
    # argon-plated 20 Å hexagon, helium at 1.5 K (classical sites): fewer lattice sites, less held when full,
    # and the last (condensation) step at a lower pressure — a narrower pore fills sooner (Kelvin; common practice)
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    bare = Scenario(shape="hexagon", size_angstrom=20.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical")
    plated = bare.replace(plating="argon")
    a, b = compute_isotherm(bare, n_points=150), compute_isotherm(plated, n_points=150)
    assert b.stage.problem.weights.sum() < a.stage.problem.weights.sum()
    assert b.per_nm("equilibrium")[-1] < 0.8 * a.per_nm("equilibrium")[-1]
    assert b.steps[-1].pressure_pa < a.steps[-1].pressure_pa
    assert bare.geometry_key() != plated.geometry_key()
