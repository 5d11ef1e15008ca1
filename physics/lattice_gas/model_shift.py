"""How far one isotherm's layer steps sit from another's: the shift of every step in μ and in pressure.

Used to set the quantum site model against the classical one (or any two treatments of one pore): the steps
of the two isotherms are matched by what they fill — the names of the sites, without counts, numbered in
order when a name repeats (the second "ring 2" step is another step than the first) — so a step that changes
kind (first-order in one model, continuous in the other) is still the same layer.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import asdict, dataclass

import numpy as np

__all__ = ["StepShift", "step_shifts"]


@dataclass(frozen=True)
class StepShift:
    """One layer in two isotherms: μ (K) and pressure (Pa) in each, and how far it moved."""

    where: str
    mu_reference_k: float
    mu_other_k: float
    pressure_reference_pa: float
    pressure_other_pa: float
    kind_reference: str
    kind_other: str

    @property
    def shift_mu_k(self) -> float:
        return self.mu_other_k - self.mu_reference_k

    @property
    def shift_decades(self) -> float:
        """log10(p_other / p_reference): decades of pressure the step moved."""
        return float(np.log10(self.pressure_other_pa / self.pressure_reference_pa))

    def to_dict(self) -> dict:
        return {**asdict(self), "shift_mu_k": self.shift_mu_k, "shift_decades": self.shift_decades}


def _keyed(steps) -> dict[str, object]:
    seen: Counter = Counter()
    out = {}
    for s in steps:
        names = ", ".join(sorted({name for name, _ in s.filling})) or "spread over the pore"
        seen[names] += 1
        out[names if seen[names] == 1 else f"{names} #{seen[names]}"] = s
    return out


def step_shifts(reference, other) -> tuple[tuple[StepShift, ...], tuple[str, ...], tuple[str, ...]]:
    """Steps of two `porefill.physics.lattice_gas.adsorption.Isotherm` of one pore, matched by what they fill.

    Returns the shifts of the matched steps (in the reference's order), and the steps found only in the
    reference and only in the other (by name), so that nothing is silently dropped.
    """
    ref, oth = _keyed(reference.steps), _keyed(other.steps)
    shifts = tuple(StepShift(key, float(r.mu_k), float(oth[key].mu_k), float(r.pressure_pa),
                             float(oth[key].pressure_pa), r.kind, oth[key].kind)
                   for key, r in ref.items() if key in oth)
    return shifts, tuple(k for k in ref if k not in oth), tuple(k for k in oth if k not in ref)
