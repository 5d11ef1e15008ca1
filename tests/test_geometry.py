"""Pore geometry conventions and validation."""
from __future__ import annotations

import numpy as np
import pytest

from porefill.physics.pore.geometry import CylinderPore, HexagonPore, SlitPore, make_pore


def test_hexagon_corner_on_x_axis_and_faces_at_30_degrees():
    # convention of issue 2: one corner on +x, flat faces facing 30°, 90°, ...
    p = HexagonPore(10.0)
    np.testing.assert_allclose(p.vertices[0], [10.0, 0.0], atol=1e-12)
    for angle in np.deg2rad([30, 90, 150, 210, 270, 330]):
        mid = p.apothem_angstrom * np.array([np.cos(angle), np.sin(angle)])
        assert abs(p.depth_inside(*mid)) < 1e-12
    assert p.apothem_angstrom == pytest.approx(10.0 * np.sqrt(3) / 2, rel=1e-15)
    assert p.area_angstrom2 == pytest.approx(1.5 * np.sqrt(3) * 100.0, rel=1e-14)   # (3√3/2) t²


def test_array_spacing():
    # centres on a triangular lattice of spacing √3·t + w (issue 2)
    assert HexagonPore(15.0, 8.0).lattice_spacing_angstrom == pytest.approx(np.sqrt(3) * 15.0 + 8.0)


def test_boundary_belongs_to_solid():
    p = HexagonPore(10.0)
    assert not p.contains(10.0, 0.0)
    assert p.contains(9.999, 0.0)
    assert not CylinderPore(5.0).contains(5.0, 0.0)
    assert not SlitPore(4.0).contains(0.0, 2.0)


@pytest.mark.parametrize("args, word", [
    (("hexagon", -1.0), "side length"), (("hexagon", 10.0, -2.0), "wall thickness"),
    (("cylinder", 0.0), "radius"), (("slit", float("inf")), "width"), (("triangle", 5.0), "shape"),
])
def test_bad_geometry_is_named(args, word):
    with pytest.raises(ValueError, match=word):
        make_pore(*args)


def test_pores_are_frozen_and_hashable():
    p = HexagonPore(15.0, 8.0)
    assert hash(p) == hash(HexagonPore(15.0, 8.0))
    with pytest.raises(Exception):
        p.wall_angstrom = 3.0
