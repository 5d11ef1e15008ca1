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
        x, y = np.asarray(x, float), np.asarray(y, float)
        n = self.n_sides
        normal_angles = 2.0 * np.pi * (np.arange(n) + 0.5) / n
        proj = x[..., None] * np.cos(normal_angles) + y[..., None] * np.sin(normal_angles)
        return self.apothem_angstrom - proj.max(axis=-1)

    def contains(self, x, y) -> np.ndarray:
        """True strictly inside the pore (the boundary belongs to the solid)."""
        return self.depth_inside(x, y) > BOUNDARY_TOLERANCE * self.circumradius_angstrom


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
    def size_angstrom(self) -> float:
        return self.circumradius_angstrom

    @property
    def lattice_spacing_angstrom(self) -> float:
        """Centre-to-centre spacing of the array, √3·t + w."""
        if self.wall_angstrom is None:
            raise ValueError("an isolated pore has no lattice spacing")
        return np.sqrt(3.0) * self.side_angstrom + self.wall_angstrom

    def isolated(self) -> "HexagonPore":
        return HexagonPore(self.side_angstrom, None)

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

    def to_dict(self) -> dict:
        return {"shape": "slit", "size_angstrom": self.width_angstrom, "wall_angstrom": self.wall_angstrom}


Pore = Union[RegularPolygonPore, HexagonPore, CylinderPore, SlitPore]
PORE_SHAPES = ("hexagon", "cylinder", "slit")


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
