"""One pore's steps at several point counts, for the tests that a grid does not decide which steps are listed
(tests/test_steps.py, tests/test_multistart.py)."""
from __future__ import annotations

import numpy as np

from porefill.physics.lattice_gas.adsorption import compute_isotherm

__all__ = ["steps_at_point_counts"]


def steps_at_point_counts(scenario, counts, row: str, *, rows: int | None = None, row_blend: bool = True) -> dict:
    """{point count: [(kind, filling, log10 p (Pa)), ...]} of the steps whose deepest sites are ``row``, in
    the whole isotherm or, with ``rows``, in the lattice of that many row steps of a row blend."""
    out = {}
    for n in counts:
        iso = compute_isotherm(scenario, n_points=n, row_blend=row_blend)
        if rows is not None:
            iso = next(part for _, part in iso.parts if part.stage.geometry.rows == rows)
        out[n] = [(s.kind, s.filling, float(np.log10(s.pressure_pa))) for s in iso.steps
                  if s.filling and s.filling[0][0] == row]
    return out
