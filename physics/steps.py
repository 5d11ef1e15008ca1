"""Layer steps of an isotherm: first-order jumps (hysteresis loops) and continuous sharp rises.

A first-order step is a μ interval where the adsorption and desorption branches differ (a hysteresis
loop); its equilibrium position is where their grand potentials cross. A continuous step is a peak of
the equilibrium compressibility dN/dμ between two minima. Each step reports μ, p, p/p0, how much it adds
and which sites fill, labelled by where they sit (corners, faces, rings counted from the wall, centre).
"""
from __future__ import annotations

from collections import Counter
from dataclasses import asdict, dataclass

import numpy as np
from scipy.signal import find_peaks

__all__ = ["Step", "find_steps"]

_LOOP_TOLERANCE_SITES = 1e-3     # branches differing by more than this (sites per slice) form a loop
_MIN_STEP_SITES = 0.3            # a continuous rise must add at least this many sites per slice


@dataclass(frozen=True)
class Step:
    """One layer step. μ in K, pressures in Pa, amounts in atoms per nm of pore length."""

    kind: str                          # "first-order" or "continuous"
    mu_k: float
    pressure_pa: float
    relative_pressure: float
    added_per_nm: float
    added_sites_per_slice: float
    filling: tuple                     # ((label, number of sites), ...)
    adsorption_jump_mu_k: float | None = None     # hysteresis loop ends (first order)
    desorption_jump_mu_k: float | None = None
    adsorption_jump_pressure_pa: float | None = None
    desorption_jump_pressure_pa: float | None = None

    @property
    def label(self) -> str:
        where = ", ".join(f"{name} ({count:g} sites)" for name, count in self.filling) or "spread over the pore"
        return f"{where}: {self.kind}"

    def to_dict(self) -> dict:
        d = asdict(self)
        d["filling"] = [{"where": name, "sites": count} for name, count in self.filling]
        d["label"] = self.label
        return d


def _filling(iso, delta_orbit: np.ndarray) -> tuple:
    setup = iso.setup
    weights = setup.problem.weights
    big = delta_orbit > max(0.2, 0.5 * float(delta_orbit.max(initial=0.0)))
    counts: Counter = Counter()
    order: dict[str, float] = {}
    for o in np.flatnonzero(big):
        label = setup.lattice.label(setup.representative[o])
        counts[label] += weights[o]
        order.setdefault(label, setup.problem.site_free_energy[o])
    return tuple((name, float(counts[name])) for name in sorted(counts, key=lambda n: order[n]))


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    runs, start = [], None
    for i, m in enumerate(mask):
        if m and start is None:
            start = i
        if not m and start is not None:
            runs.append((start, i - 1))
            start = None
    if start is not None:
        runs.append((start, len(mask) - 1))
    return runs


def find_steps(iso) -> list[Step]:
    mu = iso.mu
    setup = iso.setup
    scale = iso.per_nm_per_site()
    n_a, n_d = iso.sites_filled(iso.adsorption), iso.sites_filled(iso.desorption)
    om_a, om_d = iso.adsorption.grand_potential, iso.desorption.grand_potential
    steps: list[Step] = []
    in_loop = np.zeros(mu.size - 1, bool)      # grid intervals touched by a hysteresis loop

    def midpoint(i: int) -> float:
        return 0.5 * (mu[i] + mu[i + 1])

    for i0, i1 in _runs(n_d - n_a > _LOOP_TOLERANCE_SITES):
        in_loop[max(i0 - 1, 0):min(i1 + 1, mu.size - 2) + 1] = True
        d_omega = om_a - om_d              # > 0 where desorption is the lower (stable) state
        k_eq = None
        for k in range(max(i0 - 1, 0), min(i1 + 1, mu.size - 1)):
            if d_omega[k] <= 0 < d_omega[k + 1]:
                k_eq = k
                break
        if k_eq is None:
            k_eq = i1 if d_omega[i0] <= 0 else max(i0 - 1, 0)
        k_eq = min(k_eq, mu.size - 2)
        a, b = d_omega[k_eq], d_omega[k_eq + 1]
        t = float(np.clip(-a / (b - a), 0.0, 1.0)) if b != a else 0.5
        mu_eq = mu[k_eq] + t * (mu[k_eq + 1] - mu[k_eq])
        added = float(np.interp(mu_eq, mu, n_d - n_a))
        up = midpoint(i1) if i1 < mu.size - 1 else None
        down = midpoint(i0 - 1) if i0 > 0 else None
        delta = iso.desorption.occupancy[k_eq + 1] - iso.adsorption.occupancy[k_eq]
        steps.append(Step(
            "first-order", float(mu_eq), float(setup.pressure_pa(mu_eq)),
            float(setup.pressure_pa(mu_eq) / setup.saturation_pressure_pa), added * scale, added,
            _filling(iso, delta), up, down,
            None if up is None else float(setup.pressure_pa(up)),
            None if down is None else float(setup.pressure_pa(down))))

    # continuous steps: peaks of the equilibrium slope, first-order jumps left out
    eq = iso.equilibrium_occupancy()
    n_eq = eq @ setup.problem.weights
    slope = np.diff(n_eq) / np.diff(mu)
    slope[in_loop] = 0.0               # loops are first-order steps, reported above
    padded = np.concatenate([[0.0], slope, [0.0]])
    peaks, _ = find_peaks(padded)
    minima = np.concatenate([[0], find_peaks(-padded)[0], [padded.size - 1]])
    for pk in peaks:
        left = minima[minima < pk].max()
        right = minima[minima > pk].min()
        lo_i, hi_i = max(left - 1, 0), min(right - 1, mu.size - 1)     # padded index j ↔ point j−1 .. j
        if np.any(in_loop[max(pk - 4, 0):pk + 3]):
            continue                   # the rounded shoulder of a first-order step, not a step of its own
        added = float(np.sum(slope[lo_i:hi_i] * np.diff(mu)[lo_i:hi_i]))
        if added < _MIN_STEP_SITES:
            continue
        if padded[pk] < 3.0 * max(padded[left], padded[right]):
            continue
        k = pk - 1
        mu_s = midpoint(k)
        delta = eq[hi_i] - eq[lo_i]
        steps.append(Step("continuous", float(mu_s), float(setup.pressure_pa(mu_s)),
                          float(setup.pressure_pa(mu_s) / setup.saturation_pressure_pa), float(added) * scale,
                          float(added), _filling(iso, delta)))
    return sorted(steps, key=lambda s: s.mu_k)
