"""The wall potential along straight cuts from the pore centre: what the dashboard's line-cut plot and the
slide figure draw, computed once here."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.pore.wall_potential import wall_potential

__all__ = ["LineCut", "line_cuts"]


@dataclass(frozen=True)
class LineCut:
    """The wall potential along one straight cut from the pore centre: r (Å), V (K; NaN inside the solid)."""

    label: str
    angle_rad: float
    length_angstrom: float
    r_angstrom: np.ndarray
    potential_k: np.ndarray

    @property
    def minimum_k(self) -> float:
        finite = self.potential_k[np.isfinite(self.potential_k)]
        return float(finite.min()) if finite.size else float("nan")


def line_cuts(*, pore, pair, points: int = 300) -> list[LineCut]:
    """The potential along the pore's own cuts from the centre (`Pore.line_cuts`), ``points`` a cut, the wall's
    end point left out (it lies on the solid's surface)."""
    out = []
    for label, angle, length in pore.line_cuts():
        r = np.linspace(0.0, length, points)[:-1]
        v = wall_potential(r * np.cos(angle), r * np.sin(angle), pore=pore, pair=pair)
        out.append(LineCut(label, float(angle), float(length), r, np.where(np.isfinite(v), v, np.nan)))
    return out
