"""Pore cross-sections.

Convention used everywhere (API, command line, plots): the origin is the pore centre and the pore axis is z.
A regular polygon has one corner on the +x axis; for the hexagon the flat faces therefore face
30°, 90°, 150°, ... A hexagonal *array* puts pore centres on a triangular lattice of spacing
√3·t + w (t the side length, w the wall thickness between flat faces), neighbours across the faces.
A slit has its two walls at y = ±width/2.
All lengths in Å.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Union

import numpy as np

from porefill.physics.choices import SHAPES

__all__ = ["RegularPolygonPore", "HexagonPore", "CylinderPore", "SlitPore", "Pore", "make_pore",
           "PORE_SHAPES"]


# Points within this fraction of the pore size from the boundary count as on it (rounding of the
# mirrored grid coordinates must not decide between the pore and the solid).
BOUNDARY_TOLERANCE = 1e-12


def _check_length(name: str, value, *, allow_none: bool = False, allow_zero: bool = False) -> None:
    if value is None and allow_none:
        return
    ok = isinstance(value, (int, float, np.floating)) and np.isfinite(value)
    ok = ok and (value >= 0 if allow_zero else value > 0)
    if not ok:
        need = "a non-negative" if allow_zero else "a positive"
        raise ValueError(f"{name} must be {need} length in Å, got {value!r}")


@dataclass(frozen=True)
class RegularPolygonPore:
    """Regular N-gon pore of circumradius ``circumradius_angstrom`` in an unbounded solid."""

    n_sides: int
    circumradius_angstrom: float

    def __post_init__(self) -> None:
        if not (isinstance(self.n_sides, (int, np.integer)) and self.n_sides >= 3):
            raise ValueError(f"n_sides must be an integer >= 3, got {self.n_sides!r}")
        _check_length("circumradius_angstrom", self.circumradius_angstrom)

    shape = "polygon"

    @property
    def apothem_angstrom(self) -> float:
        """Centre-to-face distance."""
        return self.circumradius_angstrom * np.cos(np.pi / self.n_sides)

    @property
    def vertices(self) -> np.ndarray:
        """Corners, counter-clockwise, first on +x; shape (n_sides, 2)."""
        angles = 2.0 * np.pi * np.arange(self.n_sides) / self.n_sides
        return self.circumradius_angstrom * np.column_stack([np.cos(angles), np.sin(angles)])

    @property
    def area_angstrom2(self) -> float:
        n, r = self.n_sides, self.circumradius_angstrom
        return 0.5 * n * r * r * np.sin(2.0 * np.pi / n)

    def bounding_box(self) -> tuple[float, float, float, float]:
        v = self.vertices
        return float(v[:, 0].min()), float(v[:, 0].max()), float(v[:, 1].min()), float(v[:, 1].max())

    def depth_inside(self, x, y) -> np.ndarray:
        """Distance from (x, y) to the nearest face line, positive inside, negative outside."""
        return self.face_distances(x, y).min(axis=-1)

    def contains(self, x, y) -> np.ndarray:
        """True strictly inside the pore (the boundary belongs to the solid)."""
        return self.depth_inside(x, y) > BOUNDARY_TOLERANCE * self.circumradius_angstrom

    # what every pore answers for itself ---------------------------------------------------------
    has_corners = True
    wall_label = "face"
    lattice_kind = "triangular"

    @property
    def size_angstrom(self) -> float:
        return self.circumradius_angstrom

    @property
    def perimeter_angstrom(self) -> float:
        return 2.0 * self.n_sides * self.circumradius_angstrom * np.sin(np.pi / self.n_sides)

    def face_distances(self, x, y) -> np.ndarray:
        """(..., n_sides) distance from (x, y) to each face line, positive inside."""
        x, y = np.asarray(x, float), np.asarray(y, float)
        normals = 2.0 * np.pi * (np.arange(self.n_sides) + 0.5) / self.n_sides
        return self.apothem_angstrom - (x[..., None] * np.cos(normals) + y[..., None] * np.sin(normals))

    def outline(self) -> list[np.ndarray]:
        """Boundary as closed polylines, (K, 2) each, Å."""
        v = self.vertices
        return [np.vstack([v, v[:1]])]

    def line_cuts(self) -> tuple[tuple[str, float, float], ...]:
        """(label, angle rad, length Å) of the cuts from the centre that show the potential best."""
        return (("centre → corner", 0.0, self.circumradius_angstrom),
                ("centre → middle of a face", np.pi / self.n_sides, self.apothem_angstrom))

    def symmetry_operations(self) -> list[np.ndarray]:
        """The pore's point group C_nv as 2x2 matrices (rotations, then rotations times the x-mirror)."""
        return _dihedral(self.n_sides)

    def _potential_inside(self, x, y, pair):
        from porefill.physics.pore.wall_potential import polygon_potential
        return polygon_potential(x, y, self.vertices, pair=pair)


def _dihedral(n: int) -> list[np.ndarray]:
    mirror = np.array([[1.0, 0.0], [0.0, -1.0]])
    ops = []
    for k in range(n):
        c, s = np.cos(2 * np.pi * k / n), np.sin(2 * np.pi * k / n)
        rot = np.array([[c, -s], [s, c]])
        ops += [rot, rot @ mirror]
    return ops


@dataclass(frozen=True)
class HexagonPore(RegularPolygonPore):
    """Regular hexagonal pore of side length t (= centre-to-corner distance).

    ``wall_angstrom`` None means one pore in an unbounded solid; a number w means the pore is one of a
    hexagonal array whose neighbouring pores are separated by walls of thickness w (between flat faces).
    """

    n_sides: int = 6
    circumradius_angstrom: float = 15.0
    wall_angstrom: float | None = None

    shape = "hexagon"

    def __init__(self, side_angstrom: float, wall_angstrom: float | None = None):
        object.__setattr__(self, "n_sides", 6)
        object.__setattr__(self, "circumradius_angstrom", side_angstrom)
        object.__setattr__(self, "wall_angstrom", wall_angstrom)
        self.__post_init__()

    def __post_init__(self) -> None:
        _check_length("side length", self.circumradius_angstrom)
        _check_length("wall thickness", self.wall_angstrom, allow_none=True, allow_zero=True)

    @property
    def side_angstrom(self) -> float:
        return self.circumradius_angstrom

    @property
    def lattice_spacing_angstrom(self) -> float:
        """Centre-to-centre spacing of the array, √3·t + w."""
        if self.wall_angstrom is None:
            raise ValueError("an isolated pore has no lattice spacing")
        return np.sqrt(3.0) * self.side_angstrom + self.wall_angstrom

    def isolated(self) -> "HexagonPore":
        return HexagonPore(self.side_angstrom, None)

    def _potential_inside(self, x, y, pair):
        if self.wall_angstrom is None:
            return super()._potential_inside(x, y, pair)
        from porefill.physics.pore.wall_potential import hexagon_array_potential
        return hexagon_array_potential(x, y, self, pair)

    def to_dict(self) -> dict:
        return {"shape": "hexagon", "size_angstrom": self.side_angstrom, "wall_angstrom": self.wall_angstrom}


@dataclass(frozen=True)
class CylinderPore:
    """Cylindrical pore of radius R in an unbounded solid (the thick-walled cylinder)."""

    radius_angstrom: float
    wall_angstrom: None = None

    shape = "cylinder"

    def __post_init__(self) -> None:
        _check_length("radius", self.radius_angstrom)
        if self.wall_angstrom is not None:
            raise ValueError("a cylindrical pore is modelled in an unbounded solid; wall_angstrom must be None")

    @property
    def size_angstrom(self) -> float:
        return self.radius_angstrom

    @property
    def area_angstrom2(self) -> float:
        return np.pi * self.radius_angstrom**2

    def bounding_box(self) -> tuple[float, float, float, float]:
        r = self.radius_angstrom
        return -r, r, -r, r

    def depth_inside(self, x, y) -> np.ndarray:
        return self.radius_angstrom - np.hypot(np.asarray(x, float), np.asarray(y, float))

    def contains(self, x, y) -> np.ndarray:
        return self.depth_inside(x, y) > BOUNDARY_TOLERANCE * self.radius_angstrom

    def isolated(self) -> "CylinderPore":
        return self

    has_corners = False
    wall_label = "wall"
    lattice_kind = "triangular"

    @property
    def perimeter_angstrom(self) -> float:
        return 2.0 * np.pi * self.radius_angstrom

    def face_distances(self, x, y) -> np.ndarray:
        return self.depth_inside(x, y)[..., None]

    def outline(self) -> list[np.ndarray]:
        t = np.linspace(0, 2 * np.pi, 181)
        return [self.radius_angstrom * np.column_stack([np.cos(t), np.sin(t)])]

    def line_cuts(self) -> tuple[tuple[str, float, float], ...]:
        return (("centre → wall", 0.0, self.radius_angstrom),)

    def symmetry_operations(self) -> list[np.ndarray]:
        """Continuous in truth; the operations it shares with a triangular lattice (C6v) are what count."""
        return _dihedral(6)

    def _potential_inside(self, x, y, pair):
        from porefill.physics.pore.wall_potential import cylinder_potential
        return cylinder_potential(x, y, self.radius_angstrom, pair=pair)

    def to_dict(self) -> dict:
        return {"shape": "cylinder", "size_angstrom": self.radius_angstrom, "wall_angstrom": None}


@dataclass(frozen=True)
class SlitPore:
    """Slit of width H between two planar walls at y = ±H/2.

    ``wall_angstrom`` None means two semi-infinite solids; a number w means a periodic stack of slits
    separated by solid slabs of thickness w.
    """

    width_angstrom: float
    wall_angstrom: float | None = None

    shape = "slit"

    def __post_init__(self) -> None:
        _check_length("width", self.width_angstrom)
        _check_length("wall thickness", self.wall_angstrom, allow_none=True, allow_zero=True)

    @property
    def size_angstrom(self) -> float:
        return self.width_angstrom

    def bounding_box(self) -> tuple[float, float, float, float]:
        h = 0.5 * self.width_angstrom
        return -h, h, -h, h

    def depth_inside(self, x, y) -> np.ndarray:
        y = np.asarray(y, float)
        return 0.5 * self.width_angstrom - np.abs(y) + 0.0 * np.asarray(x, float)

    def contains(self, x, y) -> np.ndarray:
        return self.depth_inside(x, y) > BOUNDARY_TOLERANCE * self.width_angstrom

    def isolated(self) -> "SlitPore":
        return SlitPore(self.width_angstrom, None)

    has_corners = False
    wall_label = "wall"
    lattice_kind = "rows"

    @property
    def area_angstrom2(self) -> float:
        """Cross-section per Å along x (the slit is unbounded in x): the width, Å²/Å."""
        return self.width_angstrom

    @property
    def perimeter_angstrom(self) -> float:
        """Wall per Å along x: two walls, Å/Å."""
        return 2.0

    def face_distances(self, x, y) -> np.ndarray:
        y = np.asarray(y, float) + 0.0 * np.asarray(x, float)
        h = 0.5 * self.width_angstrom
        return np.stack([h - y, h + y], axis=-1)

    def outline(self) -> list[np.ndarray]:
        h = 0.5 * self.width_angstrom
        return [np.array([[-h, h], [h, h]]), np.array([[-h, -h], [h, -h]])]

    def line_cuts(self) -> tuple[tuple[str, float, float], ...]:
        return (("centre → wall (across the slit)", 0.5 * np.pi, 0.5 * self.width_angstrom),)

    def symmetry_operations(self) -> list[np.ndarray]:
        """Of the slit's symmetries, those a row of sites keeps: identity and the mirror y → −y."""
        return [np.eye(2), np.array([[1.0, 0.0], [0.0, -1.0]])]

    def _potential_inside(self, x, y, pair):
        from porefill.physics.pore.wall_potential import slit_potential
        # uniform along x: evaluate once per distinct y (a map has only n of them)
        ys, back = np.unique(np.asarray(y, float), return_inverse=True)
        return slit_potential(ys, self.width_angstrom, pair=pair, wall=self.wall_angstrom)[back]

    def to_dict(self) -> dict:
        return {"shape": "slit", "size_angstrom": self.width_angstrom, "wall_angstrom": self.wall_angstrom}


Pore = Union[RegularPolygonPore, HexagonPore, CylinderPore, SlitPore]
PORE_SHAPES = SHAPES            # porefill.physics.choices


def make_pore(shape: str, size_angstrom: float, wall_angstrom: float | None = None) -> Pore:
    """Build a pore from its shape name, size (side length, radius or width, Å) and wall thickness.

    The cylinder has no array form: its wall thickness is ignored.
    """
    if shape == "hexagon":
        return HexagonPore(size_angstrom, wall_angstrom)
    if shape == "cylinder":
        return CylinderPore(size_angstrom)
    if shape == "slit":
        return SlitPore(size_angstrom, wall_angstrom)
    raise ValueError(f"unknown pore shape {shape!r}; known: {', '.join(PORE_SHAPES)}")
