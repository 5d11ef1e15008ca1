"""A pore between two row counts: the lever-rule mixture of the lattices either side of it.

Sites sit in rows that follow the wall (`porefill.physics.sites.placement`): m row steps of the fluid's own
spacing Δ between the first row and the centre fit the pore unstrained only where D/Δ is a whole number. Between
two such sizes the lattice must be stretched (m rows) or compressed (m + 1 rows), and rounding D/Δ to pick one
makes every isotherm, step and sized answer jump where the rounding flips (nitrogen's condensation by up to
0.095 in p/p0; helium's second-layer step by up to 3 decades of pressure).

Here a pore with D/Δ = m + w (0 < w < 1) is the mixture of the two neighbouring lattices, the m-row one with
weight 1 − w and the (m+1)-row one with weight w — the lever rule between the two sizes where each lattice fits
unstrained, as in a sample whose pores hold m rows in one part and m + 1 in the other. Every amount is the
weighted sum of the two lattices' amounts at the same μ (per Å of pore, and the liquid cross-section a per-gram
amount is counted on), so the isotherm, its branches and the sized answers are continuous in the pore's size and
equal to the one lattice's where D/Δ is whole.

The layer steps are paired between the two lattices (the condensation with the condensation, the others by
what they fill) and each pair is listed once at the weighted mean of their chemical potentials, with both
lattices' pressures kept as its spread; a step only one lattice has is listed with its share of the pore.
Maps of sites show the heavier lattice.

No published source: a lattice-model choice of this project (common practice, no source), checked by the
limits above (tests/test_row_blend.py).
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from porefill.physics.lattice_gas.adsorption import Isotherm
from porefill.physics.lattice_gas.steps import Step, condensation_step, row_key
from porefill.physics.substances.units import AmountBasis

__all__ = ["blend_weights", "BlendedIsotherm", "blend_isotherms", "blend_steps", "WHOLE_TOLERANCE"]

WHOLE_TOLERANCE = 1e-9       # D/Δ this close to a whole number holds one lattice
_MIN_SHARE = 1e-3            # a step of one lattice alone is listed when it adds this share of the full pore


def blend_weights(row_fraction: float) -> tuple[tuple[float, int], ...]:
    """((weight, row steps m), ...) of the lattices a pore with D/Δ = ``row_fraction`` is mixed from: one
    lattice where D/Δ is whole, else m = ⌊D/Δ⌋ with 1 − w and m + 1 with w = D/Δ − m; heavier first."""
    r = float(row_fraction)
    if not np.isfinite(r) or r < 0:
        raise ValueError(f"row fraction must be a finite number >= 0; got {row_fraction!r}")
    low = int(np.floor(r))
    w = r - low
    if w <= WHOLE_TOLERANCE:
        return ((1.0, low),)
    if w >= 1.0 - WHOLE_TOLERANCE:
        return ((1.0, low + 1),)
    parts = ((1.0 - w, low), (w, low + 1))
    return parts if w <= 0.5 else parts[::-1]


@dataclass(frozen=True, eq=False)
class BlendedIsotherm(Isotherm):
    """The mixture of two lattices' isotherms (module notes). The inherited fields (stage, branches, the
    equilibrium's states) are the heavier lattice's, which maps of sites show; amounts and steps are the
    mixture's."""

    parts: tuple = ()                  # ((weight, Isotherm), ...), heavier first, weights summing to 1

    @property
    def lattices(self) -> tuple:
        return self.parts

    @property
    def row_note(self) -> str:
        """One sentence on the mixture, for exports and the page."""
        words = [f"{w:.0%} with {iso.stage.geometry.rows} row steps" for w, iso in self.parts]
        r = self.stage.geometry.row_fraction
        return (f"the pore holds {r:.3f} row steps of the fluid's spacing between its first row and its centre: "
                f"mixed from the two lattices either side, {' and '.join(words)} (lever rule); sites shown are "
                f"the {self.stage.geometry.rows}-step lattice's")

    def _name(self, branch) -> str:
        if isinstance(branch, str):
            return branch
        for name in ("adsorption", "desorption"):
            if branch is getattr(self, name):
                return name
        raise ValueError("a blended isotherm takes its branches by name ('adsorption', 'desorption', "
                         "'equilibrium')")

    def amount_basis(self, pore_volume_cm3_g: float | None = None) -> AmountBasis:
        bases = [iso.amount_basis(pore_volume_cm3_g) for _, iso in self.parts]
        area = sum(w * b.area_angstrom2 for (w, _), b in zip(self.parts, bases))
        return replace(bases[0], area_angstrom2=float(area))

    def per_angstrom(self, branch) -> np.ndarray:
        name = self._name(branch)
        return sum(w * iso.per_angstrom(name) for w, iso in self.parts)

    def sites_filled(self, branch) -> np.ndarray:
        """Occupied sites per slice of the heavier lattice that hold the mixture's amount."""
        return self.per_angstrom(branch) / self.stage.geometry.atoms_per_angstrom_per_site

    def fraction(self, branch) -> np.ndarray:
        name = self._name(branch)
        return sum(w * iso.fraction(name) for w, iso in self.parts)

    def grand_potential_per_nm(self, branch) -> np.ndarray:
        name = self._name(branch)
        return sum(w * iso.grand_potential_per_nm(getattr(iso, name)) for w, iso in self.parts)

    def central_channel_occupancy(self, branch: str = "equilibrium") -> np.ndarray:
        return sum(w * iso.central_channel_occupancy(branch) for w, iso in self.parts)


def _merge(pair: list[tuple[float, Step]], scale) -> Step:
    """One step of the mixture from the same step of both lattices (weight, step), heavier first."""
    w0, s0 = pair[0]
    if len(pair) == 1:
        return replace(s0, added_per_nm=w0 * s0.added_per_nm, share=w0)
    mu = sum(w * s.mu_k for w, s in pair)
    p = float(scale.pressure_pa(mu))

    def loop_end(name):
        # a continuous step has no loop: both its ends are its own μ
        values = [s.mu_k if s.kind == "continuous" else getattr(s, name) for _, s in pair]
        return None if any(v is None for v in values) else float(sum(w * v for (w, _), v in zip(pair, values)))

    ads, des = loop_end("adsorption_jump_mu_k"), loop_end("desorption_jump_mu_k")
    pressures = sorted(s.pressure_pa for _, s in pair)
    return replace(s0, mu_k=float(mu), pressure_pa=p, relative_pressure=p / scale.saturation_pressure_pa,
                   added_per_nm=float(sum(w * s.added_per_nm for w, s in pair)),
                   adsorption_jump_mu_k=ads, desorption_jump_mu_k=des,
                   adsorption_jump_pressure_pa=None if ads is None else float(scale.pressure_pa(ads)),
                   desorption_jump_pressure_pa=None if des is None else float(scale.pressure_pa(des)),
                   spread_pressure_pa=(float(pressures[0]), float(pressures[-1])), share=1.0)


def _fills_centre(step: Step) -> bool:
    return any(name == "centre" for name, _ in step.filling)


def blend_steps(parts, scale, full_per_nm: float) -> tuple[Step, ...]:
    """The mixture's steps from ((weight, steps), ...) of its lattices, heavier first (module notes).

    The condensations (`condensation_step`) pair with each other; the other steps pair by the row they fill
    first, counted from the wall (the n-th step into a row of one lattice with the n-th into the same row of
    the other), whatever their order (first-order or continuous); a step left alone is kept with its
    lattice's weight when it adds at least ``_MIN_SHARE`` of ``full_per_nm`` (the mixture's full pore, per
    nm). Ascending in μ.
    """
    if len(parts) == 1:
        return tuple(parts[0][1])
    (wa, a), (wb, b) = parts
    pairs: list[list[tuple[float, Step]]] = []
    ca, cb = condensation_step(a), condensation_step(b)
    if ca is not None and cb is not None and _fills_centre(ca) == _fills_centre(cb):
        # a condensation pairs with a condensation; where only one lattice's list has the step that fills the
        # centre (the other's fell out of its step list), the largest step of the other is no partner for it
        pairs.append([(wa, ca), (wb, cb)])
        a = [s for s in a if s is not ca]
        b = [s for s in b if s is not cb]
    rest_b = list(b)
    for s in a:
        match = next((t for t in rest_b if row_key(t) == row_key(s)), None)
        if match is not None:
            rest_b.remove(match)
            pairs.append([(wa, s), (wb, match)])
        else:
            pairs.append([(wa, s)])
    pairs += [[(wb, t)] for t in rest_b]
    merged = [_merge(p, scale) for p in pairs]
    kept = [s for s in merged if s.share == 1.0 or s.added_per_nm >= _MIN_SHARE * full_per_nm]
    return tuple(sorted(kept, key=lambda s: s.mu_k))


def blend_isotherms(parts) -> Isotherm:
    """The `BlendedIsotherm` of ((weight, Isotherm), ...), all on one μ grid; one part is returned as it is."""
    parts = tuple((float(w), iso) for w, iso in parts)
    if len(parts) == 1:
        return parts[0][1]
    heavy = parts[0][1]
    if any(iso.mu.shape != heavy.mu.shape or not np.array_equal(iso.mu, heavy.mu) for _, iso in parts):
        raise ValueError("the lattices of a blend must share one μ grid")
    full = sum(w * iso.per_nm_per_site() * iso.stage.problem.weights.sum() for w, iso in parts)
    steps = blend_steps([(w, iso.steps) for w, iso in parts], heavy.stage.scale, float(full))
    return BlendedIsotherm(heavy.stage, heavy.mu, heavy.adsorption, heavy.desorption, steps, heavy.equilibrium,
                           parts)
