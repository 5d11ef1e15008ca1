"""Isotherms of the mean-field lattice gas in one pore: from a Scenario to both branches at real pressures.

Flow (see `porefill.physics.lattice_gas.stages`): scenario → geometry stage (sites, potential over their cells) → thermal stage
(site free energies by the scenario's site model, ε_b, p0) → adsorption and desorption branches by
continuation → layer steps (`porefill.physics.lattice_gas.steps`) → an `Isotherm`, built once and complete.

Amounts are per lattice slice (one layer of sites, thickness ℓ along the axis) internally; `Isotherm`
converts them with `porefill.physics.substances.units` (atoms per nm of pore, per nm² of wall, fraction of the full pore,
mmol/g and cm³(STP)/g with a pore volume).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.choices import DEFAULT_POINTS
from porefill.physics.limits import check_points, check_pressure_range

from porefill.physics.lattice_gas.meanfield import Branch, solve_branch, solve_state
from porefill.physics.lattice_gas.multistart import EquilibriumStates, equilibrium_states
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import ThermalStage, thermal_stage
from porefill.physics.lattice_gas.steps import Step, find_steps
from porefill.physics.substances.units import AmountBasis, from_atoms_per_angstrom

__all__ = ["Isotherm", "compute_isotherm", "default_mu_range"]


@dataclass(frozen=True, eq=False)
class Isotherm:
    """Both branches on a common μ grid (ascending), the equilibrium (the lowest-Ω state found at each μ:
    `porefill.physics.lattice_gas.multistart`), and the layer steps."""

    stage: ThermalStage
    mu: np.ndarray
    adsorption: Branch                 # on mu, ascending
    desorption: Branch                 # on mu, ascending (solved descending)
    steps: tuple[Step, ...]
    equilibrium: EquilibriumStates

    @property
    def setup(self) -> ThermalStage:   # the name views and exports use
        return self.stage

    @property
    def lattices(self) -> tuple:
        """((weight, Isotherm), ...) of the lattices it is made of: itself alone, or the two of a pore between
        two row counts (`porefill.physics.lattice_gas.row_blend`)."""
        return ((1.0, self),)

    @property
    def row_note(self) -> str:
        """One sentence on the rows of sites the isotherm was computed with."""
        g = self.stage.geometry
        if abs(g.row_fraction - g.rows) <= 1e-9:
            return f"{g.rows} row steps between the first row and the centre fit the pore at the fluid's spacing"
        return (f"one lattice of {g.rows} row steps, strained to fit {g.row_fraction:.3f} steps of the fluid's "
                "spacing (rounded; not mixed with its neighbour)")

    # pressures -------------------------------------------------------------------------------
    @property
    def pressure_pa(self) -> np.ndarray:
        return self.stage.scale.pressure_pa(self.mu)

    @property
    def relative_pressure(self) -> np.ndarray:
        return self.stage.scale.relative_pressure(self.mu)

    # amounts ---------------------------------------------------------------------------------
    @property
    def basis(self) -> AmountBasis:
        """What turns atoms per Å into other amounts, with the scenario's pore volume."""
        return self.amount_basis(self.stage.scenario.pore_volume_cm3_g)

    def amount_basis(self, pore_volume_cm3_g: float | None = None) -> AmountBasis:
        """`AmountBasis` of this isotherm's pore (its liquid cross-section) with the pore volume given."""
        return AmountBasis.of(self.stage.geometry, pore_volume_cm3_g)

    def branch(self, name: str):
        """'adsorption', 'desorption' or 'equilibrium' (the lowest-Ω state found at each μ)."""
        if name == "equilibrium":
            return self.equilibrium_occupancy()
        if name not in ("adsorption", "desorption"):
            raise ValueError(f"branch must be adsorption, desorption or equilibrium; got {name!r}")
        return getattr(self, name).occupancy

    def measured_branch(self, leg: str) -> str:
        """The branch ('adsorption', 'desorption' or 'equilibrium') a measured ``leg`` follows, by the
        scenario's pore ends (`porefill.physics.lattice_gas.branches`)."""
        from porefill.physics.lattice_gas.branches import measured_branches
        return measured_branches(self.stage.scenario.pore_ends, self.stage.scenario.adsorbate)[leg]

    def _occupancy(self, branch) -> np.ndarray:
        return self.branch(branch) if isinstance(branch, str) else branch.occupancy

    def sites_filled(self, branch) -> np.ndarray:
        """Occupied sites per lattice slice, Σ_i n_i (M,); ``branch`` a Branch or its name."""
        return self._occupancy(branch) @ self.stage.problem.weights

    def per_angstrom(self, branch) -> np.ndarray:
        """Atoms per Å of pore length (slit: per Å² — per Å of axis and Å along x)."""
        return self.sites_filled(branch) * _atoms_per_angstrom_per_site(self.stage)

    def amount(self, branch, unit: str) -> np.ndarray:
        """Amount in one of `porefill.physics.substances.units.AMOUNT_UNITS`."""
        return from_atoms_per_angstrom(self.per_angstrom(branch), unit, self.basis)

    def per_nm_per_site(self) -> float:
        """Amount per nm of pore (slit: per nm²) of one occupied site per slice."""
        return float(from_atoms_per_angstrom(_atoms_per_angstrom_per_site(self.stage), "per nm", self.basis))

    def per_nm(self, branch) -> np.ndarray:
        """Atoms per nm of pore length (slit: per nm²)."""
        return self.amount(branch, "per nm")

    def per_nm2_wall(self, branch) -> np.ndarray:
        """Atoms per nm² of wall."""
        return self.amount(branch, "per nm2 wall")

    def fraction(self, branch) -> np.ndarray:
        """Fraction of the full pore (all kept sites occupied)."""
        return self.sites_filled(branch) / self.stage.problem.weights.sum()

    def grand_potential_per_nm(self, branch: Branch) -> np.ndarray:
        """Ω per nm of pore length, K/nm (slit: per nm²)."""
        return branch.grand_potential * self.per_nm_per_site()

    def compressibility_per_nm(self, branch) -> np.ndarray:
        """dN/dμ, atoms per nm per K (finite differences on the grid)."""
        return np.gradient(self.per_nm(branch), self.mu)

    # equilibrium -----------------------------------------------------------------------------
    def equilibrium_occupancy(self) -> np.ndarray:
        """(M, orbits) occupancy of the lowest-Ω state found at each μ (the lower of the two branches, or a
        state of neither where one lies below both)."""
        return self.stage.problem.occupancy(self.equilibrium.logits)

    def site_occupancy(self, k: int, branch: str = "equilibrium") -> np.ndarray:
        """(N,) occupancy of every kept site at grid point k."""
        return self.stage.full_occupancy(self.branch(branch)[k])

    def channel_density_per_nm(self, k: int, branch: str = "equilibrium") -> np.ndarray:
        """(N,) linear density along each site's channel (atoms per nm of axis) at grid point k."""
        return self.site_occupancy(k, branch) * 10.0 / self.stage.spacing_angstrom

    def central_channel_occupancy(self, branch: str = "equilibrium") -> np.ndarray:
        """(M,) mean occupancy of the central channel's sites (kind 'centre') along μ."""
        centre = np.unique(self.stage.orbit[self.stage.lattice.kind == "centre"])
        w = self.stage.problem.weights[centre]
        return self.branch(branch)[:, centre] @ w / w.sum()

    def step_dict(self, step) -> dict:
        """A step as plain types (`Step.to_dict`), with the linear density along every site's channel and the
        central channel's occupancy just after it (equilibrium branch; None where not finite)."""
        d = step.to_dict()
        k = int(min(np.searchsorted(self.mu, step.mu_k) + 1, self.mu.size - 1))
        d["channel_per_nm_after"] = [float(v) if np.isfinite(v) else None for v in self.channel_density_per_nm(k)]
        d["central_channel_occupancy_after"] = float(self.central_channel_occupancy()[k])
        return d

    def nearest_index(self, pressure_pa: float) -> int:
        """Grid point nearest (in log p) to a pressure."""
        return int(np.argmin(np.abs(np.log(self.pressure_pa) - np.log(pressure_pa))))


def equilibrium_transition(problem, mu_low: float, x_low: np.ndarray, mu_high: float, x_high: np.ndarray,
                           *, tol_k: float = 1e-6):
    """μ (K) where a low-density state (logits ``x_low``, stable at ``mu_low``) and a high-density one
    (``x_high`` at ``mu_high`` > ``mu_low``) have equal grand potential, by bisection to ``tol_k``.

    Each trial μ re-solves both states from the nearest accepted ones; a state that has slid onto the other
    (it passed its spinodal) shows the crossing lies on the other side, since the equilibrium transition
    always lies between the two spinodals. Returns (μ_eq, sites added, (O,) occupancy rise).
    """
    w = problem.weights
    lo, hi = float(mu_low), float(mu_high)
    xl, xh = np.array(x_low, float), np.array(x_high, float)
    occ = problem.occupancy
    n_gap = float(w @ (occ(xh) - occ(xl)))
    merged = 1e-3 * max(n_gap, 1e-12)
    while hi - lo > tol_k:
        mid = 0.5 * (lo + hi)
        yl, _, _, om_l = solve_state(xl, mid, problem)
        yh, _, _, om_h = solve_state(xh, mid, problem)
        n_l, n_h = float(w @ occ(yl)), float(w @ occ(yh))
        if n_h - n_l < merged:         # one state slid onto the other: which one tells the side
            if abs(n_l - float(w @ occ(xl))) > abs(n_h - float(w @ occ(xh))):
                hi, xh = mid, yh       # the low state jumped up: the crossing lies below
            else:
                lo, xl = mid, yl       # the high state fell: the crossing lies above
            continue
        if om_l < om_h:
            lo, xl = mid, yl
        else:
            hi, xh = mid, yh
    mid = 0.5 * (lo + hi)
    yl = solve_state(xl, mid, problem)[0]
    yh = solve_state(xh, mid, problem)[0]
    rise = occ(yh) - occ(yl)
    return mid, float(w @ rise), rise


def hidden_transition(problem, mu: np.ndarray, logits: np.ndarray, k0: int, k1: int, *, quick: bool = False):
    """A first-order transition of a branch's states (``logits`` (M, O) on ``mu``) between grid points k0 < k1
    that the grid does not show: (μ_eq, sites added, (O,) rise); nothing added when there is none.

    `equilibrium_transition`'s bisection keeps the two end states apart only where two states coexist. With
    ``quick``, it is run only when the state of either end, continued to the other, is still a state of its
    own there (a branch that jumped between the two points onto a state that coexists with the one it
    left): two solves instead of some forty, for the many intervals inside a hysteresis loop."""
    if quick:
        occ = problem.occupancy
        apart = any(np.max(np.abs(occ(solve_state(logits[a], mu[b], problem)[0]) - occ(logits[b]))) > 1e-3
                    for a, b in ((k1, k0), (k0, k1)))
        if not apart:
            return 0.5 * float(mu[k0] + mu[k1]), 0.0, np.zeros(problem.weights.size)
    return equilibrium_transition(problem, mu[k0], logits[k0], mu[k1], logits[k1])


def compressibility(problem, x: np.ndarray, solve) -> float:
    """dN/dμ (sites per K) of a solved state: n_i(1−n_i) (J⁻¹·1)_i summed with the orbit weights, J the
    Jacobian of the mean-field equations at the state (``solve`` applies J⁻¹, from `solve_state`)."""
    return float(problem.weights @ (problem.occupancy_slope(x) * solve(np.ones_like(x))))


def compressibility_peak(problem, mu: np.ndarray, logits: np.ndarray, k0: int, k1: int, *,
                         tol_k: float = 1e-7) -> float:
    """μ (K) of the largest dN/dμ between grid points k0 < k1 of a branch (``logits`` (M, O) on ``mu``).

    Each trial μ re-solves the state from the branch's nearest grid point and takes dN/dμ exactly from the
    Jacobian (`compressibility`); a bounded Brent search (scipy.optimize.minimize_scalar) finds the maximum
    to ``tol_k``.
    """
    from scipy.optimize import minimize_scalar

    res = minimize_scalar(lambda m: -compressibility_at(problem, mu, logits, m, k0, k1),
                          bounds=(float(mu[k0]), float(mu[k1])), method="bounded", options={"xatol": tol_k})
    return float(res.x)


def compressibility_at(problem, mu: np.ndarray, logits: np.ndarray, m: float, k0: int = 0,
                       k1: int | None = None) -> float:
    """dN/dμ (sites per K) at μ = ``m`` on a branch (``logits`` (M, O) on ``mu``), its state re-solved from
    the branch's nearest grid point among k0…k1 (`compressibility`)."""
    x, ok, solve, _ = _resolved(problem, mu, logits, m, k0, k1, whole=True)
    return compressibility(problem, x, solve)


def _resolved(problem, mu: np.ndarray, logits: np.ndarray, m: float, k0: int = 0, k1: int | None = None, *,
              whole: bool = False):
    """The state at μ = ``m`` re-solved from the branch's nearest grid point among k0…k1 (its logits; with
    ``whole``, `solve_state`'s whole answer)."""
    k1 = mu.size - 1 if k1 is None else k1
    k = int(np.clip(np.searchsorted(mu, m), k0, k1))
    k = k if k == k0 or abs(mu[k] - m) <= abs(mu[k - 1] - m) else k - 1
    out = solve_state(logits[k], m, problem)
    return out if whole else out[0]


def _atoms_per_angstrom_per_site(stage: ThermalStage) -> float:
    """One occupied site per slice, in atoms per Å of pore (slit: per Å²), `GeometryStage.atoms_per_angstrom_per_site`."""
    return stage.geometry.atoms_per_angstrom_per_site


def default_mu_range(stage: ThermalStage) -> tuple[float, float]:
    """From a nearly empty pore (deepest site at occupancy ~1e-5 with full neighbours) to p = p0."""
    p = stage.problem
    max_bonds = np.asarray(p.neighbours.sum(axis=1)).ravel()
    lo = float(np.min(p.site_free_energy - p.bond_k * max_bonds)) - 11.5 * p.temperature_k
    return lo, stage.mu_coexistence_k


def compute_isotherm(scenario: Scenario, *, n_points: int = DEFAULT_POINTS, mu_range: tuple[float, float] | None = None,
                     pressure_range_pa: tuple[float, float] | None = None,
                     relative_pressure_range: tuple[float, float] | None = None,
                     allow_above_p0: bool = False, geometry=None, row_blend: bool = True) -> Isotherm:
    """Adsorption and desorption branches of the pore's isotherm on ``n_points`` chemical potentials.

    The μ grid is uniform (uniform in log p). One of ``pressure_range_pa`` (Pa), ``relative_pressure_range``
    (p/p0) or ``mu_range`` (K) bounds it; by default it runs from a nearly empty pore to p0. Ranges above p0
    are refused unless ``allow_above_p0``.

    A pore whose rows do not fit it unstrained is the lever-rule mixture of the two lattices either side
    (`porefill.physics.lattice_gas.row_blend`; a `BlendedIsotherm`); ``row_blend=False`` keeps the one
    lattice of round(D/Δ) rows. ``geometry``: the scenario's geometry stage when the caller holds one (one
    lattice, no blend), or a callable ``(scenario, rows) -> GeometryStage`` that provides them (a fit's
    `porefill.physics.fitting.model.GeometryReuse.stage_for`).
    """
    from porefill.physics.lattice_gas.row_blend import blend_isotherms, blend_weights
    from porefill.physics.lattice_gas.stages import geometry_stage

    n_points = check_points(n_points)
    if sum(r is not None for r in (mu_range, pressure_range_pa, relative_pressure_range)) > 1:
        raise ValueError("give at most one of mu_range, pressure_range_pa and relative_pressure_range")
    if geometry is not None and not callable(geometry):
        geometries = [geometry]
        weights = [1.0]
    else:
        provide = geometry if geometry is not None else geometry_stage
        own = provide(scenario, None)
        parts = blend_weights(own.row_fraction) if row_blend else ((1.0, own.rows),)
        geometries = [provide(scenario, rows) for _, rows in parts]
        weights = [w for w, _ in parts]
    stages = [thermal_stage(scenario, geometry=g) for g in geometries]
    scale = stages[0].scale
    if relative_pressure_range is not None:
        pressure_range_pa = tuple(scale.pressure_from_relative(relative_pressure_range))
    if pressure_range_pa is not None:
        lo_p, hi_p = check_pressure_range(*pressure_range_pa, saturation_pressure_pa=scale.saturation_pressure_pa,
                                          allow_above_p0=allow_above_p0)
        mu_range = tuple(float(m) for m in scale.mu_k([lo_p, hi_p]))
    if mu_range is not None and mu_range[1] > scale.mu_coexistence_k:
        # sites that fill only above p0 must be kept
        stages = [thermal_stage(scenario, mu_max=mu_range[1], geometry=g) for g in geometries]
    if mu_range is not None:
        lo, hi = mu_range
    else:
        lo, hi = min(default_mu_range(s)[0] for s in stages), scale.mu_coexistence_k
    if not (np.isfinite(lo) and np.isfinite(hi) and lo < hi):
        raise ValueError(f"μ range must be finite with low < high; got {lo!r}, {hi!r} K")
    mu = np.linspace(lo, hi, n_points)
    return blend_isotherms([(w, _isotherm_on_grid(stage, mu)) for w, stage in zip(weights, stages)])


def _isotherm_on_grid(stage: ThermalStage, mu: np.ndarray) -> Isotherm:
    """Both branches, the equilibrium and the steps of one lattice on the μ grid ``mu``."""
    scenario = stage.scenario
    p = stage.problem
    max_bonds = np.asarray(p.neighbours.sum(axis=1)).ravel()
    ads = solve_branch(mu, p, (mu[0] - p.site_free_energy) / p.temperature_k)
    start_full = (mu[-1] - p.site_free_energy + p.bond_k * max_bonds) / p.temperature_k
    des_rev = solve_branch(mu[::-1], p, np.maximum(start_full, 30.0))
    des = Branch(mu, des_rev.logits[::-1], des_rev.grand_potential[::-1], des_rev.converged[::-1], p)
    labels = stage.orbit_labels()
    eq = equilibrium_states(mu, p, ads, des, stage.lattice.ring[stage.representative])
    basis = AmountBasis.of(stage.geometry, scenario.pore_volume_cm3_g)
    per_site = float(from_atoms_per_angstrom(_atoms_per_angstrom_per_site(stage), "per nm", basis))
    steps = find_steps(mu, ads.occupancy, des.occupancy, ads.grand_potential, des.grand_potential,
                       weights=p.weights, labels=labels, order=p.site_free_energy,
                       pressure_pa=stage.scale.pressure_pa, saturation_pressure_pa=stage.saturation_pressure_pa,
                       per_site=per_site, refine=lambda k0, k1: equilibrium_transition(
                           p, mu[k0], ads.logits[k0], mu[k1], des.logits[k1]),
                       refine_peak=lambda k0, k1: compressibility_peak(p, mu, eq.logits, k0, k1),
                       slope_at=lambda m, k0=0, k1=None: compressibility_at(p, mu, eq.logits, m, k0, k1),
                       state_at=lambda m, k0=0, k1=None: p.occupancy(_resolved(p, mu, eq.logits, m, k0, k1)),
                       refine_hidden=lambda k0, k1, quick=False: hidden_transition(p, mu, eq.logits, k0, k1, quick=quick),
                       occupancy_eq=p.occupancy(eq.logits) if eq.found_below_both else None,
                       transitions=lambda i0, i1: eq.transitions(i0, i1, ads, des, lambda m0, x0, m1, x1:
                                                                 equilibrium_transition(p, m0, x0, m1, x1)))
    return Isotherm(stage, mu, ads, des, steps, eq)
