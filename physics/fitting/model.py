"""The model side of a fit: measured runs compared with the isotherm of one parameter set (`porefill.physics.fitting.solve`).

For each temperature the runs share one isotherm (`compute_isotherm`) over their pressure range; each leg is
compared with the branch chosen for it, a curve in ln p whose jumps are placed between grid points
(`porefill.physics.lattice_gas.jumps`). Amounts are compared in the run's own unit, σ in that unit. With a pressure noise σ_lnp > 0
the residual is the signed distance from the point to the curve in (ln p/σ_lnp, amount/σ) — an errors-in-both
-variables comparison, so a point beside a vertical step is compared at equal coverage (horizontally) and the
residual moves continuously as a step moves past it; with σ_lnp = 0 it is (model − measured)/σ at the
recorded pressure (linear interpolation in ln p).

**The pore volume enters linearly.** For amounts per gram (and dosed amounts, per gram through the sample
mass) the model amount is V_p·a_i, with a_i the model's amount for 1 cm³/g; for amounts per pore it is b_i,
independent of V_p. So V_p is never searched: at every parameter set it is the weighted linear
least-squares value (variable projection, Golub & Pereyra, SIAM J. Numer. Anal. 10, 413 (1973) — value
from memory), exact for the vertical residuals and refined by a one-variable Gauss–Newton descent for the
distance residuals, in `solve_pore_volume`, without a new model evaluation.

**Points without pressure** (a dosed amount below what the gauge reads) are compared at equal coverage: the
model must reach the point's amount y at a pressure between the recorded pressures of its neighbours in
coverage — p_lo, the highest recorded pressure of the leg's points with less adsorbed, and p_hi, the lowest
recorded pressure of those with more (or the gauge floor, or the top of the range). The model's equal-coverage
value is y clipped into [n(p_lo), n(p_hi)]: zero residual when the model reaches y inside the bracket, and the
shortfall otherwise. These points are one-sided constraints, counted apart from the points with pressure.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.jumps import branch_curve
from porefill.physics.fitting.measured import DOSED_UNITS, PER_AREA_UNITS, MeasuredRun, Sample, amount_to_model
from porefill.physics.scenario import Scenario
from porefill.physics.substances.units import AmountBasis, from_pascal
from porefill.physics.substances.vapour_pressure import saturated_vapour_pressure

__all__ = ["above_p0", "drop_above_p0", "PER_GRAM_UNITS", "RunData", "RunCurve", "prepare_runs", "pressure_ranges", "predict", "residuals",
           "compare_points", "solve_pore_volume", "estimate_pore_volume", "unit_factor", "simulated_run"]

PER_GRAM_UNITS = ("mmol/g", "mol/g", "cm3(STP)/g") + PER_AREA_UNITS + DOSED_UNITS


def unit_factor(run: MeasuredRun, basis: AmountBasis, sample: Sample, pore_volume_cm3_g: float = 1.0) -> float:
    """Amount in the run's unit per (atom per Å of one pore), at ``pore_volume_cm3_g`` (cm³/g); ``basis`` the
    pore's (`AmountBasis.of` its geometry stage)."""
    one = replace(run, pressure=[np.nan], amount=[1.0], rows=None)
    if run.amount_unit in PER_GRAM_UNITS:
        sample = sample.with_value("pore_volume_cm3_g", pore_volume_cm3_g, "fitted")
    return 1.0 / float(amount_to_model(one, basis, sample)[0])


@dataclass(frozen=True, eq=False)
class RunData:
    """One run, ready to compare: pressures in Pa, noise σ in the run's unit, brackets of its
    pressure-less points, and which branch it is compared with."""

    run: MeasuredRun
    temperature_k: float
    branch: str
    pressure_pa: np.ndarray            # (n,) NaN where not recorded
    sigma: np.ndarray                  # (n,) in the run's amount unit
    bracket_pa: np.ndarray             # (n, 2) p_lo, p_hi of the pressure-less points (0: no lower bound)
    per_gram: bool

    @property
    def has_pressure(self) -> np.ndarray:
        return np.isfinite(self.pressure_pa)


def _brackets(pressure_pa: np.ndarray, amount: np.ndarray, top_pa: float, floor_pa: float | None,
              desorption: bool) -> np.ndarray:
    """(n, 2) pressures between which each pressure-less point's coverage must be reached."""
    out = np.full((amount.size, 2), np.nan)
    known = np.isfinite(pressure_pa)
    for i in np.flatnonzero(~known):
        below = known & (amount <= amount[i])
        above = known & (amount >= amount[i])
        lo = float(np.max(pressure_pa[below])) if below.any() else 0.0
        hi = float(np.min(pressure_pa[above])) if above.any() else top_pa
        if floor_pa is not None and not below.any() and not desorption:
            hi = min(hi, floor_pa)
        out[i] = (lo, max(hi, lo))
    return out


def above_p0(run: MeasuredRun, adsorbate: str, temperature_k: float) -> np.ndarray:
    """(n,) bool: the run's points recorded above the model's p0 of ``adsorbate`` at the run's temperature
    (or ``temperature_k`` when the run does not say)."""
    t = run.temperature_k if run.temperature_k is not None else temperature_k
    p0 = saturated_vapour_pressure(adsorbate, t)
    p = run.pressure_pa(p0)
    return np.isfinite(p) & (p > p0 * (1.0 + 1e-9))


def drop_above_p0(runs, adsorbate: str, temperature_k: float) -> tuple[tuple, list[str]]:
    """The runs without their points above p0, and one sentence per run that lost any (naming its rows); a
    run left with no point is dropped whole."""
    out, said = [], []
    for run in runs:
        high = above_p0(run, adsorbate, temperature_k)
        if not high.any():
            out.append(run)
            continue
        rows = ", ".join(str(int(r)) for r in run.rows[high][:8]) + (" …" if high.sum() > 8 else "")
        said.append(f"{run.source}: run {run.name!r}: {int(high.sum())} point(s) above p0 left out (rows {rows})")
        if (~high).any():
            out.append(replace(run, pressure=run.pressure[~high], amount=run.amount[~high], rows=run.rows[~high]))
    return tuple(out), said


def prepare_runs(runs, *, scenario: Scenario, sample: Sample, branches: dict, noise_relative: float,
                 noise_floor: float, gauge_floor_pa: float | None) -> tuple[RunData, ...]:
    """Each run's pressures in Pa, noise scale and brackets; ValueError naming the run and row when a run
    cannot be compared (a pressure above p0, no pressure at all, a missing sample value)."""
    out = []
    for run in runs:
        t = run.temperature_k if run.temperature_k is not None else scenario.temperature_k
        p0 = saturated_vapour_pressure(scenario.adsorbate, t)
        p = run.pressure_pa(p0)
        known = np.isfinite(p)
        high = known & (p > p0 * (1.0 + 1e-9))
        if high.any():
            k = int(np.flatnonzero(high)[0])
            raise ValueError(f"{run.source}: run {run.name!r}, row {run.rows[k]}: pressure {p[k]:.6g} Pa is above "
                             f"the model's p0 = {p0:.6g} Pa of {scenario.adsorbate} at {t:g} K"
                             + (f" ({int(high.sum())} points in all)" if high.sum() > 1 else "")
                             + "; leave out the points above p0 to fit the rest")
        if not known.any() and gauge_floor_pa is None:
            raise ValueError(f"{run.source}: run {run.name!r} records no pressure at all; give the lowest "
                             "pressure the gauge reads (gauge floor) to compare it at equal coverage")
        if run.is_dosed and sample.mass_g is None:
            raise ValueError(f"{run.source}: run {run.name!r} has dosed amounts in {run.amount_unit}, which need "
                             "the sample mass (g)")
        y = np.asarray(run.amount, float)
        sigma = noise_relative * np.maximum(np.abs(y), noise_floor * max(float(np.max(np.abs(y))), 1e-300))
        sigma = np.where(sigma > 0, sigma, 1.0)
        bracket = _brackets(p, y, p0, gauge_floor_pa, run.leg == "desorption")
        out.append(RunData(run, float(t), branches[run.leg], p, sigma, bracket,
                           run.amount_unit in PER_GRAM_UNITS))
    return tuple(out)


def pressure_ranges(data: tuple[RunData, ...], *, adsorbate: str, margin: float) -> dict[float, tuple[float, float]]:
    """Per temperature, the pressure range (Pa) that holds every recorded pressure and bracket, widened by
    ``margin`` (a factor > 1) and capped at p0."""
    ranges: dict[float, tuple[float, float]] = {}
    for d in data:
        p = np.concatenate([d.pressure_pa[d.has_pressure], d.bracket_pa[~d.has_pressure].ravel()])
        p = p[np.isfinite(p) & (p > 0)]
        lo, hi = ranges.get(d.temperature_k, (np.inf, 0.0))
        ranges[d.temperature_k] = (min(lo, float(p.min())), max(hi, float(p.max())))
    out = {}
    for t, (lo, hi) in ranges.items():
        top = min(hi * margin, saturated_vapour_pressure(adsorbate, t))
        out[t] = (min(lo, top) / margin, top)
    return out


@dataclass(frozen=True, eq=False)
class RunCurve:
    """The model along one run's leg, in the run's unit, split as V_p·a + b (see the module notes): vertices
    ``log_p`` (M,) (ln Pa, ascending; a riser is two vertices at one pressure), ``a``, ``b`` (M,); at the
    brackets of the pressure-less points ``lo``, ``hi`` (m, 2) as (a, b), ``lo_valid`` (m,)."""

    log_p: np.ndarray
    a: np.ndarray
    b: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    lo_valid: np.ndarray

    def at(self, log_p) -> tuple[np.ndarray, np.ndarray]:
        return np.interp(log_p, self.log_p, self.a), np.interp(log_p, self.log_p, self.b)


class GeometryReuse:
    """One geometry stage per pore for a fit: a parameter set that changes only the wall strength gets the
    stage already built for its pore, its wall potential rescaled (`porefill.physics.lattice_gas.stages.rescaled_geometry`,
    which says when that is exact to the cells' tolerance); any other change builds the stage afresh."""

    def __init__(self, temperatures_k) -> None:
        self.temperatures_k = tuple(float(t) for t in temperatures_k)
        self.references: dict = {}
        self.reused = 0

    def stage_for(self, scenario: Scenario, rows: int | None = None):
        """The geometry stage of ``scenario`` (``rows``: as `geometry_stage`), reused or rescaled where it can be."""
        from porefill.physics.lattice_gas.stages import geometry_stage, rescaled_geometry, strength_free_key

        key = (strength_free_key(scenario.geometry_key()), rows)
        reference = self.references.get(key)
        if reference is not None:
            stage = rescaled_geometry(reference, scenario, self.temperatures_k)
            if stage is not None:
                self.reused += 1
                return stage
        stage = geometry_stage(scenario, rows)
        if len(self.references) >= 48:
            self.references.pop(next(iter(self.references)))
        self.references[key] = stage
        return stage


def predict(scenario: Scenario, data: tuple[RunData, ...], sample: Sample, *, n_points: int,
            ranges: dict[float, tuple[float, float]], bisections: int = 10,
            geometries: GeometryReuse | None = None) -> tuple[RunCurve, ...]:
    """The model along every run for one scenario (its pore volume is not used: see `RunCurve`). The
    branches' jumps are placed between grid points to 2^-bisections of an interval (`porefill.physics.lattice_gas.jumps`; 0:
    left as ramps on the grid). ``geometries``: a fit's `GeometryReuse` (default: the scenario's own stage)."""
    geometry = geometries.stage_for if geometries is not None else None
    isotherms = {t: compute_isotherm(scenario.replace(temperature_k=t), n_points=n_points, pressure_range_pa=r,
                                     geometry=geometry)
                 for t, r in ranges.items()}
    curves, cache = [], {}
    for d in data:
        iso = isotherms[d.temperature_k]
        key = (d.temperature_k, d.branch)
        if key not in cache:
            mu, per = (branch_curve(iso, d.branch, bisections=bisections) if bisections
                       else (iso.mu, iso.per_angstrom(d.branch)))
            cache[key] = (np.log(iso.stage.scale.pressure_pa(mu)), per)
        curves.append(_run_curve(d, *cache[key], iso.amount_basis(), sample))
    return tuple(curves)


def _run_curve(d: RunData, log_p: np.ndarray, per: np.ndarray, basis: AmountBasis, sample: Sample) -> RunCurve:
    """One run's `RunCurve` from a branch as ln p (Pa) and atoms per Å."""
    amount = per * unit_factor(d.run, basis, sample)
    known = d.has_pressure
    lo_p, hi_p = d.bracket_pa[~known, 0], d.bracket_pa[~known, 1]
    lo_valid = lo_p > 0
    lo = np.interp(np.log(np.where(lo_valid, lo_p, 1.0)), log_p, amount)
    hi = np.interp(np.log(hi_p), log_p, amount)
    zero = np.zeros_like
    if d.per_gram:
        return RunCurve(log_p, amount, zero(amount), np.c_[lo, zero(lo)], np.c_[hi, zero(hi)], lo_valid)
    return RunCurve(log_p, zero(amount), amount, np.c_[zero(lo), lo], np.c_[zero(hi), hi], lo_valid)


def estimate_pore_volume(iso, runs, sample: Sample, *, bounds: tuple[float, float], noise_relative: float = 0.02,
                         noise_floor: float = 0.05) -> float | None:
    """The specific pore volume (cm³/g) that puts the per-gram ``runs`` best on the computed isotherm ``iso``:
    the vertical weighted least-squares value in closed form (`solve_pore_volume` with no pressure noise; the
    σ of `prepare_runs`), within ``bounds``. For drawing runs whose pore volume was not given; None where no
    run is per gram or the runs cannot be compared (no pressure, above p0, dosed without a mass)."""
    per_gram = tuple(r for r in runs if r.amount_unit in PER_GRAM_UNITS)
    if not per_gram:
        return None
    from porefill.physics.lattice_gas.branches import measured_branches

    scenario = iso.stage.scenario
    try:
        data = prepare_runs(per_gram, scenario=scenario, sample=sample,
                            branches=measured_branches(scenario.pore_ends, scenario.adsorbate),
                            noise_relative=noise_relative, noise_floor=noise_floor, gauge_floor_pa=None)
    except ValueError:
        return None
    log_p, basis = np.log(iso.pressure_pa), iso.amount_basis()
    curves = tuple(_run_curve(d, log_p, iso.per_angstrom(d.branch), basis, sample) for d in data)
    if not any(np.any(d.has_pressure) for d in data):
        return None
    return solve_pore_volume(curves, data, bounds, float(np.mean(bounds)), 0.0)


def _nearest(curve_x, curve_y, x, y, sx: float, sy) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Shortest distance from points (x, y) to the polyline (curve_x, curve_y), x scaled by ``sx`` and y
    by each point's ``sy``; and the polyline's nearest point (x, y) to each."""
    px = (curve_x[None, :] - x[:, None]) / sx
    py = (curve_y[None, :] - y[:, None]) / sy[:, None]
    dx, dy = np.diff(px, axis=1), np.diff(py, axis=1)
    dd = dx * dx + dy * dy
    t = np.clip(-(px[:, :-1] * dx + py[:, :-1] * dy) / np.where(dd > 0, dd, 1.0), 0.0, 1.0)
    ex, ey = px[:, :-1] + t * dx, py[:, :-1] + t * dy
    d2 = ex**2 + ey**2
    k, rows = np.argmin(d2, axis=1), np.arange(x.size)
    return np.sqrt(d2[rows, k]), x + sx * ex[rows, k], y + sy * ey[rows, k]


def compare_points(curve: RunCurve, d: RunData, pore_volume: float, sigma_lnp: float):
    """Every term of the residuals of one run's points with pressure, in the run's order: (model at the
    recorded pressure, the model curve's nearest point as (ln p, amount), residuals (model − measured)/σ or,
    with ``sigma_lnp`` > 0, sign(model − measured) × the distance to that nearest point in
    (ln p/σ_lnp, amount/σ)). With ``sigma_lnp`` = 0 the nearest point is the recorded pressure's."""
    known = d.has_pressure
    y, s = d.run.amount[known], d.sigma[known]
    x = np.log(d.pressure_pa[known])
    a, b = curve.at(x)
    model = pore_volume * a + b
    vertical = model - y
    if sigma_lnp > 0 and y.size:
        dist, x_near, y_near = _nearest(curve.log_p, pore_volume * curve.a + curve.b, x, y, sigma_lnp, s)
        return model, x_near, y_near, np.sign(vertical) * dist
    return model, x, model, vertical / s


def run_residuals(curve: RunCurve, d: RunData, pore_volume: float, sigma_lnp: float):
    """Normalised residuals of one run: at the points with pressure, (model − measured)/σ, or with
    ``sigma_lnp`` > 0 the signed distance to the model curve in (ln p/σ_lnp, amount/σ) — so a point beside
    a vertical step is compared at equal coverage, horizontally (`compare_points`); then the pressure-less
    points (`residuals`). (χ² does not care for the sign; the reports turn it to measured − model.)"""
    known = d.has_pressure
    r_p = compare_points(curve, d, pore_volume, sigma_lnp)[3]
    y_c, s_c = d.run.amount[~known], d.sigma[~known]
    lo = np.where(curve.lo_valid, pore_volume * curve.lo[:, 0] + curve.lo[:, 1], -np.inf)
    hi = pore_volume * curve.hi[:, 0] + curve.hi[:, 1]
    r_c = (np.clip(y_c, lo, np.maximum(hi, lo)) - y_c) / s_c
    return r_p, r_c


def residuals(pred, data: tuple[RunData, ...], pore_volume: float, sigma_lnp: float):
    """Normalised residuals of every run: (points with pressure, pressure-less points), each concatenated
    in run order. A pressure-less point's model value is its amount clipped into [n(p_lo), n(p_hi)]."""
    parts = [run_residuals(c, d, pore_volume, sigma_lnp) for c, d in zip(pred, data)]
    return np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts])


def _vertical_pore_volume(pred, data, bounds, start) -> float:
    """Exact minimiser of the vertical χ²(V_p), a convex piecewise quadratic: Newton's method on the
    active set of the pressure-less points' one-sided residuals, clipped to ``bounds``."""
    v = start
    for _ in range(50):
        num = den = 0.0
        r_c = residuals(pred, data, v, 0.0)[1]
        i = 0
        for c, d in zip(pred, data):
            known = d.has_pressure
            a, b = c.at(np.log(d.pressure_pa[known]))
            w = 1.0 / d.sigma[known] ** 2
            num += np.sum(w * a * (d.run.amount[known] - b))
            den += np.sum(w * a * a)
            m = int((~known).sum())
            rc = r_c[i:i + m]
            i += m
            active = rc != 0
            ab = np.where((rc < 0)[:, None], c.hi, c.lo)[active]
            w_c = 1.0 / d.sigma[~known][active] ** 2
            num += np.sum(w_c * ab[:, 0] * (d.run.amount[~known][active] - ab[:, 1]))
            den += np.sum(w_c * ab[:, 0] ** 2)
        if den <= 0:
            return float(np.clip(v, *bounds))
        new = float(np.clip(num / den, *bounds))
        if abs(new - v) <= 1e-12 * max(abs(v), 1e-12):
            return new
        v = new
    return v


def solve_pore_volume(pred, data: tuple[RunData, ...], bounds: tuple[float, float], start: float,
                      sigma_lnp: float) -> float:
    """The pore volume (cm³/g) minimising χ² for this prediction, within ``bounds``.

    With vertical residuals χ²(V_p) is a convex piecewise quadratic, minimised exactly; with the distance
    residuals (``sigma_lnp`` > 0) a one-variable Gauss–Newton descent from that value refines it (no new
    model evaluation is needed: V_p only scales the curve).
    """
    v = _vertical_pore_volume(pred, data, bounds, start)
    if sigma_lnp <= 0:
        return v

    def chi(vp):
        r = np.concatenate(residuals(pred, data, vp, sigma_lnp))
        return r, float(r @ r)

    r, cost = chi(v)
    for _ in range(8):
        h = 1e-6 * max(v, 1e-9)
        dr = (chi(v + h)[0] - r) / h
        den = float(dr @ dr)
        if den <= 0:
            break
        step = -float(r @ dr) / den
        while True:
            new = float(np.clip(v + step, *bounds))
            r_new, c_new = chi(new)
            if c_new <= cost or abs(step) < 1e-10 * v:
                break
            step *= 0.5
        if c_new > cost:
            break
        done = abs(new - v) <= 1e-9 * v
        v, r, cost = new, r_new, c_new
        if done:
            break
    return v


def simulated_run(scenario: Scenario, *, pressure_pa, leg: str = "adsorption", branch: str | None = None,
                  pressure_unit: str = "Pa", amount_unit: str = "mmol/g", sample: Sample | None = None,
                  n_points: int = 2000, name: str = "model", source: str = "model") -> MeasuredRun:
    """A noiseless run made by the model: amounts at ``pressure_pa`` (Pa, in the order given) on the leg's
    branch (default: the one the leg follows in pores with the scenario's ends, `Isotherm.measured_branch`), in ``amount_unit`` and ``pressure_unit``.

    The isotherm runs from a nearly empty pore to p0 on ``n_points`` chemical potentials (so the branches are
    those of a pore filled from empty and emptied from full), its jumps placed between grid points
    (`porefill.physics.lattice_gas.jumps`); per-gram amounts take the pore volume from
    ``sample`` or else the scenario.
    """
    sample = sample or Sample(pore_volume_cm3_g=scenario.pore_volume_cm3_g)
    if sample.pore_volume_cm3_g is None and scenario.pore_volume_cm3_g is not None:
        sample = sample.with_value("pore_volume_cm3_g", scenario.pore_volume_cm3_g, "typed")
    iso = compute_isotherm(scenario, n_points=n_points)
    p = np.asarray(pressure_pa, float)
    mu, per = branch_curve(iso, branch or iso.measured_branch(leg), bisections=16)       # jumps where they are, not on the grid
    amount = np.interp(np.log(p), np.log(iso.stage.scale.pressure_pa(mu)), per)
    probe = MeasuredRun(name, source, [np.nan], pressure_unit, [1.0], amount_unit, leg, scenario.temperature_k)
    values = amount * unit_factor(probe, iso.amount_basis(), sample, sample.pore_volume_cm3_g or 1.0)
    shown = from_pascal(p, pressure_unit, p0_pa=iso.stage.saturation_pressure_pa)
    return MeasuredRun(name, source, shown, pressure_unit, values, amount_unit, leg, scenario.temperature_k)
