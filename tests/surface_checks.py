"""Standard characterisation of an isotherm, written from the published recipes, for the surface tests.

- BET with the Rouquerol consistency criteria, as recommended by IUPAC (Thommes et al., Pure Appl. Chem. 87,
  1051 (2015), §5.2; Rouquerol, Llewellyn & Rouquerol, Stud. Surf. Sci. Catal. 160, 49 (2007)):
  x/[n(1 − x)] = 1/(n_m C) + (C − 1) x/(n_m C) over a range where C > 0, n(1 − x) rises with x, and the
  pressure of the monolayer, x_m = 1/(√C + 1), lies inside the range. The widest admissible range of the grid
  below is taken.
- Film thickness in a cylinder of radius R holding n molecules per nm² of wall as liquid of density ρ_L:
  π[R² − (R − t)²]ρ_L = 2πR n, the "statistical thickness" of common practice (no source).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Bet", "bet_rouquerol", "film_thickness_nm"]


@dataclass(frozen=True)
class Bet:
    c: float
    monolayer: float        # n_m in the amount's unit
    low: float
    high: float


def bet_rouquerol(x, n, *, min_points: int = 5) -> Bet | None:
    """The widest Rouquerol-admissible BET range of (x = p/p0, n) on a 0.01 grid within 0.005–0.40."""
    x, n = np.asarray(x, float), np.asarray(n, float)
    y = x / (n * (1.0 - x))
    best = None
    edges = np.round(np.arange(0.005, 0.4001, 0.005), 4)
    for i, lo in enumerate(edges):
        for hi in edges[i + 1:]:
            m = (x >= lo) & (x <= hi) & (n > 0)
            if m.sum() < min_points:
                continue
            slope, intercept = np.polyfit(x[m], y[m], 1)
            if intercept <= 0 or slope <= 0:
                continue
            c = slope / intercept + 1.0
            rising = np.all(np.diff(n[m] * (1.0 - x[m])) > 0)
            x_m = 1.0 / (np.sqrt(c) + 1.0)
            if rising and lo <= x_m <= hi and (best is None or hi - lo > best.high - best.low):
                best = Bet(float(c), float(1.0 / (slope + intercept)), float(lo), float(hi))
    return best


def film_thickness_nm(x, n_per_nm2, *, radius_nm: float, liquid_per_nm3: float) -> np.ndarray:
    """Statistical film thickness t (nm) in a cylinder of radius R (nm) from molecules per nm² of wall."""
    volume = 2.0 * radius_nm * np.asarray(n_per_nm2, float) / liquid_per_nm3        # (R² − (R − t)²)
    return radius_nm - np.sqrt(np.maximum(radius_nm**2 - volume, 0.0))
