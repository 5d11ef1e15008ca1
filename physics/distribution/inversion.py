"""A measured isotherm as a non-negative, regularised combination of a kernel's isotherms: the pore-size distribution.

The measured amount of every recorded point k (per gram, in its run's unit) is modelled as

    y_k = Σ_i w_i · a_ik,     w_i ≥ 0,

with w_i the specific pore volume (cm³/g) held by pores of kernel size i and a_ik the amount 1 cm³/g of those
pores holds at the point's pressure on the branch its leg follows (`porefill.physics.fitting.model.unit_factor`
times the kernel's atoms per Å: the single-pore fit's conversion, so a one-size distribution is that fit's
model). The weighted residual r = (K w − y)/σ, σ the fit's noise model (`prepare_runs`), is minimised with a
smoothing penalty λ²‖L w‖², L the second differences over the size grid (Tikhonov regularisation, Tikhonov &
Arsenin 1977; as used for adsorption kernels by e.g. Jagiello, Langmuir 10, 2778 (1994) — value from memory),
solved as one non-negative least-squares problem (Lawson & Hanson, `scipy.optimize.nnls`) on the stacked
system [K/σ; λL] w ≈ [y/σ; 0].

**The strength λ** is chosen by generalised cross-validation (Golub, Heath & Wahba, Technometrics 21, 215
(1979)): the λ of a log grid that minimises GCV(λ) = n‖r‖²/(n − df)², with df the trace of the influence
matrix on the sizes the solution uses (the active set of the non-negative solution: the usual linearisation).

**Uncertainties** come from a residual bootstrap (Efron & Tibshirani 1993): the weighted residuals are
resampled onto the fitted curve and the distribution re-solved at the same λ, 200 times (seeded); each size
bin, the total pore volume, mean, mode and width get the standard deviation over those solutions.

Points without a recorded pressure are not used here (they constrain a single pore's fit, not a
distribution); the result says how many were left out. Amounts must be per gram: a distribution of pore
volume means nothing for an amount per pore.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from porefill.physics.distribution.kernel import Kernel
from porefill.physics.fitting.measured import MeasuredRun, Sample
from porefill.physics.fitting.model import PER_GRAM_UNITS, prepare_runs, unit_factor
from porefill.physics.lattice_gas.branches import measured_branches
from porefill.physics.substances.units import AmountBasis

__all__ = ["Distribution", "invert", "bin_edges", "kernel_matrix", "per_volume_factor", "ceiling_pa", "second_differences", "BOOTSTRAP_SAMPLES",
           "MISFIT_REDUCED_CHI2", "EDGE_FRACTION"]

BOOTSTRAP_SAMPLES = 200
MISFIT_REDUCED_CHI2 = 4.0       # as the single-pore fit's noise warning: scatter twice the assumed noise
EDGE_FRACTION = 0.05            # volume in the kernel's first or last size that says it reaches beyond them
_LAMBDAS = np.logspace(-5, 2, 36)
_PER_VOLUME = AmountBasis(area_angstrom2=1.0, perimeter_angstrom=1.0)   # per-gram units only (module notes)


@dataclass(frozen=True, eq=False)
class Distribution:
    """A pore-size distribution found from measured runs with one kernel.

    ``pore_volume_cm3_g`` (sizes,) w_i per kernel size; ``stderr_cm3_g`` their bootstrap standard deviations;
    ``cumulative_cm3_g`` the pore volume in sizes up to each; ``summary`` total/mean/median/mode/width (in the
    kernel's size, Å) with their ``summary_stderr``; ``fitted`` per run the model at its points and the weighted
    residual (measured − model)/σ; ``lam`` the regularisation strength chosen, ``gcv`` the criterion over
    ``lambdas``; ``single_size`` the best one kernel size alone (size, pore volume, χ², reduced χ² with two
    parameters: the simplest model, to compare with); ``notes`` the limits and warnings in plain sentences."""

    kernel: Kernel
    runs: tuple
    sample: Sample
    pore_volume_cm3_g: np.ndarray
    stderr_cm3_g: np.ndarray
    summary: dict
    summary_stderr: dict
    fitted: tuple
    lam: float
    lambdas: np.ndarray
    gcv: np.ndarray
    chi2: float
    points: int
    dof: float
    left_out: int
    single_size: dict = field(default_factory=dict)
    notes: tuple = field(default=())

    @property
    def sizes_angstrom(self) -> np.ndarray:
        return self.kernel.sizes_angstrom

    @property
    def diameters_angstrom(self) -> np.ndarray:
        return self.kernel.diameters_angstrom

    @property
    def cumulative_cm3_g(self) -> np.ndarray:
        return np.cumsum(self.pore_volume_cm3_g)

    @property
    def reduced_chi2(self) -> float:
        return self.chi2 / max(self.points - self.dof, 1.0)

    def density_cm3_g_per_angstrom(self) -> np.ndarray:
        """dV/ds: each bin's volume over its width on the size grid (midpoints between sizes)."""
        return self.pore_volume_cm3_g / np.diff(bin_edges(self.sizes_angstrom))


def bin_edges(s: np.ndarray) -> np.ndarray:
    """Edges of the bins around each size: midpoints between sizes, the ends as far out as their neighbours."""
    return np.concatenate([[s[0] - 0.5 * (s[1] - s[0])], 0.5 * (s[1:] + s[:-1]), [s[-1] + 0.5 * (s[-1] - s[-2])]])


def second_differences(n: int) -> np.ndarray:
    """(n − 2, n) second-difference matrix: the roughness penalty."""
    L = np.zeros((max(n - 2, 0), n))
    for k in range(n - 2):
        L[k, k:k + 3] = (1.0, -2.0, 1.0)
    return L


def ceiling_pa(kernel: Kernel) -> float:
    """The pressure (Pa) 5 % above where the kernel's largest usable pores are full: above it the kernel
    describes nothing more (condensation between particles, or in pores larger than the kernel's)."""
    usable = np.flatnonzero(kernel.usable)
    if usable.size == 0:
        return float("inf")
    full = [part["layers_pa"][-1] for part in kernel.parts(int(usable[-1]))
            if part.get("layers_pa") and part["layers_pa"][-1] is not None]
    return 1.05 * max(full) if full else float("inf")


def per_volume_factor(run: MeasuredRun, sample: Sample) -> float:
    """The run's (per-gram) unit per (atom per Å³ of pore volume) at 1 cm³/g: `unit_factor`, which is per atom
    per Å of one pore, on a unit cross-section."""
    return unit_factor(run, _PER_VOLUME, sample, 1.0)


def kernel_matrix(kernel: Kernel, data, sample: Sample, top_pa: float = float("inf")
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray, list]:
    """(K, y, σ, rows): the kernel at every recorded point of the prepared runs ``data`` up to ``top_pa``, in
    each run's unit per cm³/g of each size, with the measured amounts, their σ and (run index, point index)
    of each row."""
    blocks, ys, sigmas, rows = [], [], [], []
    for j, d in enumerate(data):
        known = np.flatnonzero(d.has_pressure & (np.nan_to_num(d.pressure_pa, nan=np.inf) <= top_pa))
        density = kernel.per_pore_volume(np.log(d.pressure_pa[known]), d.branch)
        blocks.append(density * per_volume_factor(d.run, sample))
        ys.append(np.asarray(d.run.amount, float)[known])
        sigmas.append(d.sigma[known])
        rows.extend((j, int(k)) for k in known)
    return np.vstack(blocks), np.concatenate(ys), np.concatenate(sigmas), rows


def _solve(A: np.ndarray, b: np.ndarray, L: np.ndarray, lam: float) -> np.ndarray:
    from scipy.optimize import nnls

    M = np.vstack([A, lam * L])
    rhs = np.concatenate([b, np.zeros(L.shape[0])])
    w, _ = nnls(M, rhs, maxiter=50 * A.shape[1])
    return w


def _dof(A: np.ndarray, L: np.ndarray, lam: float, w: np.ndarray) -> float:
    """Trace of the influence matrix on the active set of ``w`` (the sizes it uses)."""
    F = w > 0
    if not F.any():
        return 0.0
    AF, LF = A[:, F], L[:, F]
    H = AF.T @ AF + lam ** 2 * (LF.T @ LF)
    try:
        return float(np.trace(np.linalg.solve(H, AF.T @ AF)))
    except np.linalg.LinAlgError:
        return float(F.sum())


def _summary(s: np.ndarray, w: np.ndarray) -> dict:
    total = float(w.sum())
    if total <= 0:
        return {"total_cm3_g": 0.0, "mean": float("nan"), "median": float("nan"), "mode": float("nan"),
                "width": float("nan")}
    mean = float(w @ s / total)
    edges = bin_edges(s)
    cum = np.concatenate([[0.0], np.cumsum(w) / total])       # at the bins' edges
    # the median lies in the first bin where the cumulative volume reaches one half, linear across that bin
    # (bins before it may be empty: interpolating over the whole cumulative curve would straddle them)
    i = int(min(max(np.searchsorted(cum, 0.5, side="left"), 1), cum.size - 1))
    median = edges[i - 1] + (0.5 - cum[i - 1]) / (cum[i] - cum[i - 1]) * (edges[i] - edges[i - 1])
    return {"total_cm3_g": total, "mean": mean, "median": float(median),
            "mode": float(s[int(np.argmax(w))]), "width": float(np.sqrt(w @ (s - mean) ** 2 / total))}


def invert(kernel: Kernel, runs, sample: Sample | None = None, *, noise_relative: float = 0.02,
           noise_floor: float = 0.05, lam: float | None = None, bootstrap: int = BOOTSTRAP_SAMPLES,
           seed: int = 0, legs: tuple | None = None, ceiling="auto") -> Distribution:
    """The pore-size distribution that puts ``runs`` (per-gram `MeasuredRun`s at the kernel's temperature)
    on the kernel. ``lam``: a fixed regularisation strength (relative to the scale of the weighted kernel)
    instead of GCV's choice. ``legs``: the legs used ("adsorption", "desorption"); default: the adsorption
    legs when there are any (a real sample's desorption leg leaves a hysteresis loop the model's open-pore
    branches need not share, and characterisations are quoted from adsorption), else every leg.
    ``ceiling``: points above this pressure (Pa) are left out; "auto" (default): `ceiling_pa`, where the
    kernel's largest pores are full; None: none left out. Raises ValueError naming the run when it cannot be
    used."""
    sample = sample or Sample()
    runs = tuple(runs)
    if not runs:
        raise ValueError("no measured run to invert")
    if legs is None:
        legs = ("adsorption",) if any(r.leg == "adsorption" for r in runs) else ("adsorption", "desorption")
    unknown = [leg for leg in legs if leg not in ("adsorption", "desorption")]
    if unknown or not legs:
        raise ValueError(f"legs must be adsorption and/or desorption; got {', '.join(map(str, legs)) or 'none'}")
    skipped = [r for r in runs if r.leg not in legs]
    runs = tuple(r for r in runs if r.leg in legs)
    if not runs:
        raise ValueError(f"no {' or '.join(legs)} leg among the measured runs")
    base = kernel.spec.base
    for run in runs:
        if not isinstance(run, MeasuredRun):
            raise ValueError(f"expected measured runs; got {type(run).__name__}")
        if run.amount_unit not in PER_GRAM_UNITS:
            raise ValueError(f"{run.source}: run {run.name!r} is in {run.amount_unit}; a pore-size distribution "
                             "needs amounts per gram (mmol/g, mol/g, cm3(STP)/g, or dosed amounts with the mass)")
        t = run.temperature_k if run.temperature_k is not None else base.temperature_k
        if abs(t - base.temperature_k) > 0.05:
            raise ValueError(f"{run.source}: run {run.name!r} was measured at {t:g} K; the kernel is for "
                             f"{base.temperature_k:g} K: build a kernel at the run's temperature")
    data = prepare_runs(runs, scenario=base, sample=sample,
                        branches=measured_branches(base.pore_ends, base.adsorbate),
                        noise_relative=noise_relative, noise_floor=noise_floor, gauge_floor_pa=None)
    lo, hi = kernel.pressure_span_pa()
    for d in data:
        p = d.pressure_pa[d.has_pressure]
        outside = (p < lo * (1 - 1e-9)) | (p > hi * (1 + 1e-9))
        if outside.any():
            k = int(np.flatnonzero(d.has_pressure)[np.flatnonzero(outside)[0]])
            raise ValueError(f"{d.run.source}: run {d.run.name!r}, row {d.run.rows[k]}: pressure "
                             f"{d.pressure_pa[k]:.6g} Pa is outside the kernel's range {lo:.4g}–{hi:.4g} Pa")
    top = ceiling_pa(kernel) if ceiling == "auto" else (float("inf") if ceiling is None else float(ceiling))
    K, y, sigma, rows = kernel_matrix(kernel, data, sample, top)
    left_out = int(sum((~d.has_pressure).sum() for d in data))
    above = int(sum((d.has_pressure & (np.nan_to_num(d.pressure_pa) > top)).sum() for d in data))
    usable = kernel.usable
    n, m = K.shape
    if n < 3:
        raise ValueError(f"only {n} points with a recorded pressure: too few for a pore-size distribution")
    A = K / sigma[:, None]
    b = y / sigma
    A[:, ~usable] = 0.0
    # scale the penalty to the kernel so that λ is a plain number
    scale = float(np.linalg.norm(A, 2)) / 4.0
    L = second_differences(m) * scale
    lambdas = _LAMBDAS.copy()
    gcv = np.full(lambdas.size, np.inf)
    sols = []
    for k, lam_k in enumerate(lambdas):
        w = _solve(A, b, L, lam_k)
        r = A @ w - b
        df = _dof(A, L, lam_k, w)
        gcv[k] = n * float(r @ r) / max(n - df, 1.0) ** 2
        sols.append(w)
    if lam is None:
        best = int(np.argmin(gcv))
        lam_used, w = float(lambdas[best]), sols[best]
    else:
        lam_used = float(lam)
        w = _solve(A, b, L, lam_used)
    r = A @ w - b
    chi2 = float(r @ r)
    dof = _dof(A, L, lam_used, w)
    s = kernel.sizes_angstrom
    summary = _summary(s, w)

    rng = np.random.default_rng(seed)
    boots, sums = [], []
    centred = -(r - r.mean())             # measured − model, centred
    fit_b = A @ w
    for _ in range(max(int(bootstrap), 0)):
        wb = _solve(A, fit_b + rng.choice(centred, size=n, replace=True), L, lam_used)
        boots.append(wb)
        sums.append(_summary(s, wb))
    if boots:
        stderr = np.std(np.array(boots), axis=0, ddof=1)
        summary_err = {k: float(np.nanstd([x[k] for x in sums], ddof=1)) for k in summary}
    else:
        stderr = np.full(m, np.nan)
        summary_err = {k: float("nan") for k in summary}

    fitted = []
    model = K @ w
    for j, d in enumerate(data):
        idx = [i for i, (rj, _) in enumerate(rows) if rj == j]
        fitted.append({"run": d.run, "branch": d.branch, "points": np.array([rows[i][1] for i in idx], int),
                       "measured": y[idx], "model": model[idx], "sigma": sigma[idx],
                       "residual": (y[idx] - model[idx]) / sigma[idx]})
    result = Distribution(kernel, runs, sample, w, stderr, summary, summary_err, tuple(fitted), lam_used,
                          lambdas, gcv, chi2, n, dof, left_out, _single_size(A, b, s, usable))
    result = _with_notes(result)
    if above:
        from dataclasses import replace

        result = replace(result, notes=result.notes + (
            f"{above} point(s) above p/p0 {top / kernel.saturation_pressure_pa:.3g}, where the kernel's largest "
            "pores are already full, were left out: what fills there (between particles, or pores larger than "
            "the kernel's) the kernel cannot describe. Extend the kernel's sizes to use them.",))
    if skipped:
        from dataclasses import replace

        names = ", ".join(repr(r.name) for r in skipped[:3]) + (" …" if len(skipped) > 3 else "")
        result = replace(result, notes=result.notes + (
            f"Only the {' and '.join(legs)} leg(s) were inverted; left out: {names} (ask for both legs to use "
            "them; a hysteresis loop the model does not share would blur the distribution).",))
    return result


def _single_size(A: np.ndarray, b: np.ndarray, s: np.ndarray, usable: np.ndarray) -> dict:
    """The best single kernel size: each column alone with its least-squares (non-negative) volume."""
    aa = np.einsum("ij,ij->j", A, A)
    v = np.where(usable & (aa > 0), np.maximum(A.T @ b, 0.0) / np.where(aa > 0, aa, 1.0), 0.0)
    chi2 = np.array([float(np.sum((A[:, i] * v[i] - b) ** 2)) for i in range(s.size)])
    chi2[~usable] = np.inf
    i = int(np.argmin(chi2))
    return {"size_angstrom": float(s[i]), "pore_volume_cm3_g": float(v[i]), "chi2": float(chi2[i]),
            "reduced_chi2": float(chi2[i] / max(b.size - 2, 1))}


def _with_notes(result: Distribution) -> Distribution:
    from dataclasses import replace

    from porefill.physics.choices import SIZE_NAMES

    k = result.kernel
    s, w = k.sizes_angstrom, result.pore_volume_cm3_g
    name = SIZE_NAMES.get(k.spec.base.shape, "size")
    notes = [f"The kernel covers {name}s {s[0]:g}–{s[-1]:g} Å in {s.size} steps of up to "
             f"{k.spec.spacing_angstrom:.3g} Å (each the mean of {k.spec.parts} pores across its bin): sizes "
             "closer than that are not resolved, and the width of a peak narrower than one step is not "
             "measured (the smoothing spreads it)."]
    total = w.sum()
    if total > 0:
        if w[0] / total > EDGE_FRACTION:
            notes.append(f"warning: {w[0] / total:.0%} of the pore volume sits at the smallest kernel size "
                         f"({s[0]:g} Å): the sample has smaller pores than the kernel covers.")
        if w[-1] / total > EDGE_FRACTION:
            notes.append(f"warning: {w[-1] / total:.0%} of the pore volume sits at the largest kernel size "
                         f"({s[-1]:g} Å): the sample has larger pores than the kernel covers.")
    else:
        notes.append("warning: no pore volume found: the data lie below every kernel isotherm.")
    if result.reduced_chi2 > MISFIT_REDUCED_CHI2:
        notes.append(f"warning: reduced χ² {result.reduced_chi2:.3g} with the assumed noise: the residuals "
                     "show what the kernel cannot describe (look where they run in one direction), or the "
                     "noise is larger than assumed.")
    loops = [c["size_angstrom"] for i, c in enumerate(k.columns) if "error" not in c
             and any(st["adsorption"] is not None and st["desorption"] is not None
                     and st["adsorption"] > st["desorption"] * (1 + 1e-6) for st in k.steps(i))]
    legs = measured_branches(k.spec.base.pore_ends, k.spec.base.adsorbate)
    if legs["adsorption"] == legs["desorption"]:
        notes.append(f"Both legs follow the model's {legs['adsorption']} branch (pore ends "
                     f"'{k.spec.base.pore_ends}'): condensation is reversible at every kernel size, so "
                     "adsorption and desorption give the same distribution.")
    elif loops:
        notes.append(f"The model's mean-field loop opens from {min(loops):g} Å: above it adsorption and "
                     "desorption legs read different branches, and a distribution from one leg need not "
                     "match the other's.")
    if result.left_out:
        notes.append(f"{result.left_out} point(s) without a recorded pressure were left out.")
    errors = k.errors()
    if errors:
        notes.append(f"{len(errors)} kernel size(s) could not be computed and carry no volume: {errors[0]}")
    return replace(result, notes=tuple(notes))
