"""From the optimum of a fit to its report: Jacobian, covariance, goodness of fit, warnings; model curves.

Covariance: cov = s² (JᵀJ)⁻¹, s² = χ²/(n − p), with J the Jacobian of the normalised residuals (Press et al.,
Numerical Recipes, 3rd ed., §15.4–15.5 — value from memory). JᵀJ is inverted after scaling its columns to
unit norm, through its eigenvalues, so a near-singular direction is seen (eigenvalue below 1e-10 of the
largest) and reported rather than turned into digits. R² = 1 − Σr²/Σ((y − ȳ)/σ)² over the points with
pressure, ȳ the σ-weighted mean of each run (common practice, no source).

Two warnings say when the reported errors should not be read at face value:
- **Scatter above the assumed noise** (`noise_warning`): reduced χ² above ``NOISE_WARNING_REDUCED_CHI2`` = 4,
  i.e. the residuals' scatter more than twice the assumed noise. Chance alone rarely gets there: with 5 degrees
  of freedom P(χ²/ν > 4) is about 0.001, and the spread of χ²/ν shrinks as √(2/ν) (common practice, no source).
  Then the model does not describe the data within the assumed noise, and the standard errors, scaled by
  √(reduced χ²), stand for a misfit rather than for noise.
- **A parameter near its bound** (`near_bound`): within ``NEAR_BOUND_ERRORS`` = 2 of its standard errors of a
  bound, or within 1e-3 of the bound width: the optimum may lie beyond the bound, where the fit could not go,
  and the curvature there does not give the error (common practice, no source).
"""
from __future__ import annotations

import numpy as np

from porefill.physics.fitting import model as fm
from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.fitting.params import FREE_PARAMETERS, PARAMETER_UNITS
from porefill.physics.substances.units import from_pascal

__all__ = ["NOISE_WARNING_REDUCED_CHI2", "NEAR_BOUND_ERRORS", "near_bound", "bound_warning",
           "noise_warning", "build_result", "curves"]

_SINGULAR = 1e-10          # eigenvalue of the column-scaled JᵀJ, relative to the largest
_CORRELATED = 0.99         # |correlation| above which two parameters are reported as hard to tell apart
NOISE_WARNING_REDUCED_CHI2 = 4.0   # scatter twice the assumed noise (module notes; common practice, no source)
NEAR_BOUND_ERRORS = 2.0            # standard errors from a bound that make the error unreliable (module notes)
_AT_BOUND = 1e-3                   # of the bound width: at the bound whatever the error says


def near_bound(value: float, stderr: float, bounds: tuple[float, float]) -> str | None:
    """'lower' or 'upper' when ``value`` lies within ``NEAR_BOUND_ERRORS`` standard errors of that bound or
    within 1e-3 of the bound width of it (a NaN error: the width rule alone); else None."""
    lo, hi = bounds
    reach = _AT_BOUND * (hi - lo)
    if np.isfinite(stderr):
        reach = max(reach, NEAR_BOUND_ERRORS * float(stderr))
    below, above = value - lo, hi - value
    if min(below, above) > reach:
        return None
    return "lower" if below <= above else "upper"


def bound_warning(name: str, value: float, stderr: float, bounds: tuple[float, float]) -> str | None:
    """The warning for a parameter at or near a bound (`near_bound`), calling its standard error unreliable;
    None when it is clear of both."""
    side = near_bound(value, stderr, bounds)
    if side is None:
        return None
    lo, hi = bounds
    edge = lo if side == "lower" else hi
    unit = PARAMETER_UNITS.get(name, "")
    u = f" {unit}" if unit else ""
    if abs(value - edge) <= _AT_BOUND * (hi - lo):
        where = f"is at its {side} bound ({edge:g}{u})"
    else:
        where = (f"is near its {side} bound ({edge:g}{u}): {abs(value - edge):.2g}{u} from it, within "
                 f"{NEAR_BOUND_ERRORS:g} standard errors ({stderr:.2g}{u})")
    return (f"{name} = {value:.4g}{u} {where}: its standard error is unreliable there (the best value may lie "
            "beyond the bound); widen the bounds or fix it")


def noise_warning(reduced_chi2: float, noise_relative: float, *, scaled: bool = True) -> str | None:
    """The warning for residuals much larger than the assumed noise: reduced χ² above
    ``NOISE_WARNING_REDUCED_CHI2``; None otherwise. ``scaled``: the standard errors were scaled by
    √(reduced χ²) (`FitRequest.scale_covariance`)."""
    if not (np.isfinite(reduced_chi2) and reduced_chi2 > NOISE_WARNING_REDUCED_CHI2):
        return None
    factor = float(np.sqrt(reduced_chi2))
    errors = (f"the standard errors are scaled up by √(reduced χ²) = {factor:.2g} to match the scatter, so they "
              "measure the misfit rather than the noise" if scaled else
              "the standard errors assume the stated noise and are too small for this scatter")
    return (f"the residuals are much larger than the assumed noise: reduced χ² {reduced_chi2:.3g} (about 1 when the "
            f"scatter matches the noise), estimated relative noise {noise_relative * factor:.3g} against an assumed "
            f"{noise_relative:.3g}. The model does not describe the data within the assumed noise; {errors}. Check "
            "the branch compared with each leg, the site model and the free parameters, or give the noise the data "
            "really have")


def _fixed_v_residuals(obj, u, n_points: int, pore_volume: float) -> np.ndarray:
    _, pred = obj.prediction(u, n_points, strict=True)
    return np.concatenate(fm.residuals(pred, obj.data, pore_volume, obj.request.pressure_noise))


def _jacobian(obj, u: np.ndarray, pred, pore_volume: float) -> np.ndarray:
    """(n_all, p) Jacobian of the normalised residuals in the parameters' own units (``FREE_PARAMETERS``
    order): central differences of ``error_step`` in the nonlinear ones with V_p held; the pore-volume column by a small
    difference of V_p alone (it only scales the model curve, so no model evaluation is needed)."""
    space, req = obj.space, obj.request
    cols = []
    for j, name in enumerate(space.nonlinear):
        up, dn = u.copy(), u.copy()
        up[j], dn[j] = min(u[j] + req.error_step, 1.0), max(u[j] - req.error_step, 0.0)
        r_up = _fixed_v_residuals(obj, up, req.local_points, pore_volume)
        r_dn = _fixed_v_residuals(obj, dn, req.local_points, pore_volume)
        cols.append((r_up - r_dn) / ((up[j] - dn[j]) * space.width(name)))
    if "pore-volume" in space.free:
        h = 1e-6 * pore_volume
        r_up, r_dn = (np.concatenate(fm.residuals(pred, obj.data, v, req.pressure_noise))
                      for v in (pore_volume + h, pore_volume - h))
        cols.append((r_up - r_dn) / (2.0 * h))
    return np.column_stack(cols) if cols else np.zeros((obj.n, 0))


def _covariance(jac: np.ndarray, s2: float) -> tuple[np.ndarray, np.ndarray]:
    """cov = s² (JᵀJ)⁻¹ through the eigenvalues of the column-scaled JᵀJ; and the (p,) flags of parameters
    in a direction the data do not determine (zero column or near-null eigenvector)."""
    p = jac.shape[1]
    norm = np.sqrt(np.sum(jac**2, axis=0))
    undetermined = norm == 0
    scale = np.where(undetermined, 1.0, norm)
    a = (jac.T @ jac) / np.outer(scale, scale)
    w, v = np.linalg.eigh(a)
    small = w <= _SINGULAR * max(w.max(), 1e-300)
    for k in np.flatnonzero(small):
        undetermined |= np.abs(v[:, k]) > 0.3
    inv = (v[:, ~small] / w[~small]) @ v[:, ~small].T
    cov = s2 * inv / np.outer(scale, scale)
    cov[undetermined, :] = np.nan
    cov[:, undetermined] = np.nan
    return cov.reshape(p, p), undetermined


def _r_squared(obj, r_p: np.ndarray) -> float:
    total = 0.0
    for d in obj.data:
        y, s = d.run.amount[d.has_pressure], d.sigma[d.has_pressure]
        if y.size:
            w = 1.0 / s**2
            total += float(np.sum(((y - np.sum(w * y) / np.sum(w)) / s) ** 2))
    return 1.0 - float(r_p @ r_p) / total if total > 0 else float("nan")


def _warnings(space, values, names, stderr, corr, undetermined, n, n_violated, obj) -> list[str]:
    out = []
    p = len(names)
    if n <= p:
        out.append(f"{n} point{'s' if n != 1 else ''} with pressure for {p} parameter{'s' if p != 1 else ''}: "
                   "the uncertainties cannot be estimated")
    for i, name in enumerate(names):
        lo, hi = space.bounds[name]
        unit = PARAMETER_UNITS[name]
        v = values[name]
        at_bound = bound_warning(name, v, stderr[i], (lo, hi))
        if at_bound:
            out.append(at_bound)
        if undetermined[i]:
            out.append(f"{name} is not determined by the data (the fit does not change when it moves)")
        elif n > p and np.isfinite(stderr[i]) and (stderr[i] > abs(v) or stderr[i] > 0.25 * (hi - lo)):
            out.append(f"{name} is not determined by the data: standard error {stderr[i]:.3g} against a value "
                       f"of {v:.4g}{' ' + unit if unit else ''} (bounds {lo:g} to {hi:g})")
    for i in range(p):
        for j in range(i + 1, p):
            if np.isfinite(corr[i, j]) and abs(corr[i, j]) > _CORRELATED:
                out.append(f"{names[i]} and {names[j]} are strongly correlated ({corr[i, j]:+.3f}): the data "
                           "hardly tell them apart")
    if n_violated:
        out.append(f"{n_violated} point{'s' if n_violated != 1 else ''} without pressure "
                   f"{'are' if n_violated != 1 else 'is'} not reached by the model at equal coverage between the "
                   "neighbouring recorded pressures")
    if space.wall_clamped(values):
        out.append(f"the wall a0 − √3·side fell below the thinnest physical wall and was held at "
                   f"{space.wall_min:.2f} Å")
    out.extend(obj.notes)
    return out


def _alternatives(space, names, values, stderr, chi2, s2, others) -> list[str]:
    """A warning for each other local optimum within Δχ²/s² < 4 of the best whose parameters differ by more
    than three standard errors: the data do not single out one parameter set."""
    out = []
    for c, u in others:
        if not np.isfinite(s2) or (c - chi2) / s2 >= 4.0:
            continue
        alt = space.values_of(u)
        far = [n for i, n in enumerate(names) if n != "pore-volume" and np.isfinite(stderr[i])
               and abs(alt[n] - values[n]) > 3.0 * stderr[i]]
        if far:
            text = ", ".join(f"{n} {alt[n]:.4g} {PARAMETER_UNITS[n]}".rstrip() for n in far)
            out.append(f"another parameter set fits about as well (χ² {c:.4g} against {chi2:.4g}): {text}; "
                       "fix or bound one of them, or add data that tell them apart")
    return out


def build_result(obj, u: np.ndarray, others=()):
    """The `porefill.physics.fitting.solve.FitResult` at the scaled optimum ``u`` of the objective ``obj``."""
    from porefill.physics.fitting.solve import FitResult, RunResidual

    space, req = obj.space, obj.request
    values, pred = obj.prediction(u, req.local_points, strict=True, exact=True)
    v_p = space.pore_volume(values, pred, obj.data, req.pressure_noise)
    values["pore-volume"] = v_p
    r_p, r_c = fm.residuals(pred, obj.data, v_p, req.pressure_noise)
    names = tuple(n for n in FREE_PARAMETERS if n in space.free)
    jac = _jacobian(obj, u, pred, v_p)
    n, p = r_p.size, len(names)
    chi2 = float(r_p @ r_p + r_c @ r_c)
    s2 = chi2 / (n - p) if (req.scale_covariance and n > p) else (1.0 if n > p else np.nan)
    cov, undetermined = _covariance(jac, s2)
    stderr = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(stderr, stderr)
    warnings = _warnings(space, values, names, stderr, corr, undetermined, n, int(np.count_nonzero(r_c)), obj)
    warnings += _alternatives(space, names, values, stderr, chi2, s2, others)
    scatter = noise_warning(chi2 / (n - p) if n > p else np.nan, req.noise_relative, scaled=req.scale_covariance)
    if scatter:
        warnings.insert(0, scatter)

    runs = []
    for curve, d in zip(pred, obj.data):
        known = d.has_pressure
        rp, rc = fm.run_residuals(curve, d, v_p, req.pressure_noise)
        at_p, near_log_p, near_amount, _ = fm.compare_points(curve, d, v_p, req.pressure_noise)
        model, resid = np.empty(known.size), np.empty(known.size)
        near_p = np.full(known.size, np.nan)
        model[known], resid[known], resid[~known] = at_p, -rp, -rc          # reported as measured − model
        model[~known] = d.run.amount[~known] + rc * d.sigma[~known]
        near_p[known] = np.exp(near_log_p)
        nearest = model.copy()
        nearest[known] = near_amount
        runs.append(RunResidual(d.run, d.branch, d.temperature_k, d.pressure_pa, model, d.sigma, resid, ~known,
                                near_p, nearest, float(req.pressure_noise)))

    sample = req.sample
    if "pore-volume" in space.free:
        sample = sample.with_value("pore_volume_cm3_g", v_p, "fitted")
    if "a0" in space.free:
        sample = sample.with_value("d100_angstrom", values["a0"] * np.sqrt(3.0) / 2.0, "fitted")
    scenario = space.scenario_for(values, v_p if space.needs_pore_volume else None)
    return FitResult(req, {nm: (float(values[nm]), float(stderr[i])) for i, nm in enumerate(names)},
                     {nm: space.bounds[nm] for nm in names}, names, cov, corr, tuple(runs), chi2, n, int(r_c.size),
                     p, _r_squared(obj, r_p), tuple(warnings), scenario, sample, obj.evaluations)


def curves(result, n_points: int):
    """`porefill.physics.fitting.solve.fitted_curves`: the fitted model over each run's range, in the run's units."""
    from porefill.physics.fitting.solve import FittedCurve

    req = result.request
    data = fm.prepare_runs(req.runs, scenario=req.scenario, sample=req.sample, branches=req.branches,
                           noise_relative=req.noise_relative, noise_floor=req.noise_floor,
                           gauge_floor_pa=req.gauge_floor_pa)
    v_p = result.scenario.pore_volume_cm3_g or result.sample.pore_volume_cm3_g or 1.0
    out = []
    for d in data:
        (lo, hi), = fm.pressure_ranges((d,), adsorbate=req.scenario.adsorbate, margin=1.0 + 1e-9).values()
        iso = compute_isotherm(result.scenario.replace(temperature_k=d.temperature_k), n_points=n_points,
                               pressure_range_pa=(lo, hi))
        amount = iso.per_angstrom(d.branch) * fm.unit_factor(d.run, iso.amount_basis(),
                                                             result.sample, v_p)
        p = iso.pressure_pa
        shown = from_pascal(p, d.run.pressure_unit, p0_pa=iso.stage.saturation_pressure_pa)
        out.append(FittedCurve(d.run, d.branch, shown, p, amount))
    return tuple(out)
