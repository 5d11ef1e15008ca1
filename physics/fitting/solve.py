"""Fitting the model to measured isotherms: the uncertain parameters, with standard errors and warnings.

Free parameters (``FREE_PARAMETERS``):
- ``wall-strength``: a factor on the catalog adsorbate–solid ε (`porefill.physics.substances.materials.pair_parameters`),
  pair_epsilon_k = factor × catalog ε; default bounds 0.5–1.5.
- ``size``: the pore size (hexagon side, cylinder radius, slit width), Å; default ±30 % within the limits.
- ``pore-volume``: the sample's specific pore volume, cm³/g — an amount scale, solved in closed form at every
  evaluation (`porefill.physics.fitting.model.solve_pore_volume`), never searched.
- ``wall``: the wall thickness between neighbouring pores, Å (hexagon, slit).
- ``a0``: the hexagonal array's spacing, Å; the wall follows as w = a0 − √3·t (`HexagonPore`). A sample
  with d100 fixes a0 = 2·d100/√3 (common practice, no source) and so ties the wall to the side in every fit.

Strategy: the model has layer steps and hysteresis, so χ² is piecewise smooth with jumps where a step passes
a measured point, and a gradient fit from a poor start stalls. A global phase (differential evolution,
seeded, on a coarse μ grid) searches the nonlinear parameters inside their bounds; a local phase
(`scipy.optimize.least_squares`, trust-region reflective with bounds, on a finer grid) refines the best,
with finite-difference steps of ``diff_step`` × the bound width, wider than the grid's step resolution.
Most of an evaluation's cost is the pore's geometry (the converged cell quadrature), so a fit keeps one
geometry per pore and rescales its wall potential when only the wall strength changes (`fm.GeometryReuse`,
exact to the cells' tolerance), and the global phase puts the geometric parameters (size, wall, a0) on a grid
of ``GLOBAL_GRID`` steps per bound width so that its pores recur; the local phase and the result are continuous,
and the result's own evaluation builds its geometry afresh.

Uncertainties: the Jacobian J of the normalised residuals at the optimum (central differences with the same
steps; the pore-volume column exactly), cov = s² (JᵀJ)⁻¹ with s² = χ²/(n − p) — the scatter about the fit
sets the noise level (Press et al., Numerical Recipes, 3rd ed., §15.4–15.5, value from memory).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from scipy.optimize import differential_evolution, least_squares

from porefill.physics.fitting import model as fm
from porefill.physics.lattice_gas.branches import measured_branches
from porefill.physics.fitting.params import FREE_PARAMETERS, PARAMETER_UNITS, ParameterSpace
from porefill.physics.fitting.measured import LEGS, MeasuredRun, Sample
from porefill.physics.scenario import Scenario
from porefill.physics.choices import BRANCHES

__all__ = ["FREE_PARAMETERS", "PARAMETER_UNITS", "BRANCHES", "FitCancelled", "FitRequest", "RunResidual",
           "FitResult", "FittedCurve", "fit", "carry_to", "fitted_curves", "residual_table"]

_PENALTY = 1e3       # normalised residual of a parameter set the model refuses (outside the limits)
GLOBAL_GRID = 256    # the global phase's steps per bound width of a geometric parameter (size, wall, a0)


class FitCancelled(Exception):
    """The fit was stopped by its ``should_stop`` hook before it finished."""


@dataclass(frozen=True, eq=False)
class FitRequest:
    """What to fit and how. The search settings have defaults that finish the issue's example (helium-4,
    classical sites, three free parameters) well within a minute on two cores.

    Parameters
    ----------
    scenario : the base scenario (start values: size, wall, pair ε override, pore volume).
    runs : the measured runs (one adsorbate: the scenario's; temperatures may differ).
    sample : mass, pore volume, d100 (a d100 ties the hexagon's wall to its side).
    free : free parameter names, from ``FREE_PARAMETERS``.
    bounds : {name: (low, high)} replacing the default bounds (units of ``PARAMETER_UNITS``).
    branches : {leg: branch} — the model branch each leg is compared with; by default the branch a measurement
        follows in pores with the scenario's ends (`porefill.physics.lattice_gas.branches.measured_branches`: open pores compare
        adsorption with 'adsorption' and desorption with 'equilibrium', the lower-Ω state).
    noise_relative, noise_floor : σ_i = noise_relative × max(|y_i|, noise_floor × max|y|) in the run's unit;
        with ``scale_covariance`` only their ratios matter for the errors (s² rescales them).
    pressure_noise : relative uncertainty of a recorded pressure (σ of ln p). Above 0 each point is compared
        by its distance to the model curve in (ln p/σ_lnp, amount/σ), so a point beside a step is compared at
        equal coverage; 0 compares amounts at the recorded pressures only.
    gauge_floor_pa : lowest pressure the gauge reads (Pa), for points recorded without pressure.
    global_points, local_points : μ grid points of the isotherms in the global and local phases.
    population, global_iterations : differential evolution's population per parameter and generations.
    local_evaluations : at most this many residual evaluations in each local refinement.
    local_starts : local refinements from this many distinct good points of the global search; a second
        optimum that fits about as well is reported.
    diff_step : finite-difference step of the local refinement, as a fraction of each bound width.
    error_step : the (central) step of the Jacobian the standard errors come from, as a fraction of each
        bound width. It is wider than ``diff_step`` on purpose: next to a layer step the distance residuals
        have narrow dips (a riser placed beside a point), and a wide secant measures the valley rather than
        the dip, so the errors are not made small by the dips.
    pressure_margin : factor by which each temperature's isotherm extends past the measured pressures.
    seed : seed of the global phase.
    """

    scenario: Scenario
    runs: tuple[MeasuredRun, ...]
    sample: Sample = field(default_factory=Sample)
    free: tuple[str, ...] = ("wall-strength", "size", "pore-volume")
    bounds: dict = field(default_factory=dict)
    branches: dict = field(default_factory=dict)
    noise_relative: float = 0.02
    noise_floor: float = 0.05
    pressure_noise: float = 0.01
    gauge_floor_pa: float | None = None
    scale_covariance: bool = True
    global_points: int = 48
    local_points: int = 160
    population: int = 8
    global_iterations: int = 15
    local_evaluations: int = 40
    local_starts: int = 2
    diff_step: float = 0.01
    error_step: float = 0.05
    pressure_margin: float = 1.5
    seed: int = 0

    def __post_init__(self) -> None:
        if not isinstance(self.scenario, Scenario):
            raise ValueError(f"scenario must be a Scenario; got {type(self.scenario).__name__}")
        runs = tuple(self.runs)
        if not runs or not all(isinstance(r, MeasuredRun) for r in runs):
            raise ValueError("runs must be one or more MeasuredRun")
        object.__setattr__(self, "runs", runs)
        free = tuple(dict.fromkeys(str(f).strip() for f in ([self.free] if isinstance(self.free, str)
                                                            else self.free)))
        object.__setattr__(self, "free", free)
        points = sum(int(np.isfinite(r.amount).sum()) for r in runs)
        if points < len(free):           # as many as parameters still fits, with a warning that errors are undefined
            raise ValueError(f"the measured runs hold {points} usable point{'s' if points != 1 else ''}, fewer "
                             f"than the {len(free)} free parameters ({', '.join(free)}): a fit needs at least as "
                             "many points as parameters (check the file's columns and decimal marks, or free "
                             "fewer parameters)")
        branches = {**measured_branches(self.scenario.pore_ends, self.scenario.adsorbate), **dict(self.branches)}
        for leg, branch in branches.items():
            if leg not in LEGS or branch not in BRANCHES:
                raise ValueError(f"branches maps a leg ({', '.join(LEGS)}) to a branch ({', '.join(BRANCHES)}); "
                                 f"got {leg!r}: {branch!r}")
        object.__setattr__(self, "branches", branches)
        object.__setattr__(self, "bounds", {k: (float(v[0]), float(v[1])) for k, v in dict(self.bounds).items()})
        if not (isinstance(self.pressure_noise, (int, float)) and 0 <= self.pressure_noise < 1):
            raise ValueError(f"pressure_noise must be a number from 0 to 1; got {self.pressure_noise!r}")
        for name in ("noise_relative", "noise_floor", "diff_step", "error_step"):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and np.isfinite(value) and 0 < value < 1):
                raise ValueError(f"{name} must be a number between 0 and 1; got {value!r}")
        if self.gauge_floor_pa is not None and not (np.isfinite(self.gauge_floor_pa) and self.gauge_floor_pa > 0):
            raise ValueError(f"gauge_floor_pa must be a positive pressure in Pa; got {self.gauge_floor_pa!r}")
        if not (np.isfinite(self.pressure_margin) and self.pressure_margin > 1):
            raise ValueError(f"pressure_margin must be a factor above 1; got {self.pressure_margin!r}")
        for name in ("global_points", "local_points", "population", "global_iterations", "local_evaluations",
                     "local_starts"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int) or value < (3 if "points" in name else 1):
                raise ValueError(f"{name} must be a whole number of at least {3 if 'points' in name else 1}; "
                                 f"got {value!r}")
        self.space()       # refuses unknown or clashing parameters and bad bounds, by name

    def space(self) -> ParameterSpace:
        """The free parameters with their bounds and start values (`porefill.physics.fitting.params`)."""
        per_gram = any(r.amount_unit in fm.PER_GRAM_UNITS for r in self.runs)
        return ParameterSpace.build(self.scenario, self.sample, self.free, self.bounds, per_gram=per_gram)


@dataclass(frozen=True, eq=False)
class RunResidual:
    """One run against the fitted model: per point (in the run's order), the model amount in the run's
    unit at the recorded pressure (for a point without pressure: its equal-coverage value), σ, and the
    normalised residual, measured − model (the sign the residual plot shows).

    With a pressure noise σ_lnp > 0 a point with pressure is compared with the model curve's nearest point
    in (ln p/σ_lnp, amount/σ) (`porefill.physics.fitting.model.compare_points`): ``nearest_pressure_pa``
    and ``nearest_model`` hold it (NaN pressure for points compared at equal coverage, whose nearest amount
    is ``model``), so every residual is sign(measured − model) × √[(ln(p/p_near)/σ_lnp)² + ((y − y_near)/σ)²],
    the first term 0 when σ_lnp is 0 (then the nearest point is the recorded pressure's)."""

    run: MeasuredRun
    branch: str
    temperature_k: float
    pressure_pa: np.ndarray
    model: np.ndarray
    sigma: np.ndarray
    residual: np.ndarray
    coverage: np.ndarray               # (n,) True for points compared at equal coverage
    nearest_pressure_pa: np.ndarray    # (n,) Pa
    nearest_model: np.ndarray          # (n,) in the run's unit
    sigma_ln_pressure: float           # σ of ln p used for the points with pressure (0: amounts only)

    @property
    def rows(self) -> np.ndarray:
        return self.run.rows

    @property
    def rms(self) -> float:
        """Root-mean-square of measured − model (at the recorded pressure) over the points with pressure,
        in the run's unit."""
        d = (self.model - self.run.amount)[~self.coverage]
        return float(np.sqrt(np.mean(d**2))) if d.size else float("nan")


@dataclass(frozen=True, eq=False)
class FitResult:
    """The fitted parameters {name: (value, stderr)} (units `PARAMETER_UNITS`), their correlation matrix
    (rows in ``names`` order), per-run residuals, goodness of fit, warnings, and the fitted scenario and
    sample (pore volume, and d100 when a0 was free, marked "fitted")."""

    request: FitRequest
    parameters: dict
    bounds: dict
    names: tuple[str, ...]
    covariance: np.ndarray
    correlation: np.ndarray
    runs: tuple[RunResidual, ...]
    chi2: float
    n_points: int
    n_coverage: int
    n_parameters: int
    r_squared: float
    warnings: tuple[str, ...]
    scenario: Scenario
    sample: Sample
    evaluations: int

    @property
    def dof(self) -> int:
        return self.n_points - self.n_parameters

    @property
    def reduced_chi2(self) -> float:
        return self.chi2 / self.dof if self.dof > 0 else float("nan")

    @property
    def rms(self) -> float:
        """RMS of the normalised residuals of the points with pressure."""
        r = np.concatenate([rr.residual[~rr.coverage] for rr in self.runs])
        return float(np.sqrt(np.mean(r**2))) if r.size else float("nan")

    def statistics(self) -> dict:
        """Goodness of fit as plain numbers."""
        return {"chi2": self.chi2, "reduced_chi2": self.reduced_chi2, "rms_normalised": self.rms,
                "r_squared": self.r_squared, "points": self.n_points, "coverage_points": self.n_coverage,
                "parameters": self.n_parameters, "degrees_of_freedom": self.dof, "evaluations": self.evaluations,
                "noise_relative_assumed": self.request.noise_relative,
                "noise_relative_estimated": self.request.noise_relative * float(np.sqrt(self.reduced_chi2))
                if self.dof > 0 else None}


class _Objective:
    """Residuals of a parameter vector u ∈ [0, 1]^k (the nonlinear free parameters, scaled to their bounds),
    the pore volume solved inside; counts evaluations and calls the hooks."""

    def __init__(self, request: FitRequest, space: ParameterSpace, progress, should_stop, budget: int):
        self.request, self.space = request, space
        self.data = fm.prepare_runs(request.runs, scenario=request.scenario, sample=request.sample,
                                    branches=request.branches, noise_relative=request.noise_relative,
                                    noise_floor=request.noise_floor, gauge_floor_pa=request.gauge_floor_pa)
        self.ranges = fm.pressure_ranges(self.data, adsorbate=request.scenario.adsorbate,
                                         margin=request.pressure_margin)
        self.n = sum(d.run.amount.size for d in self.data)
        self.progress, self.should_stop, self.budget = progress, should_stop, max(budget, 1)
        self.evaluations, self.phase = 0, "global search"
        self.notes: list[str] = []
        self.history: list[tuple[float, np.ndarray]] = []        # (χ², u) of the global search
        self.best = (np.inf, None)
        # one geometry per pore, rescaled for the wall strength (fm.GeometryReuse); the global phase puts the
        # geometric parameters on a grid of GLOBAL_GRID steps per bound width, so its pores recur
        self.geometries = fm.GeometryReuse(self.ranges)
        strength = [name == "wall-strength" for name in space.nonlinear]
        self.snapped = ~np.array(strength, bool)

    def prediction(self, u, n_points: int, *, strict: bool = False, bisections: int = 10, exact: bool = False):
        if self.should_stop is not None and self.should_stop():
            raise FitCancelled(f"fit cancelled after {self.evaluations} model evaluations")
        self.evaluations += 1
        if self.progress is not None:
            self.progress(min(self.evaluations / self.budget, 0.99),
                          f"{self.phase}: evaluation {self.evaluations}, best χ² {self.best[0]:.4g}")
        values = self.space.values_of(u)
        try:
            scenario = self.space.scenario_for(values)
            return values, fm.predict(scenario, self.data, self.request.sample, n_points=n_points,
                                      ranges=self.ranges, bisections=bisections,
                                      geometries=None if exact else self.geometries)
        except ValueError:
            if strict:
                raise
            return values, None

    def residuals(self, u, n_points: int, bisections: int = 10) -> np.ndarray:
        values, pred = self.prediction(u, n_points, bisections=bisections)
        if pred is None:
            return np.full(self.n, _PENALTY)
        sx = self.request.pressure_noise
        v = self.space.pore_volume(values, pred, self.data, sx)
        r = np.concatenate(fm.residuals(pred, self.data, v, sx))
        cost = float(r @ r)
        if cost < self.best[0]:
            self.best = (cost, np.array(u, float))
        return r

    def cost(self, u) -> float:
        u = np.where(self.snapped, np.round(np.asarray(u, float) * GLOBAL_GRID) / GLOBAL_GRID, u)
        r = self.residuals(u, self.request.global_points, bisections=6)
        self.history.append((float(r @ r), np.array(u, float)))
        return float(r @ r)


def fit(request: FitRequest, *, progress: Callable[[float, str], None] | None = None,
        should_stop: Callable[[], bool] | None = None) -> FitResult:
    """Fit the free parameters of ``request`` to its runs; global search, then local refinement.

    ``progress(fraction, message)`` is called at every model evaluation; ``should_stop()`` returning True
    stops the fit with `FitCancelled`. Raises ValueError (naming the run, row or parameter) when the data
    cannot be compared with the model.
    """
    space = request.space()
    k = len(space.nonlinear)
    budget = (request.population * k * (request.global_iterations + 1)
              + request.local_starts * request.local_evaluations * (k + 1) + 2 * k + 2) if k else 2
    obj = _Objective(request, space, progress, should_stop, budget)
    u0 = space.start_u()
    obj.prediction(u0, request.global_points, strict=True)     # a data or model problem is reported at once
    u_best, others = u0, []
    if k:
        obj.phase = "global search"
        differential_evolution(obj.cost, [(0.0, 1.0)] * k, popsize=request.population,
                               maxiter=request.global_iterations, polish=False, seed=request.seed,
                               init="latinhypercube", x0=u0, tol=1e-3, updating="immediate")
        found = []
        for n, start in enumerate(_distinct_starts(obj.history, request.local_starts)):
            obj.phase = f"local refinement {n + 1}"
            ls = least_squares(lambda u: obj.residuals(u, request.local_points), start, bounds=(0.0, 1.0),
                               method="trf", diff_step=request.diff_step, x_scale=1.0,
                               max_nfev=request.local_evaluations)
            found.append((2.0 * ls.cost, ls.x, ls.status))
        found.sort(key=lambda f: f[0])
        chi2_best, u_best, status = found[0]
        if status == 0:
            obj.notes.append(f"the local refinement stopped at its budget of {request.local_evaluations} "
                             "evaluations; the optimum may lie a little further")
        others = [(c, u) for c, u, _ in found[1:]]
    obj.phase = "uncertainties"
    from porefill.physics.fitting.report import build_result
    result = build_result(obj, np.asarray(u_best, float), others)
    if progress is not None:
        progress(1.0, f"done: {result.evaluations} model evaluations, reduced χ² {result.reduced_chi2:.4g}")
    return result


def _distinct_starts(history: list, count: int) -> list[np.ndarray]:
    """The best points of the global search, each at least 0.15 of a bound width (in every parameter, max
    norm) from those taken before: starts for the local refinement, so a second basin is also explored."""
    starts: list[np.ndarray] = []
    for _, u in sorted(history, key=lambda h: h[0]):
        if all(np.max(np.abs(u - s)) > 0.15 for s in starts):
            starts.append(u)
            if len(starts) == count:
                break
    return starts


@dataclass(frozen=True, eq=False)
class FittedCurve:
    """The fitted model along one run's pressure range: pressures in the run's unit and in Pa, the model
    amount in the run's unit on the run's branch."""

    run: MeasuredRun
    branch: str
    pressure: np.ndarray
    pressure_pa: np.ndarray
    amount: np.ndarray


def fitted_curves(result: FitResult, *, n_points: int = 200) -> tuple[FittedCurve, ...]:
    """Model curves of the fitted scenario for plotting and CSV, one per run, on ``n_points`` pressures
    spanning the run's range (and its pressure-less points' brackets)."""
    from porefill.physics.fitting.report import curves
    return curves(result, n_points)


def residual_table(result: FitResult) -> list[dict]:
    """One dict of plain values per measured point: run, source, row, leg, branch, how it was compared,
    pressure (run unit, and Pa; None when not recorded), amount, model (at the recorded pressure, or the
    equal-coverage value), σ of the amount and of ln p, the model curve's nearest point, the two terms of
    the residual and the residual itself, all measured − model (see `RunResidual`):
    residual = sign(amount − model) × √(pressure_term² + amount_term²)."""
    rows = []
    for rr in result.runs:
        run = rr.run
        for i in range(run.amount.size):
            p, at_p = run.pressure[i], not rr.coverage[i]
            s_lnp = rr.sigma_ln_pressure if at_p else 0.0
            near_p = float(rr.nearest_pressure_pa[i]) if at_p else None
            pressure_term = float(np.log(rr.pressure_pa[i] / near_p) / s_lnp) if s_lnp > 0 else 0.0
            rows.append({"run": run.name, "source": run.source, "row": int(run.rows[i]), "leg": run.leg,
                         "branch": rr.branch, "temperature_k": rr.temperature_k,
                         "compared": "at pressure" if at_p else "equal coverage",
                         "pressure": None if not np.isfinite(p) else float(p), "pressure_unit": run.pressure_unit,
                         "pressure_pa": float(rr.pressure_pa[i]) if at_p else None,
                         "amount": float(run.amount[i]), "model": float(rr.model[i]),
                         "amount_unit": run.amount_unit, "sigma": float(rr.sigma[i]), "sigma_ln_pressure": s_lnp,
                         "nearest_pressure_pa": near_p, "nearest_model": float(rr.nearest_model[i]),
                         "pressure_term": pressure_term,
                         "amount_term": float((run.amount[i] - rr.nearest_model[i]) / rr.sigma[i]),
                         "residual": float(rr.residual[i])})
    return rows


def carry_to(result: FitResult, scenario: Scenario) -> Scenario:
    """``scenario`` (e.g. helium) with the fitted sample's pore size, wall and pore volume (e.g. from
    nitrogen) in one step. The wall strength is a property of the fitted adsorbate–solid pair and is not
    carried. Raises ValueError when the pore shapes differ."""
    fitted = result.scenario
    if fitted.shape != scenario.shape:
        raise ValueError(f"the fit is of a {fitted.shape} pore; cannot carry its size to a {scenario.shape}")
    return scenario.replace(size_angstrom=fitted.size_angstrom, wall_angstrom=fitted.wall_angstrom,
                            pore_volume_cm3_g=fitted.pore_volume_cm3_g)
