"""Layer steps of an isotherm, found from the branch arrays: first-order jumps and continuous sharp rises.

Everything is read off the *equilibrium* curve, the lower-Ω of the two branches at each μ (or, where a
state of neither branch lies lower, the lowest of all states found: `porefill.physics.lattice_gas.multistart`):

- a **first-order step** is a point where the equilibrium passes from the adsorption branch to a
  desorption branch that holds more (their grand potentials cross while the branches differ); its
  hysteresis loop is the run of μ, around the crossing, over which the branches differ. A run where
  the branches differ but Ω never crosses is a metastable excursion, not a step of the equilibrium.
- a **continuous step** is a peak of the equilibrium compressibility dN/dμ between two minima, with the
  first-order jumps taken out; the grid finds it, and (with ``refine_peak``) the maximum of dN/dμ of the
  re-solved states locates it, independent of the grid. Whether a peak stands out (``_PEAK_CONTRAST`` times
  its flanks) is decided on the exact dN/dμ (``slope_at``) wherever the grid cannot tell: a peak narrower
  than the grid's spacing, and one beside a first-order jump, where a step of its own dips before the jump
  and the jump's rounded shoulder does not.
- a **hidden first-order step** is one the grid does not show: a loop narrower than the grid's spacing
  (both branches jump in one interval) or, inside a loop, a branch that jumps onto a state that is the
  equilibrium on both sides of the jump (``refine_hidden``: two states coexist in the interval).

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
_GRID_CONTRAST_FLOOR = 1.2   # below this on the grid a peak is not looked at again (``slope_at``)
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
    lead: str = ""                     # where most of the sites it adds sit, named or not (`row_key`)

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
               refine_peak=None, occupancy_eq=None, transitions=None, refine_hidden=None, slope_at=None,
               state_at=None) -> tuple[Step, ...]:
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
    slope_at : callable, optional
        ``slope_at(μ) -> dN/dμ`` of the equilibrium, exact: a peak that stands less than ``_PEAK_CONTRAST``
        above its flanks on the grid (but at least ``_GRID_CONTRAST_FLOOR``) is measured again with it
    state_at : callable, optional
        ``state_at(μ, k0, k1) -> (O,) occupancy`` of the equilibrium re-solved at μ from its grid states
        k0…k1: where the exact dN/dμ shows two peaks inside one of the grid's, each is a step of its own
    refine_hidden : callable, optional
        ``refine_hidden(k0, k0 + 1, quick=False) -> (μ_eq, sites added, (O,) rise)``: `refine` from the
        equilibrium's own states at both grid points (`porefill.physics.lattice_gas.adsorption.hidden_transition`),
        asked where the equilibrium's slope peaks (a first-order step whose loop is narrower than the grid,
        its loop ends the two points) and, ``quick``, at every rise of the equilibrium inside a hysteresis
        loop (a branch that jumps onto a state that is the equilibrium on both sides)
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
    runs_seen: list[tuple[int, int]] = []
    for i0, i1 in _runs(differ):
        lo_k, hi_k = max(i0 - 1, 0), min(i1 + 1, mu.size - 1)
        if lo_k == i0 or hi_k == i1:
            continue                   # the loop runs off the grid: its transition is outside the range
        runs_seen.append((lo_k, hi_k))
        several = transitions(i0, i1) if transitions is not None else None
        if several is not None:        # the equilibrium passes through states of neither branch here
            for mu_eq, added, rise in several:
                if added > min_add:
                    found.append((dict(kind="first-order", mu_k=float(mu_eq), added=float(added),
                                       up=float(mu[hi_k]), down=float(mu[lo_k])), np.asarray(rise)))
                    # a transition out of the run (a state continued beyond it) is a jump of the equilibrium
                    jumps[int(np.clip(np.searchsorted(mu, mu_eq) - 1, 0, mu.size - 2))] = True
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

    if refine_hidden is not None:
        # inside a run, a branch can jump between two grid points onto a state that is the equilibrium on
        # both sides of the jump (the adsorption branch past its spinodal onto a thicker film, while the
        # desorption branch still holds more): the equilibrium changes state with no change of branch
        placed = [f["mu_k"] for f, _ in found if f["kind"] == "first-order"]
        for lo_k, hi_k in runs_seen:
            for k in range(lo_k, hi_k):
                if n_eq[k + 1] - n_eq[k] <= min_add or any(mu[k] <= m <= mu[k + 1] for m in placed):
                    continue
                mu_eq, jump, rise = refine_hidden(k, k + 1, quick=True)
                if jump > min_add:
                    found.append((dict(kind="first-order", mu_k=float(mu_eq), added=float(jump),
                                       up=float(mu[hi_k]), down=float(mu[lo_k])), np.asarray(rise)))

    slope = np.diff(n_eq) / np.diff(mu)
    slope[jumps] = 0.0                                 # the jumps are reported above
    padded = np.concatenate([[0.0], slope, [0.0]])
    minima = np.concatenate([[0], find_peaks(-padded)[0], [padded.size - 1]])
    in_jump = np.concatenate([[False], jumps, [False]])        # padded index j ↔ interval j−1
    for pk in find_peaks(padded)[0]:
        left, right = minima[minima < pk].max(), minima[minima > pk].min()
        lo_i, hi_i = max(left - 1, 0), min(right - 1, mu.size - 1)   # padded index j ↔ interval j−1
        # each flank: the lowest slope between the peak and its minimum, up to a first-order jump's masked
        # intervals (then the jump's grid point: the step's own rise stops there)
        flanks, jump_at = [], [None, None]
        for s, side in enumerate((range(pk - 1, left - 1, -1), range(pk + 1, right + 1))):
            seen = []
            for j in side:
                if in_jump[j]:
                    jump_at[s] = j
                    lo_i, hi_i = (max(lo_i, j), hi_i) if s == 0 else (lo_i, min(hi_i, j - 1))
                    break
                seen.append(j)
            flanks.append(min(seen, key=lambda j: padded[j]) if seen else None)
        shoulder = any(j is not None and f is None for j, f in zip(jump_at, flanks))
        # a side that runs into a jump is measured exactly (`_exact_peak`): its grid values stop short of its
        # minimum
        contrast = padded[pk] / max([padded[f] for f, j in zip(flanks, jump_at) if f is not None and j is None]
                                    + [1e-300])
        if contrast < (_PEAK_CONTRAST if slope_at is None else _GRID_CONTRAST_FLOOR):
            continue
        added = float(n_eq[hi_i] - n_eq[lo_i] - np.sum(np.diff(n_eq)[lo_i:hi_i][jumps[lo_i:hi_i]]))
        if added <= min_add:
            continue
        if contrast >= _PEAK_CONTRAST and refine_hidden is not None and n_eq[pk] - n_eq[pk - 1] > min_add:
            # a loop narrower than the grid's spacing: the equilibrium jumps inside the peak's interval, but
            # both branches jump there too and agree at every grid point. The bisection keeps two states
            # apart only where two coexist; a continuous rise leaves one (nothing added)
            mu_eq, jump, rise = refine_hidden(pk - 1, pk)
            if jump > min_add:
                found.append((dict(kind="first-order", mu_k=float(mu_eq), added=float(jump), up=float(mu[pk]),
                                   down=float(mu[pk - 1])), np.asarray(rise)))
                continue
        if slope_at is None:
            if shoulder:
                continue               # the rounded shoulder of a first-order jump, not a step of its own
            mu_s = float(refine_peak(max(pk - 2, 0), min(pk + 1, mu.size - 1))) if refine_peak is not None \
                else float(0.5 * (mu[pk - 1] + mu[pk]))
        else:
            transitions_mu = [f["mu_k"] for f, _ in found if f["kind"] == "first-order"]
            mu_s = _exact_peak(mu, pk, flanks, jump_at, transitions_mu, slope_at, refine_peak,
                               check=contrast < _PEAK_CONTRAST or any(j is not None for j in jump_at))
            if mu_s is None:
                continue
            if state_at is not None:
                parts = _merged_peaks(mu, pk, lo_i, hi_i, padded, in_jump, slope_at, state_at)
                if parts is not None:  # two steps closer than the grid shows: each its own
                    bounds = [occ_eq[lo_i]] + [occ for _, occ in parts[:-1]] + [occ_eq[hi_i]]
                    for (m, _), lo_occ, hi_occ in zip(parts, bounds, bounds[1:]):
                        if float(w @ (hi_occ - lo_occ)) > min_add:
                            found.append((dict(kind="continuous", mu_k=m, added=float(w @ (hi_occ - lo_occ)),
                                               up=None, down=None), hi_occ - lo_occ))
                    continue
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
        lead = str(labels[int(np.argmax(rise * w))]) if rise.size else ""
        up, down = fields["up"], fields["down"]
        steps.append(Step(
            fields["kind"], fields["mu_k"], p(fields["mu_k"]), p(fields["mu_k"]) / saturation_pressure_pa,
            fields["added"] * per_site, fields["added"], filling, up, down,
            None if up is None else p(up), None if down is None else p(down), lead=lead))
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


def _exact_peak(mu, pk: int, flanks, jump_at, transitions_mu, slope_at, refine_peak, *, check: bool):
    """μ of a continuous step's dN/dμ maximum near the grid's peak interval ``pk`` (padded index), or None
    where the exact dN/dμ does not stand ``_PEAK_CONTRAST`` times above both flanks (asked when ``check``).

    The grid's differences flatten a peak narrower than its spacing, and beside a first-order jump the
    grid cannot tell a step of its own from the jump's rounded shoulder. So the contrast is taken from
    dN/dμ itself: at the peak, at the grid points that bound a flank's lowest interval, and on a side that
    runs into a jump, at the lowest dN/dμ of the equilibrium's own state between the peak and the jump's
    transition (a shoulder rises all the way to it; a step of its own dips first). Whether a step is
    listed then does not depend on the grid."""
    from scipy.optimize import minimize_scalar

    lo_k, hi_k = 0, mu.size - 1                # the grid points whose states are the peak's own
    ends = [None, None]
    if jump_at[0] is not None:                 # a jump on the left: the state above its last transition
        g = jump_at[0]
        below = [m for m in transitions_mu if m <= mu[g]]
        ends[0] = max(below) if below else float(mu[g - 1])
        lo_k = int(np.searchsorted(mu, ends[0], side="right"))
    if jump_at[1] is not None:                 # a jump on the right: the state below its first transition
        g = jump_at[1] - 1
        above = [m for m in transitions_mu if m >= mu[g]]
        ends[1] = min(above) if above else float(mu[min(g + 1, mu.size - 1)])
        hi_k = int(np.searchsorted(mu, ends[1], side="left")) - 1
    if hi_k <= lo_k:
        return None
    k0, k1 = max(pk - 2, lo_k), min(pk + 1, hi_k)
    mu_s = float(refine_peak(k0, k1)) if refine_peak is not None and k1 > k0 else float(0.5 * (mu[pk - 1] + mu[pk]))
    if not check:
        return mu_s

    def slope(m):
        return slope_at(m, lo_k, hi_k)

    flank = 0.0
    for s in (0, 1):
        if ends[s] is not None:
            a, b = (ends[s], mu_s) if s == 0 else (mu_s, ends[s])
            if b - a <= 0.0:
                return None
            res = minimize_scalar(slope, bounds=(a + 1e-9 * (b - a), b - 1e-9 * (b - a)), method="bounded",
                                  options={"xatol": 1e-3 * (b - a)})   # a flank value to a few %
            flank = max(flank, float(res.fun))
        elif flanks[s] is not None and 1 <= flanks[s] <= mu.size - 1:
            flank = max(flank, min(slope(mu[flanks[s] - 1]), slope(mu[flanks[s]])))
    return mu_s if slope(mu_s) >= _PEAK_CONTRAST * flank else None


def _merged_peaks(mu, pk: int, lo_i: int, hi_i: int, padded, in_jump, slope_at, state_at):
    """Two or more continuous steps that the grid shows as one peak: the exact dN/dμ sampled at a quarter of
    the grid's spacing over the intervals around the peak where the grid's slope stays above a sixth of the
    peak's; its maxima and the dips between them are refined (bounded Brent), and those maxima that stand
    ``_PEAK_CONTRAST`` times above the dips either side are steps. Returns [(μ of each maximum, occupancy at
    the dip above it), ...] (None for the last: the step's own end), or None where one maximum stands out
    (the step as found)."""
    from scipy.optimize import minimize_scalar

    floor = padded[pk] / (2.0 * _PEAK_CONTRAST)
    a = b = pk                                   # padded indices of the region's intervals
    while a - 1 >= lo_i + 1 and not in_jump[a - 1] and padded[a - 1] >= floor:
        a -= 1
    while b + 1 <= hi_i and not in_jump[b + 1] and padded[b + 1] >= floor:
        b += 1
    k0, k1 = a - 1, b                            # the grid points bounding the region
    m = np.unique(np.concatenate([np.linspace(mu[i], mu[i + 1], 5) for i in range(k0, k1)]))
    s = np.array([slope_at(x, k0, k1) for x in m])
    top = find_peaks(np.concatenate([[0.0], s, [0.0]]))[0] - 1
    if top.size < 2:
        return None

    def extreme(lo, hi, sign):
        res = minimize_scalar(lambda x: sign * slope_at(x, k0, k1), bounds=(m[max(lo, 0)], m[min(hi, m.size - 1)]),
                              method="bounded", options={"xatol": 1e-7})
        return float(res.x), sign * float(res.fun)

    peaks = [extreme(p - 1, p + 1, -1.0) for p in top]
    dips = [extreme(int(np.argmin(s[p:q + 1])) + p - 1, int(np.argmin(s[p:q + 1])) + p + 1, 1.0)
            for p, q in zip(top, top[1:])]
    ends = (float(s[:top[0] + 1].min()), float(s[top[-1]:].min()))
    lows = [ends[0]] + [d[1] for d in dips] + [ends[1]]
    keep = [i for i, (_, v) in enumerate(peaks) if v >= _PEAK_CONTRAST * max(lows[i], lows[i + 1])]
    if len(keep) < 2:
        return None
    out = []
    for n, i in enumerate(keep):
        if n + 1 < len(keep):                    # the lowest dip between this step and the next
            dip = min(dips[i:keep[n + 1]], key=lambda d: d[1])[0]
            out.append((peaks[i][0], state_at(dip, k0, k1)))
        else:
            out.append((peaks[i][0], None))
    return out


def condensation_step(steps) -> Step | None:
    """The capillary condensation among ``steps``: the last step that fills the pore's centre (its sites
    labelled 'centre'), else the one that adds most; None when there are no steps."""
    steps = tuple(steps)
    if not steps:
        return None
    centre = [s for s in steps if any(name == "centre" for name, _ in s.filling)]
    return centre[-1] if centre else max(steps, key=lambda s: s.added_per_nm)


def row_key(step: Step) -> str:
    """The row a step fills first (its deepest sites' label: 'corner', 'face', 'ring 1', ...). A step that
    names no sites of its own (each orbit is named in the step where it rises most) takes the row where most
    of the sites it adds sit, so a step does not change its key when a row's rise is shared out differently
    between two of its steps ('spread' where it says neither)."""
    return step.filling[0][0] if step.filling else (step.lead or "spread")


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
