"""A pore between two row counts is the lever-rule mixture of its neighbouring lattices (row_blend).

Checks: the weights' limits; the mixture is exactly its parts' weighted sum (amounts, branch curves, Ω) and
obeys dΩ/dμ = −N; it is the one lattice where D/Δ is whole and continuous across that size; the capacity rule
(a full pore holds the bulk liquid) survives the mixing; and what the nitrogen/argon and helium issues ask:
condensation and layer steps that move smoothly in size across a row change, where one rounded lattice jumps.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.jumps import branch_curve
from porefill.physics.lattice_gas.row_blend import BlendedIsotherm, blend_weights
from porefill.physics.lattice_gas.stages import geometry_stage
from porefill.physics.lattice_gas.steps import condensation_step, steps_by_row
from porefill.physics.scenario import Scenario
from porefill.physics.substances.kelvin import kjs_condensation_relative_pressure
from porefill.physics.substances.vapour_pressure import liquid_number_density

NITROGEN = Scenario(shape="cylinder", size_angstrom=19.0, adsorbate="nitrogen", temperature_k=77.35)
HELIUM = Scenario(shape="hexagon", size_angstrom=15.0, wall_angstrom=8.0, adsorbate="helium-4",
                  temperature_k=1.5, site_model="classical")
N2_RANGE = (1e-7, 1.0)


def _whole_size(base: Scenario, rows: int, bracket: tuple[float, float]) -> float:
    """The size (Å) where D/Δ = rows: the lattice of that many row steps fits unstrained."""
    return brentq(lambda s: geometry_stage(base.replace(size_angstrom=s)).row_fraction - rows, *bracket, xtol=1e-10)


# the weights ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("r, expected", [
    (3.0, ((1.0, 3),)),
    (0.0, ((1.0, 0),)),
    (3.25, ((0.75, 3), (0.25, 4))),
    (3.75, ((0.75, 4), (0.25, 3))),
    (3.5, ((0.5, 3), (0.5, 4))),
])
def test_the_weights_are_the_lever_rule_heavier_first(r, expected):
    got = blend_weights(r)
    assert [m for _, m in got] == [m for _, m in expected]
    np.testing.assert_allclose([w for w, _ in got], [w for w, _ in expected], rtol=0, atol=1e-12)


@pytest.mark.parametrize("bad", [-0.1, float("nan"), float("inf")])
def test_a_bad_row_fraction_is_refused(bad):
    with pytest.raises(ValueError, match="row fraction"):
        blend_weights(bad)


# the mixture is its parts' weighted sum ----------------------------------------------------------------
@pytest.fixture(scope="module")
def nitrogen_blend():
    iso = compute_isotherm(NITROGEN, n_points=160, relative_pressure_range=N2_RANGE)
    assert isinstance(iso, BlendedIsotherm)
    return iso


def test_amounts_are_the_weighted_sum_of_the_two_lattices(nitrogen_blend):
    iso = nitrogen_blend
    (w0, a), (w1, b) = iso.parts
    assert w0 + w1 == pytest.approx(1.0, abs=1e-15) and w0 >= w1
    assert {a.stage.geometry.rows, b.stage.geometry.rows} == {int(np.floor(iso.stage.geometry.row_fraction)),
                                                              int(np.floor(iso.stage.geometry.row_fraction)) + 1}
    for name in ("adsorption", "desorption", "equilibrium"):
        np.testing.assert_allclose(iso.per_angstrom(name), w0 * a.per_angstrom(name) + w1 * b.per_angstrom(name),
                                   rtol=1e-14)
        np.testing.assert_allclose(iso.fraction(name), w0 * a.fraction(name) + w1 * b.fraction(name), rtol=1e-14)
    # a Branch object is read by its name, not as the heavier lattice's occupancies
    np.testing.assert_allclose(iso.per_nm(iso.desorption), iso.per_nm("desorption"), rtol=1e-15)
    assert iso.amount_basis().area_angstrom2 == pytest.approx(
        w0 * a.amount_basis().area_angstrom2 + w1 * b.amount_basis().area_angstrom2, rel=1e-14)


def test_the_mixture_obeys_the_gibbs_sum_rule(nitrogen_blend):
    # dΩ/dμ = −N on each branch (standard thermodynamics: the grand potential's μ derivative)
    iso = nitrogen_blend
    for branch in (iso.adsorption, iso.desorption):
        omega, n = iso.grand_potential_per_nm(branch), iso.per_nm(branch)
        slope = np.diff(omega) / np.diff(iso.mu)
        mid = 0.5 * (n[1:] + n[:-1])
        smooth = np.abs(np.diff(n)) < 0.01 * n.max()          # away from the jumps
        # finite difference against the midpoint: O(Δμ² N'') error, below 0.2 % at 160 points (common practice,
        # no source)
        np.testing.assert_allclose(slope[smooth], -mid[smooth], rtol=2e-3, atol=1e-3 * n.max())


def test_branch_curves_of_the_mixture_are_the_weighted_sum(nitrogen_blend):
    iso = nitrogen_blend
    for name in ("adsorption", "equilibrium"):
        x, y = branch_curve(iso, name)
        assert np.all(np.diff(x) >= 0) and np.all(np.diff(y) > -1e-12)
        risers = np.flatnonzero(np.diff(x) == 0)
        assert risers.size == 2                             # one jump per lattice
        (w0, a), (w1, b) = iso.parts
        at = 0.5 * (iso.mu[1:] + iso.mu[:-1])               # between grid points, off the risers
        at = at[np.all(np.abs(at[:, None] - x[risers][None, :]) > 1e-9, axis=1)]
        parts = [np.interp(at, *branch_curve(p, name)) for p in (a, b)]
        np.testing.assert_allclose(np.interp(at, x, y), w0 * parts[0] + w1 * parts[1], rtol=1e-12, atol=1e-12)


def test_a_full_blended_pore_holds_the_bulk_liquid(nitrogen_blend):
    # CoolProp's saturated liquid (the Gurvich rule, IUPAC 2015 report §6); issue 18 point 5: within 2 %
    iso = nitrogen_blend
    full = iso.per_angstrom("desorption")[-1] / iso.amount_basis().area_angstrom2
    density, _ = liquid_number_density("nitrogen")
    assert full / density == pytest.approx(1.0, abs=0.02)


# one lattice where the rows fit, continuous across that size ---------------------------------------------
def test_where_the_rows_fit_the_pore_is_one_lattice_and_the_mixture_is_continuous():
    size = _whole_size(NITROGEN, 5, (19.0, 23.0))
    whole = compute_isotherm(NITROGEN.replace(size_angstrom=size), n_points=120, relative_pressure_range=N2_RANGE)
    assert not isinstance(whole, BlendedIsotherm) and whole.stage.geometry.rows == 5
    for delta in (-1e-4, 1e-4):
        near = compute_isotherm(NITROGEN.replace(size_angstrom=size + delta), n_points=120,
                                relative_pressure_range=N2_RANGE)
        assert isinstance(near, BlendedIsotherm)
        # 1e-4 Å from the whole-row size the second lattice's weight is ~3e-5 (D/Δ moves 0.27 per Å); the
        # mixture then differs from the one lattice by that weight times the lattices' gap: bounds below are
        # far above it and far below a row change's jump (0.055 in p/p0; common practice, no source)
        assert min(w for w, _ in near.parts) < 1e-3
        full = whole.per_angstrom("equilibrium")[-1]
        np.testing.assert_allclose(near.per_angstrom("equilibrium"), whole.per_angstrom("equilibrium"),
                                   atol=2e-3 * full)
        assert condensation_step(near.steps).relative_pressure == pytest.approx(
            condensation_step(whole.steps).relative_pressure, abs=2e-4)


# smooth in size --------------------------------------------------------------------------------------
def _condensation_scan(base: Scenario, radii, **kw) -> np.ndarray:
    return np.array([condensation_step(compute_isotherm(base.replace(size_angstrom=float(r)), n_points=200,
                                                        relative_pressure_range=N2_RANGE, **kw).steps)
                     .relative_pressure for r in radii])


def test_nitrogen_condensation_moves_smoothly_across_a_row_change():
    # issue 18 point 6: monotonic in diameter, ≤ 0.01 in p/p0 per 0.05 nm of diameter, row changes included.
    # Radii 19-23 Å (d 3.8-4.6 nm) cross the 4/5 row change (D/Δ = 4.5 at 19.3 Å) and the whole-row size
    # 21.3 Å. KJS's own slope there is 0.0058-0.0075 per 0.05 nm (Kruk, Jaroniec & Sayari 1997).
    radii = np.arange(19.0, 23.01, 0.25)                 # 0.25 Å of radius = 0.05 nm of diameter
    x = _condensation_scan(NITROGEN, radii)
    assert np.all(np.diff(x) > 0)
    assert np.max(np.diff(x)) <= 0.01
    kjs = np.array([kjs_condensation_relative_pressure(0.2 * r) for r in radii])
    assert np.max(np.abs(x - kjs)) < 0.04                # issue 18's ±0.04 to KJS
    # the rounded single lattice jumps at the row change: the check above would catch it
    single = _condensation_scan(NITROGEN, radii[1:3], row_blend=False)   # 19.25 → 19.5 Å crosses D/Δ = 4.5
    assert single[1] - single[0] > 0.03                  # measured 0.363 → 0.418 (0.055)


def _steps_by_row(iso) -> dict:
    """{(row, n): log10 p} of the whole pore's steps (`steps_by_row`)."""
    return {key: np.log10(s.pressure_pa) for key, s in steps_by_row(iso.steps).items()}


def test_helium_layer_steps_move_smoothly_across_a_row_change():
    # issue 19 point 4: every step's log10 p moves ≤ 0.15 per 0.25 Å of side, here across the 3-row size
    # (D/Δ = 3 at 14.2 Å) and the 3/4 row change (D/Δ = 3.5 at 16.0 Å); classical sites.
    sides = np.arange(13.5, 16.51, 0.25)
    scans = [_steps_by_row(compute_isotherm(HELIUM.replace(size_angstrom=float(s)), n_points=300)) for s in sides]
    compared = 0
    for before, after in zip(scans, scans[1:]):
        for key in before.keys() & after.keys():
            assert abs(after[key] - before[key]) <= 0.15, key
            compared += 1
    assert compared >= 4 * (len(sides) - 1)              # corner, face, ring 1, condensation at least
    single = [_steps_by_row(compute_isotherm(HELIUM.replace(size_angstrom=s), n_points=300, row_blend=False))
              for s in (15.75, 16.25)]
    # measured: 2.73 decades (a ring-1 step), the jump issue 19 describes
    assert max(abs(single[1][k] - single[0][k]) for k in single[0].keys() & single[1].keys()) > 0.5


# steps and sizing profiles of a mixture ----------------------------------------------------------------
@pytest.fixture(scope="module")
def helium_blend():
    iso = compute_isotherm(HELIUM, n_points=300)          # 15 Å: D/Δ = 3.23, 77 % of 3 rows and 23 % of 4
    assert isinstance(iso, BlendedIsotherm)
    return iso


def test_every_step_of_a_mixture_adds_a_positive_amount_inside_its_loop(helium_blend):
    iso = helium_blend
    full = iso.per_nm("desorption")[-1]
    assert iso.steps and sum(s.added_per_nm for s in iso.steps) <= full * (1 + 1e-9)
    for s in iso.steps:
        assert s.added_per_nm > 0 and 0 < s.share <= 1.0
        if s.kind == "first-order" and s.adsorption_jump_mu_k is not None:
            assert s.desorption_jump_mu_k <= s.mu_k <= s.adsorption_jump_mu_k, s.label
        if s.spread_pressure_pa is not None:       # a pair: between its two lattices' pressures, both named
            lo, hi = s.spread_pressure_pa
            assert lo <= s.pressure_pa * (1 + 1e-12) and s.pressure_pa <= hi * (1 + 1e-12)
            assert "two lattices:" in s.where
        if s.share < 1.0:
            assert f"{s.share:.0%} of the pore" in s.where
    # the paired steps' μ is the weighted mean of the two lattices' (the lever rule applied to the step)
    (w0, a), (w1, b) = iso.parts
    ca, cb, c = (condensation_step(x.steps) for x in (a, b, iso))
    assert c.mu_k == pytest.approx(w0 * ca.mu_k + w1 * cb.mu_k, abs=1e-9)


def test_the_sizing_profile_of_a_mixture_is_the_weighted_profiles(helium_blend):
    from porefill.physics.sweep import occupancy_profile

    iso = helium_blend
    (w0, a), (w1, b) = iso.parts
    prof, pa, pb = occupancy_profile(iso), occupancy_profile(a), occupancy_profile(b)
    for key in ("centre", "first_layer", "pore", "next_ring"):
        np.testing.assert_allclose(prof[key], w0 * pa[key] + w1 * pb[key], rtol=1e-14, atol=1e-300)
    assert len(prof["layers"]) == len(pa["layers"])               # layers as the heavier lattice counts them
    np.testing.assert_allclose(prof["layers"][0], w0 * pa["layers"][0] + w1 * pb["layers"][0], rtol=1e-14)
    np.testing.assert_allclose(prof["layers"][-1], w0 * pa["layers"][-1] + w1 * pb["layers"][-1], rtol=1e-14)


def test_a_mixture_s_steps_do_not_depend_on_the_point_count():
    # issue 18 point 4 for a pore between two row counts: condensation p/p0 to 1e-3 between 150 and 3000
    # points (nitrogen, 4.0 nm cylinder: D/Δ = 4.6)
    sc = NITROGEN.replace(size_angstrom=20.0)
    got = [condensation_step(compute_isotherm(sc, n_points=n, relative_pressure_range=N2_RANGE).steps)
           for n in (150, 3000)]
    assert got[0].relative_pressure == pytest.approx(got[1].relative_pressure, abs=1e-3)
    assert got[0].where == got[1].where
