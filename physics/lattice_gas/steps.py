"""Layer steps of an isotherm, found from the branch arrays: first-order jumps and continuous sharp rises.

Everything is read off the *equilibrium* curve, the lower-Ω of the two branches at each μ (or, where a
state of neither branch lies lower, the lowest of all states found: `porefill.physics.lattice_gas.multistart`):

- a **first-order step** is a point where the equilibrium passes from the adsorption branch to a
  desorption branch that holds more (their grand potentials cross while the branches differ); its
  hysteresis loop is the run of μ, around the crossing, over which the branches differ. A run where
  the branches differ but Ω never crosses is a metastable excursion, not a step of the equilibrium.
- a **continuous step** is a peak of the equilibrium compressibility dN/dμ between two minima, with the
  first-order jumps taken out; the grid finds it, and (with ``refine_peak``) the maximum of dN/dμ of the
  re-solved states locates it, independent of the grid.

Thresholds are fractions of the pore's own number of sites, so they scale with the pore. Every reported
step adds a positive amount; each symmetry orbit of sites is named in the one step where it fills most,
so a set of sites appears in one step only. ``Step.identity`` (kind and the sites it fills) follows a step
across pore sizes and temperatures.
"""
from __future__ import annotations

from collections import Counter
from dataclasses import asdict, dataclass, replace

import numpy as np
from scipy.signal import find_peaks

__all__ = ["Step", "find_steps", "condensation_step", "row_key", "steps_by_row"]

_DIFFER_FRACTION = 1e-6      # branches differing by more than this fraction of all sites form a loop
_MIN_STEP_FRACTION = 1e-3    # a step adds at least this fraction of all sites
_PEAK_CONTRAST = 3.0         # a continuous step's dN/dμ peak stands this many times above its flanks
_FILL_MIN = 0.2              # an orbit "fills" in a step when its occupancy rises by at least this much


@dataclass(frozen=True)
class Step:
    """One layer step. μ in K, pressures in Pa, amounts per nm of pore length (slit: per nm²)."""

    kind: str                          # "first-order" or "continuous"
    mu_k: float
    pressure_pa: float
    relative_pressure: float
    added_per_nm: float
    added_sites_per_slice: float
    filling: tuple                     # ((label, number of sites), ...), deepest first
    adsorption_jump_mu_k: float | None = None     # hysteresis loop ends (first order); None: beyond range
    desorption_jump_mu_k: float | None = None
    adsorption_jump_pressure_pa: float | None = None
    desorption_jump_pressure_pa: float | None = None
    identity: str = ""                 # kind and the sites it fills (no counts), numbered when repeated
    spread_pressure_pa: tuple | None = None   # a pore between two row counts: the two lattices' pressures
    share: float = 1.0                 # the part of the pore it happens in (a step of one lattice of a blend)

    @property
    def where(self) -> str:
        """The sites the step fills with their counts, e.g. 'corner (6), face (12)'; 'spread' when no orbit
        fills on its own. The step table, the CSV summary, the report and the page all show this."""
        where = ", ".join(f"{name} ({count:g})" for name, count in self.filling) or "spread"
        return where + self.blend_words

    @property
    def blend_words(self) -> str:
        """'' for a step of one lattice; for a pore between two row counts (`porefill.physics.lattice_gas.row_blend`)
        the pressures of its two lattices, or the part of the pore a step of one of them stands for."""
        if self.share < 1.0:
            return f"; {self.share:.0%} of the pore (one lattice)"
        if self.spread_pressure_pa is not None:
            lo, hi = self.spread_pressure_pa
            return f"; two lattices: {lo:.2g}–{hi:.2g} Pa"
        return ""

    @property
    def label(self) -> str:
        where = ", ".join(f"{name} ({count:g} sites)" for name, count in self.filling) or "spread over the pore"
        return f"{where}: {self.kind}{self.blend_words}"

    def to_dict(self) -> dict:
        d = asdict(self)
        d["filling"] = [{"where": name, "sites": count} for name, count in self.filling]
        d["label"] = self.label
        return d


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """(first, last) index of every run of True."""
    edges = np.diff(np.concatenate([[0], mask.astype(np.int8), [0]]))
    return list(zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1))


def find_steps(mu, occupancy_ads, occupancy_des, omega_ads, omega_des, *, weights, labels, order,
               pressure_pa, saturation_pressure_pa: float, per_site: float, refine=None,
               refine_peak=None, occupancy_eq=None, transitions=None) -> tuple[Step, ...]:
    """Layer steps from the two branches on a common ascending μ grid.

    Parameters
    ----------
    mu : (M,) chemical potentials, K, ascending
    occupancy_ads, occupancy_des : (M, O) occupancy of each site orbit on the two branches
    omega_ads, omega_des : (M,) grand potentials, K
    weights : (O,) sites per orbit; labels : (O,) where each orbit sits; order : (O,) sort key (deepest first)
    pressure_pa : callable μ (K) → p (Pa)
    saturation_pressure_pa : p0, Pa
    per_site : amount (per nm) of one occupied site per lattice slice
    refine : callable, optional
        ``refine(k0, k1) -> (μ_eq, sites added, (O,) occupancy rise)``: the equilibrium transition between
        grid points k0 < k1, from the adsorption state at k0 and the desorption state at k1 (see
        `porefill.physics.lattice_gas.adsorption`); without it, linear interpolation of Ω on the grid.

    occupancy_eq : (M, O), optional
        the equilibrium's occupancy when it is not simply the lower of the two branches (states found from
        other starts, `porefill.physics.lattice_gas.multistart`)
    transitions : callable, optional
        ``transitions(i0, i1)``: the equilibrium's first-order transitions, each (μ_eq, sites added, (O,)
        rise), over the run i0…i1 where the branches differ, or None where the equilibrium there is one of
        the two branches (then the two-branch rule above applies)

    A first-order step's loop ends (``adsorption_jump_mu_k``, ``desorption_jump_mu_k``) are the first grid
    points past the jumps of the two branches, so the equilibrium always lies between them.
    """
    mu = np.asarray(mu, float)
    w = np.asarray(weights, float)
    total = float(w.sum())
    n_a, n_d = occupancy_ads @ w, occupancy_des @ w
    gap = n_d - n_a
    d_omega = omega_ads - omega_des                      # > 0 where desorption is the lower state
    rounding = 1e-9 * (1.0 + np.abs(omega_ads))
    use_des = d_omega > rounding
    occ_eq = np.where(use_des[:, None], occupancy_des, occupancy_ads) if occupancy_eq is None else occupancy_eq
    n_eq = occ_eq @ w
    differ = gap > _DIFFER_FRACTION * total
    min_add = _MIN_STEP_FRACTION * total

    def p(m):
        return float(pressure_pa(m))

    found: list[tuple[dict, np.ndarray]] = []          # (step fields, orbit occupancy rise)
    jumps = np.zeros(mu.size - 1, bool)
    for i0, i1 in _runs(differ):
        lo_k, hi_k = max(i0 - 1, 0), min(i1 + 1, mu.size - 1)
        if lo_k == i0 or hi_k == i1:
            continue                   # the loop runs off the grid: its transition is outside the range
        several = transitions(i0, i1) if transitions is not None else None
        if several is not None:        # the equilibrium passes through states of neither branch here
            for mu_eq, added, rise in several:
                if added > min_add:
                    found.append((dict(kind="first-order", mu_k=float(mu_eq), added=float(added),
                                       up=float(mu[hi_k]), down=float(mu[lo_k])), np.asarray(rise)))
            jumps[lo_k:hi_k] = True
            continue
        # every place where the equilibrium passes from the adsorption branch to the desorption branch is a
        # transition: one run can hold several (two rows filling in turn while both branches are still
        # jumping: the equilibrium goes back to the adsorption branch in between only because that branch
        # has caught up, not by a transition)
        cross = [(k, k + 1) for k in range(lo_k, hi_k) if not use_des[k] and use_des[k + 1]]
        if not cross:
            # adsorption lower all through: Ω crosses just before its jump; desorption lower all through:
            # just after its jump down
            cross = [(i1, hi_k)] if d_omega[i0:i1 + 1].max() <= 0 else [(lo_k, i0)]
        for k0, k1 in cross:
            if refine is not None:
                mu_eq, added, rise = refine(k0, k1)
            else:
                a, b = d_omega[k0], d_omega[k1]
                t = float(np.clip(-a / (b - a), 0.0, 1.0)) if b != a else 0.5
                mu_eq = float(mu[k0] + t * (mu[k1] - mu[k0]))
                added = float(max(gap[k0], gap[k1]))
                rise = occupancy_des[k1] - occupancy_ads[k0]
            if added <= min_add:
                continue               # the branches part without a jump of the equilibrium
            jumps[lo_k:hi_k] = True
            found.append((dict(kind="first-order", mu_k=float(mu_eq), added=float(added), up=float(mu[hi_k]),
                               down=float(mu[lo_k])), np.asarray(rise)))

    slope = np.diff(n_eq) / np.diff(mu)
    slope[jumps] = 0.0                                 # the jumps are reported above
    padded = np.concatenate([[0.0], slope, [0.0]])
    minima = np.concatenate([[0], find_peaks(-padded)[0], [padded.size - 1]])
    near_jump = np.convolve(jumps.astype(float), np.ones(5), mode="same") > 0
    for pk in find_peaks(padded)[0]:
        left, right = minima[minima < pk].max(), minima[minima > pk].min()
        lo_i, hi_i = max(left - 1, 0), min(right - 1, mu.size - 1)   # padded index j ↔ interval j−1
        if near_jump[pk - 1]:
            continue                   # the rounded shoulder of a first-order jump, not a step of its own
        if padded[pk] < _PEAK_CONTRAST * max(padded[left], padded[right]):
            continue
        added = float(n_eq[hi_i] - n_eq[lo_i] - np.sum(np.diff(n_eq)[lo_i:hi_i][jumps[lo_i:hi_i]]))
        if added <= min_add:
            continue
        if refine_peak is not None:    # the slope's peak interval and one on either side hold the maximum
            mu_s = float(refine_peak(max(pk - 2, 0), min(pk + 1, mu.size - 1)))
        else:
            mu_s = float(0.5 * (mu[pk - 1] + mu[pk]))
        found.append((dict(kind="continuous", mu_k=mu_s, added=added, up=None, down=None),
                      occ_eq[hi_i] - occ_eq[lo_i]))

    # each orbit is named in the step where its occupancy rises most
    rises = np.array([r for _, r in found]) if found else np.zeros((0, w.size))
    owner = np.argmax(rises, axis=0) if found else np.zeros(0, int)
    steps = []
    for s, (fields, rise) in enumerate(found):
        big = (rise > max(_FILL_MIN, 0.5 * float(rise.max(initial=0.0)))) & (owner == s)
        counts: Counter = Counter()
        first: dict[str, float] = {}
        for o in np.flatnonzero(big):
            counts[labels[o]] += w[o]
            first[labels[o]] = min(first.get(labels[o], np.inf), order[o])
        filling = tuple((name, float(counts[name])) for name in sorted(counts, key=first.get))
        up, down = fields["up"], fields["down"]
        steps.append(Step(
            fields["kind"], fields["mu_k"], p(fields["mu_k"]), p(fields["mu_k"]) / saturation_pressure_pa,
            fields["added"] * per_site, fields["added"], filling, up, down,
            None if up is None else p(up), None if down is None else p(down)))
    steps.sort(key=lambda s: s.mu_k)
    # identity: what fills, without counts, so a step can be followed across sizes and temperatures; a
    # second step filling sites of the same names (another orbit of ring 1, say) is numbered
    seen: Counter = Counter()
    named = []
    for s in steps:
        base = f"{s.kind}: " + (" + ".join(name for name, _ in s.filling) or "spread")
        seen[base] += 1
        named.append(replace(s, identity=base if seen[base] == 1 else f"{base} #{seen[base]}"))
    return tuple(named)


def condensation_step(steps) -> Step | None:
    """The capillary condensation among ``steps``: the last step that fills the pore's centre (its sites
    labelled 'centre'), else the one that adds most; None when there are no steps."""
    steps = tuple(steps)
    if not steps:
        return None
    centre = [s for s in steps if any(name == "centre" for name, _ in s.filling)]
    return centre[-1] if centre else max(steps, key=lambda s: s.added_per_nm)


def row_key(step: Step) -> str:
    """The row a step fills first (its deepest sites' label: 'corner', 'face', 'ring 1', ...; 'spread')."""
    return step.filling[0][0] if step.filling else "spread"


def steps_by_row(steps) -> dict:
    """{(row it fills first, n): step} of the steps of the whole pore, the n-th step into that row counting from
    1 — a key that follows a step from one pore size to the next. A step of one lattice of a pore between two row
    counts (``share`` < 1, `porefill.physics.lattice_gas.row_blend`) is left out: it fades in or out with that
    lattice's weight."""
    out, seen = {}, {}
    for s in steps:
        if s.share < 1.0:
            continue
        key = row_key(s)
        seen[key] = seen.get(key, 0) + 1
        out[(key, seen[key])] = s
    return out
