"""Wall potentials against quadrature, limits, symmetry and published check values."""
from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import integrate

from porefill.physics.pore.geometry import CylinderPore, HexagonPore, RegularPolygonPore, SlitPore
from porefill.physics.substances.materials import PairParameters
from porefill.physics.pore import wall_potential as wp

UNIT = PairParameters(1.0, 1.0, 1.0)


def lj_z_integral(s, eps, sig):
    """∫ 4ε[(σ/r)^12 − (σ/r)^6] dz at in-plane distance s, by quadrature (no closed form used)."""
    def u(z):
        r2 = s * s + z * z
        q = sig * sig / r2
        return 4 * eps * (q**6 - q**3)
    return 2 * integrate.quad(u, 0, np.inf, epsabs=0, epsrel=1e-13, limit=200)[0]


def solid_outside_boundary(px, py, boundary_distance, pair, breakpoints=()):
    """V(P) = ∫dθ ∫_{s_b(θ)}^∞ f(s) s ds, by nested quadrature of the z-integrated kernel f."""
    f = lambda s: wp.line_kernel(s, pair=pair)

    def ray(theta):
        sb = boundary_distance(px, py, theta)
        return integrate.quad(lambda s: f(s) * s, sb, np.inf, epsabs=0, epsrel=1e-12, limit=200)[0]

    pts = sorted(set(breakpoints))
    edges = [0.0] + [b for b in pts if 0 < b < 2 * np.pi] + [2 * np.pi]
    return sum(integrate.quad(ray, a, b, epsabs=0, epsrel=1e-12, limit=200)[0] for a, b in zip(edges, edges[1:]))


def polygon_ray_distance(vertices):
    """Distance from P along direction θ to the boundary of a convex polygon containing P."""
    v = np.asarray(vertices)
    w = np.roll(v, -1, axis=0)

    def dist(px, py, theta):
        d = np.array([np.cos(theta), np.sin(theta)])
        best = np.inf
        for a, b in zip(v, w):
            e = b - a
            m = np.array([[d[0], -e[0]], [d[1], -e[1]]])
            if abs(np.linalg.det(m)) < 1e-14:
                continue
            s, t = np.linalg.solve(m, a - np.array([px, py]))
            if s > 0 and -1e-12 <= t <= 1 + 1e-12:
                best = min(best, s)
        return best
    return dist


def vertex_angles(px, py, vertices):
    return [np.arctan2(vy - py, vx - px) % (2 * np.pi) for vx, vy in vertices]


class TestKernels:
    @pytest.mark.parametrize("s", [0.9, 1.0, 1.3, 2.5, 6.0])
    def test_line_kernel_is_z_integral_of_lj(self, s):
        # z-integration of the LJ pair potential by quadrature (docs/REFERENCES.md §1, verified); rtol 1e-10
        pair = PairParameters(27.0, 2.9, 1.0)
        assert wp.line_kernel(s * 2.9, pair=pair) == pytest.approx(lj_z_integral(s * 2.9, 27.0, 2.9), rel=1e-10)

    @pytest.mark.parametrize("s", [2.0, 3.0, 5.0, 9.0])
    def test_radial_tail_is_integral_of_line_kernel(self, s):
        # G(s) = ∫_s^∞ f(s') s' ds' (docs/REFERENCES.md §1, verified), by quadrature; rtol 1e-10
        pair = PairParameters(27.0, 2.9, 0.044)
        ref = integrate.quad(lambda r: wp.line_kernel(r, pair=pair) * r, s, np.inf, epsabs=0, epsrel=1e-13)[0]
        assert wp.radial_tail(s, pair=pair) == pytest.approx(ref, rel=1e-10)

    def test_steele_93_minimum(self):
        # Steele, Surf. Sci. 36, 317 (1973): minimum at h = (2/5)^(1/6) σ, depth (√10/3)·(2π/3)ερσ³
        pair = PairParameters(27.0, 2.9, 0.044)
        h_min = (2 / 5) ** (1 / 6) * 2.9
        scale = 2 * np.pi / 3 * 27.0 * 0.044 * 2.9**3
        assert wp.steele_93(h_min, pair=pair) == pytest.approx(-np.sqrt(10) / 3 * scale, rel=1e-12)
        assert np.sqrt(10) / 3 == pytest.approx(1.0541, abs=1e-4)   # docs/REFERENCES.md §1 depth factor
        grad = (wp.steele_93(h_min * (1 + 1e-6), pair=pair) - wp.steele_93(h_min * (1 - 1e-6), pair=pair))
        assert abs(grad) < 1e-9 * scale


class TestPolygon:
    @pytest.mark.parametrize("point", [(0.0, 0.0), (3.5, 1.0), (-6.0, 4.0), (9.0, -2.0), (2.0, 9.5)])
    def test_hexagon_against_quadrature(self, helium_pair, point):
        # closed form per edge vs nested quadrature of the z-integrated kernel (scipy); rtol 1e-8
        pore = HexagonPore(12.0)
        ref = solid_outside_boundary(*point, polygon_ray_distance(pore.vertices), helium_pair,
                                     vertex_angles(*point, pore.vertices))
        got = wp.wall_potential(*point, pore=pore, pair=helium_pair)
        assert got == pytest.approx(ref, rel=1e-8)

    def test_hexagon_reference_centre_value(self):
        # docs/REFERENCES.md §1 [verified]: hexagon of apothem 3σ, ε=ρ=σ=1: V(0) = −0.319900
        pore = HexagonPore(3.0 / np.cos(np.pi / 6))
        assert wp.wall_potential(0.0, 0.0, pore=pore, pair=UNIT) == pytest.approx(-0.319900, abs=1e-6)

    def test_flat_wall_limit(self, helium_pair):
        # far inside a very large pore, near the middle of a face: the 9-3 wall (Steele 1973)
        pore = HexagonPore(5000.0)
        h = np.array([2.6, 3.0, 4.0, 6.0])
        y = pore.apothem_angstrom - h
        got = wp.wall_potential(0.0, y, pore=pore, pair=helium_pair)
        want = wp.steele_93(h, pair=helium_pair)
        np.testing.assert_allclose(got, want, rtol=1e-6)

    def test_ngon_approaches_cylinder(self, helium_pair):
        # an inscribed regular N-gon tends to the circle; the gap shrinks ~ N^-2 (common practice, no source)
        radius, pts = 15.0, (np.array([0.0, 5.0, 9.0]), np.array([0.0, 2.0, -3.0]))
        cyl = wp.cylinder_potential(*pts, radius, pair=helium_pair)
        gaps = [np.max(np.abs(wp.wall_potential(*pts, pore=RegularPolygonPore(n, radius), pair=helium_pair) - cyl))
                for n in (24, 48, 96, 192)]
        assert gaps[-1] < 1e-3 * np.max(np.abs(cyl))
        ratios = np.array(gaps[:-1]) / np.array(gaps[1:])
        np.testing.assert_allclose(ratios, 4.0, rtol=0.1)


class TestCylinder:
    def test_reference_values(self):
        # docs/REFERENCES.md §1 [verified]: ε=ρ=σ=1, R=3: V(0) = −0.365431, V(1.9) = −2.047613
        got = wp.cylinder_potential(np.array([0.0, 1.9]), 0.0, 3.0, pair=UNIT)
        np.testing.assert_allclose(got, [-0.365431, -2.047613], atol=1e-6)

    @pytest.mark.parametrize("r", [0.0, 4.0, 9.0, 11.5])
    def test_against_quadrature(self, helium_pair, r):
        # Everett & Powl closed form vs nested quadrature of the kernel (scipy); rtol 1e-8
        radius = 14.0

        def dist(px, py, theta):
            b = px * np.cos(theta) + py * np.sin(theta)
            return -b + np.sqrt(b * b - (px * px + py * py - radius**2))

        ref = solid_outside_boundary(r, 0.0, dist, helium_pair)
        assert wp.wall_potential(r, 0.0, pore=CylinderPore(radius), pair=helium_pair) == pytest.approx(ref, rel=1e-8)


class TestSlit:
    def test_isolated_slit_is_two_93_walls(self, helium_pair):
        # definition: two 9-3 walls (Steele 1973)
        y = np.array([0.0, 2.0, -3.5])
        got = wp.wall_potential(0.0, y, pore=SlitPore(10.0), pair=helium_pair)
        want = wp.steele_93(5 - y, pair=helium_pair) + wp.steele_93(5 + y, pair=helium_pair)
        np.testing.assert_allclose(got, want, rtol=1e-14)

    def test_slab_stack_sum_converged(self, helium_pair):
        # periodic slabs: the remainder estimate makes the sum independent of the number of slabs
        y = np.array([0.0, 3.0])
        a = wp.slit_potential(y, 10.0, pair=helium_pair, wall=5.0, n_periods=50)
        b = wp.slit_potential(y, 10.0, pair=helium_pair, wall=5.0, n_periods=5000)
        np.testing.assert_allclose(a, b, atol=1e-7)
        assert np.all(b > wp.slit_potential(y, 10.0, pair=helium_pair))  # less solid, less attraction


def hexagon_area_quadrature(px, py, pore_vertices, pair):
    """Potential at P of a solid hexagonal prism by 2-D quadrature of the kernel over its area."""
    v = np.asarray(pore_vertices)
    cx, cy = v.mean(axis=0)
    total = 0.0
    for a, b in zip(v, np.roll(v, -1, axis=0)):   # six triangles (centre, a, b)
        def integrand(t, s):
            x = cx + s * (a[0] - cx) + s * t * (b[0] - a[0])
            y = cy + s * (a[1] - cy) + s * t * (b[1] - a[1])
            return wp.line_kernel(np.hypot(x - px, y - py), pair=pair) * s
        jac = abs((a[0] - cx) * (b[1] - a[1]) - (a[1] - cy) * (b[0] - a[0]))
        total += jac * integrate.dblquad(integrand, 0, 1, 0, 1, epsabs=0, epsrel=1e-11)[0]
    return total


class TestArray:
    pore = HexagonPore(15.0, 8.0)

    @pytest.mark.parametrize("point", [(0.0, 0.0), (5.0, 8.0), (-10.0, 3.0)])
    def test_one_removed_prism_against_quadrature(self, helium_pair, point):
        # closed form of a solid prism vs brute-force 2-D quadrature of the kernel; rtol 1e-8
        centre = np.array([0.0, self.pore.lattice_spacing_angstrom])
        verts = self.pore.vertices + centre
        got = wp.prism_potential(*point, verts, pair=helium_pair)
        assert got == pytest.approx(hexagon_area_quadrature(*point, verts, helium_pair), rel=1e-8)

    def test_collinear_points_against_quadrature(self, helium_pair):
        # points on the line of a removed pore's slanted edge (through (t/2, a-√3t/2) and (t, a));
        # the plain closed form cancels there; compare with brute-force quadrature, rtol 1e-8
        t, a = 15.0, self.pore.lattice_spacing_angstrom
        p0 = np.array([t / 2, a - np.sqrt(3) * t / 2])
        direction = np.array([0.5, np.sqrt(3) / 2])
        verts = self.pore.vertices + np.array([0.0, a])
        for step in (-14.0, -20.0, -24.0):
            px, py = p0 + step * direction
            assert self.pore.contains(px, py)
            got = wp.prism_potential(px, py, verts, pair=helium_pair)
            assert np.isfinite(got)
            assert got == pytest.approx(hexagon_area_quadrature(px, py, verts, helium_pair), rel=1e-8)

    def test_grid_rows_on_face_lines_are_smooth(self, helium_pair):
        # a grid row exactly on the line of removed pores' faces: values finite and continuous with
        # the rows 1e-6 Å to either side (second difference ~ curvature · 1e-12)
        pore = HexagonPore(15.0, 2.0)
        a = pore.lattice_spacing_angstrom
        # the prisms at ±30° have flat faces on y = a/2 − √3t/2 = w/2, a line through the pore
        y_line = 0.5 * a - np.sqrt(3) / 2 * 15.0
        assert y_line == pytest.approx(1.0)
        x = np.linspace(-7.0, 7.0, 29)
        for y in (0.0, 1e-6, y_line):
            mid = wp.wall_potential(x, y, pore=pore, pair=helium_pair)
            up = wp.wall_potential(x, y + 1e-6, pore=pore, pair=helium_pair)
            down = wp.wall_potential(x, y - 1e-6, pore=pore, pair=helium_pair)
            assert np.all(np.isfinite(mid))
            np.testing.assert_allclose(mid, 0.5 * (up + down), atol=1e-8)

    def test_fast_path_matches_exact_lattice_sum(self, helium_pair):
        # exact prisms out to 25 lattice spacings + continuum tail vs the fast path; 1e-3 K (issue 2)
        rng = np.random.default_rng(7)
        for t, w in [(15.0, 8.0), (10.0, 0.5), (40.0, 3.0), (8.0, 0.0)]:
            pore = HexagonPore(t, w)
            pts = rng.uniform(-t, t, (4000, 2))
            pts = pts[pore.depth_inside(pts[:, 0], pts[:, 1]) > 0.5][:300]
            fast = wp.wall_potential(pts[:, 0], pts[:, 1], pore=pore, pair=helium_pair)
            ref = (wp.wall_potential(pts[:, 0], pts[:, 1], pore=pore.isolated(), pair=helium_pair)
                   + wp.array_correction(pts[:, 0], pts[:, 1], pore, pair=helium_pair, cutoff_spacings=25))
            np.testing.assert_allclose(fast, ref, rtol=0, atol=1e-3)

    def test_lattice_sum_converges(self, helium_pair):
        # the far field falls as R^-3; with the continuum tail the sum is settled by 8 spacings
        pts = (np.array([0.0, 6.0, -3.0]), np.array([0.0, 4.0, -9.0]))
        values = [wp.array_correction(*pts, self.pore, pair=helium_pair, cutoff_spacings=c) for c in (4, 8, 16, 32)]
        steps = [np.max(np.abs(b - a)) for a, b in zip(values, values[1:])]
        assert steps[-1] < 1e-5 and steps[1] < 1e-4
        no_tail = wp.array_correction(*pts, self.pore, pair=helium_pair, cutoff_spacings=8, tail=False)
        assert np.max(np.abs(no_tail - values[-1])) > 10 * np.max(np.abs(values[1] - values[-1]))

    def test_array_is_less_attractive(self, helium_pair):
        # removing solid can only weaken the attraction of the far solid (it is all attractive there)
        x, y = np.array([0.0, 4.0]), np.array([0.0, -3.0])
        iso = wp.wall_potential(x, y, pore=self.pore.isolated(), pair=helium_pair)
        arr = wp.wall_potential(x, y, pore=self.pore, pair=helium_pair)
        assert np.all(arr > iso)

    def test_twelve_fold_symmetry_of_the_map(self, helium_pair):
        # the hexagonal array has the symmetry group of the hexagon (6 rotations × mirror, order 12)
        rng = np.random.default_rng(3)
        pts = rng.uniform(-14, 14, (600, 2))
        pts = pts[self.pore.depth_inside(pts[:, 0], pts[:, 1]) > 0.3][:150]
        base = wp.wall_potential(pts[:, 0], pts[:, 1], pore=self.pore, pair=helium_pair)
        for k in range(6):
            c, s = np.cos(k * np.pi / 3), np.sin(k * np.pi / 3)
            for mirror in (1.0, -1.0):
                x, y = pts[:, 0], mirror * pts[:, 1]
                got = wp.wall_potential(c * x - s * y, s * x + c * y, pore=self.pore, pair=helium_pair)
                np.testing.assert_allclose(got, base, rtol=1e-9, atol=1e-9)

    def test_map_is_mirror_assembled_correctly(self, helium_pair):
        # potential_map computes one quadrant and mirrors it; compare with direct evaluation
        for n in (20, 21):
            m = wp.potential_map(pore=self.pore, pair=helium_pair, n=n)
            gx, gy = np.meshgrid(m.x, m.y)
            direct = wp.wall_potential(gx, gy, pore=self.pore, pair=helium_pair)
            finite = np.isfinite(direct)
            np.testing.assert_array_equal(np.isfinite(m.values), finite)
            np.testing.assert_allclose(m.values[finite], direct[finite], rtol=1e-12)


class TestOutside:
    @pytest.mark.parametrize("pore", [HexagonPore(10.0), HexagonPore(10.0, 3.0), CylinderPore(8.0),
                                      SlitPore(6.0), SlitPore(6.0, 2.0)], ids=repr)
    def test_solid_and_boundary_are_infinite_without_warnings(self, pore, helium_pair):
        x0, x1, y0, y1 = pore.bounding_box()
        x = np.array([x1, x1 * 1.5, 0.0, 0.0, 100.0, x1])
        y = np.array([0.0, 0.0, y1, y1 * 2, 100.0, y1])
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            v = wp.wall_potential(x, y, pore=pore, pair=helium_pair)
            m = wp.potential_map(pore=pore, pair=helium_pair, n=16)
        outside = ~pore.contains(x, y)
        assert np.all(np.isposinf(v[outside]))
        assert np.all(np.isfinite(v[~outside]))
        assert np.isposinf(m.values[0, 0]) or isinstance(pore, SlitPore)


@pytest.mark.parametrize("fields", [dict(size_angstrom=20.0, wall_angstrom=6.0), dict(size_angstrom=9.0, wall_angstrom=3.0),
                                    dict(size_angstrom=15.0, wall_angstrom=None)])
def test_compiled_edge_sum_equals_the_numpy_reference(fields, monkeypatch):
    # the same closed form (docs/REFERENCES.md §1) evaluated two ways: round-off only, so 1e-12 relative
    from porefill.physics.pore import compiled
    from porefill.physics.scenario import Scenario

    monkeypatch.setattr(compiled, "_enabled", True)
    assert compiled.available()                 # numba is a declared dependency (pyproject.toml)
    sc = Scenario(**fields)
    pore, pair = sc.pore(), sc.pair()
    rng = np.random.default_rng(3)
    x, y = rng.uniform(-fields["size_angstrom"], fields["size_angstrom"], (2, 5000))
    x = np.concatenate([x, [0.0, fields["size_angstrom"], 0.5 * fields["size_angstrom"]]])   # centre, a corner, inside
    y = np.concatenate([y, [0.0, 0.0, 0.0]])
    fast = wp.wall_potential(x, y, pore=pore, pair=pair)
    monkeypatch.setenv("POREFILL_NUMBA", "0")
    reference = wp.wall_potential(x, y, pore=pore, pair=pair)
    assert np.array_equal(np.isfinite(fast), np.isfinite(reference))
    ok = np.isfinite(reference)
    np.testing.assert_allclose(fast[ok], reference[ok], rtol=1e-12, atol=1e-12)


def test_compiled_far_field_series_equals_numpy_chebval2d(monkeypatch):
    # the hexagon array's far field is an even 2-D Chebyshev series; the compiled loop must equal numpy's
    # chebval2d (the reference implementation) to round-off, for any coefficients and points inside the box
    from numpy.polynomial import chebyshev
    from porefill.physics.pore import compiled

    monkeypatch.setattr(compiled, "_enabled", True)
    rng = np.random.default_rng(11)
    coef = rng.normal(size=(9, 7))
    x1, y1 = 23.0, 19.9
    x, y = rng.uniform(-x1, x1, 4000), rng.uniform(-y1, y1, 4000)
    fast = compiled.even_chebyshev_2d(x, y, x1, y1, coef)
    reference = chebyshev.chebval2d(2.0 * (x / x1) ** 2 - 1.0, 2.0 * (y / y1) ** 2 - 1.0, coef)
    np.testing.assert_allclose(fast, reference, rtol=1e-12, atol=1e-12 * np.abs(coef).sum())
