"""A kernel: the isotherms of one gas at one temperature over a grid of pore sizes, per branch a measurement follows.

A `KernelSpec` is a base `Scenario` (gas, temperature, shape, wall, model settings), the sizes to vary (Å, in
the shape's own size: a hexagon's side, a cylinder's radius, a slit's width), the number of chemical
potentials per isotherm and the p/p0 range they span (None: each pore's own default range, from a nearly
empty pore to p0). `kernel_column` computes one size into plain types (picklable, JSON-ready), so the
explorer can run the columns in parallel with the sweep machinery and keep them on disk; `Kernel` holds the
columns of a spec and answers, for each branch, the amount of every size at any pressure.

Each column is a bin of sizes, not one size: the mean (per pore volume) of the isotherms of ``parts`` pores
spread evenly over the bin (default 3): a bin is what a distribution's bar means. (Before pores between two row
counts were mixed from the lattices either side, `porefill.physics.lattice_gas.row_blend`, one pore's
condensation jumped by up to 0.07 in p/p0 where a row entered, and the bins were what let a kernel describe a
sample between such a jump and the nearest node; one pore now moves smoothly with its size.)

Each part keeps its three model branches ('adsorption', 'desorption', 'equilibrium') as curves in ln p whose
jumps stand where they are (`porefill.physics.lattice_gas.jumps.branch_curve`), in atoms per Å of one pore,
and the cross-section of the liquid the full pore holds (`GeometryStage.liquid_area_angstrom2`: pore volumes are
Gurvich volumes), so an amount per gram is V·(per Å)/area — the same conversion as the single-pore fit
(`porefill.physics.fitting.model.unit_factor`). Which branch a measured leg follows is the
scenario's pore-ends rule (`porefill.physics.lattice_gas.branches.measured_branches`).
"""
from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field

import numpy as np

from porefill.physics.choices import BRANCHES
from porefill.physics.scenario import Scenario

__all__ = ["KernelSpec", "Kernel", "kernel_column", "pore_part", "DEFAULT_PARTS", "pore_diameter_angstrom", "default_sizes", "KERNEL_VERSION",
           "DEFAULT_DIAMETERS_NM", "DEFAULT_KERNEL_SIZES", "DEFAULT_KERNEL_POINTS"]

KERNEL_VERSION = 6            # bump when what a column holds changes: the disk cache keys on it (4: row blend; 5: quantum inner rows; 6: their region's states)
DEFAULT_DIAMETERS_NM = (2.0, 10.0)   # the mesopores ordered silicas are made with (IUPAC: 2–50 nm mesopores)
DEFAULT_KERNEL_SIZES = 48
DEFAULT_PARTS = 3                    # isotherms averaged per kernel size (module notes)
DEFAULT_KERNEL_POINTS = 200          # condensation p/p0 agrees to 1e-5 between 150 and 3000 points (tests/test_steps.py)
_BISECTIONS = 10              # jump placement, as in the fit (`porefill.physics.lattice_gas.jumps`)


def pore_diameter_angstrom(shape: str, size_angstrom) -> np.ndarray:
    """The diameter a characterisation reports for a pore of this shape and size (Å): the cylinder's 2r, the
    hexagon's area-equivalent circle 2√(A/π) = t·√(6√3/π) ≈ 1.819·t, the slit's width (common practice, no
    source: diameters of hexagonal channels are quoted as the equivalent cylinder's)."""
    s = np.asarray(size_angstrom, float)
    if shape == "cylinder":
        return 2.0 * s
    if shape == "hexagon":
        return s * math.sqrt(6.0 * math.sqrt(3.0) / math.pi)
    if shape == "slit":
        return s.copy()
    raise ValueError(f"no diameter rule for shape {shape!r}")


def default_sizes(shape: str, count: int = DEFAULT_KERNEL_SIZES) -> tuple:
    """Evenly spaced sizes (Å, the shape's own size) whose equivalent diameters span `DEFAULT_DIAMETERS_NM`."""
    d = np.linspace(10.0 * DEFAULT_DIAMETERS_NM[0], 10.0 * DEFAULT_DIAMETERS_NM[1], count)
    per = float(pore_diameter_angstrom(shape, 1.0))
    return tuple(float(round(v, 6)) for v in d / per)


@dataclass(frozen=True)
class KernelSpec:
    """The grid a kernel is built on. ``base``: every input but the size; ``sizes_angstrom``: ascending sizes
    (Å), at least 3; ``n_points``: chemical potentials per isotherm; ``relative_pressure_range``: (low, high)
    p/p0 of every column, or None for each pore's default range."""

    base: Scenario
    sizes_angstrom: tuple
    n_points: int = DEFAULT_KERNEL_POINTS
    relative_pressure_range: tuple | None = (1e-7, 1.0)
    parts: int = DEFAULT_PARTS

    def __post_init__(self) -> None:
        if isinstance(self.parts, bool) or not isinstance(self.parts, int) or not 1 <= self.parts <= 9:
            raise ValueError(f"parts per kernel size must be a whole number from 1 to 9; got {self.parts!r}")
        sizes = tuple(float(s) for s in self.sizes_angstrom)
        if len(sizes) < 3:
            raise ValueError(f"a kernel needs at least 3 pore sizes; got {len(sizes)}")
        if any(not math.isfinite(s) for s in sizes) or any(b <= a for a, b in zip(sizes, sizes[1:])):
            raise ValueError("kernel sizes must be finite and strictly ascending")
        object.__setattr__(self, "sizes_angstrom", sizes)
        if self.relative_pressure_range is not None:
            lo, hi = (float(v) for v in self.relative_pressure_range)
            if not (0.0 < lo < hi <= 1.0):
                raise ValueError(f"kernel p/p0 range must satisfy 0 < low < high <= 1; got {lo!r}, {hi!r}")
            object.__setattr__(self, "relative_pressure_range", (lo, hi))
        for s in sizes:               # the limits' own message, naming the size, before any computing
            self.base.replace(size_angstrom=s)

    def scenarios(self) -> tuple[Scenario, ...]:
        """One scenario per kernel size (its node)."""
        return tuple(self.base.replace(size_angstrom=s, title="", notes="") for s in self.sizes_angstrom)

    def part_sizes(self, i: int) -> tuple[float, ...]:
        """The sizes (Å) whose isotherms make up column ``i``: ``parts`` evenly inside the size's bin, whose
        width is the mean of its two neighbouring steps (the end sizes: their one step)."""
        s = self.sizes_angstrom
        if self.parts == 1:
            return (s[i],)
        left = s[i] - s[i - 1] if i > 0 else s[i + 1] - s[i]
        right = s[i + 1] - s[i] if i + 1 < len(s) else s[i] - s[i - 1]
        width = 0.5 * (left + right)
        return tuple(float(s[i] + width * ((k + 0.5) / self.parts - 0.5)) for k in range(self.parts))

    def to_dict(self) -> dict:
        base = self.base.model_key().to_dict()
        base.pop("size_angstrom", None)
        return {"base": base, "sizes_angstrom": list(self.sizes_angstrom), "n_points": int(self.n_points),
                "relative_pressure_range": (None if self.relative_pressure_range is None
                                            else list(self.relative_pressure_range)),
                "parts": int(self.parts), "site_model": self.base.site_model_used, "version": KERNEL_VERSION}

    def key(self) -> str:
        """A stable hex digest of everything a kernel depends on (the disk cache's file name)."""
        text = json.dumps(self.to_dict(), sort_keys=True, separators=(",", ":"))
        return hashlib.sha256(text.encode()).hexdigest()[:24]

    @property
    def spacing_angstrom(self) -> float:
        """The largest step between neighbouring sizes: below it the kernel cannot tell sizes apart."""
        return float(np.max(np.diff(self.sizes_angstrom)))


def kernel_column(spec: KernelSpec, i: int) -> dict:
    """Column ``i`` of ``spec`` in plain types: ``size_angstrom`` (the node) and ``parts``, one `pore_part`
    per `KernelSpec.part_sizes`; ``error`` (the first part's that failed) when a part cannot be computed."""
    parts = [pore_part(spec.base.replace(size_angstrom=s, title="", notes=""), spec.n_points,
                       spec.relative_pressure_range) for s in spec.part_sizes(i)]
    out = {"size_angstrom": float(spec.sizes_angstrom[i]), "parts": parts}
    errors = [p["error"] for p in parts if "error" in p]
    if errors:
        out["error"] = errors[0]
    return out


def pore_part(scenario: Scenario, n_points: int = DEFAULT_KERNEL_POINTS,
              relative_pressure_range: tuple | None = (1e-7, 1.0)) -> dict:
    """One pore's isotherm in plain types: ``size_angstrom``, ``area_angstrom2`` (the cross-section of the
    liquid the full pore holds, `porefill.physics.substances.units.AmountBasis`),
    ``saturation_pressure_pa``, per branch name ``log_p`` (ln Pa, ascending; a jump is two vertices at one
    pressure) and ``per_angstrom`` (atoms per Å of one pore), ``layers_pa`` (`_layer_pressures`: where each
    layer from the wall forms, the last entry the pore full) and ``steps`` (every step: ``kind``,
    ``relative_pressure``, ``adsorption``/``desorption`` jump p/p0 or None). A pore the model cannot compute
    gives ``error`` instead of curves."""
    from porefill.physics.lattice_gas.adsorption import compute_isotherm
    from porefill.physics.lattice_gas.jumps import branch_curve

    out = {"size_angstrom": float(scenario.size_angstrom)}
    try:
        iso = compute_isotherm(scenario, n_points=n_points,
                               relative_pressure_range=relative_pressure_range)
    except ValueError as exc:
        out["error"] = str(exc).splitlines()[0] if str(exc) else "ValueError"
        return out
    out["area_angstrom2"] = float(iso.basis.area_angstrom2)
    scale = iso.stage.scale
    p0 = float(iso.stage.saturation_pressure_pa)
    out["saturation_pressure_pa"] = p0
    for name in BRANCHES:
        mu, per = branch_curve(iso, name, bisections=_BISECTIONS)
        out[name] = {"log_p": np.log(scale.pressure_pa(mu)).tolist(), "per_angstrom": np.asarray(per, float).tolist()}
    out["layers_pa"] = _layer_pressures(iso)
    out["steps"] = [{"kind": s.kind, "relative_pressure": float(s.pressure_pa / p0),
                     "adsorption": (None if s.adsorption_jump_pressure_pa is None
                                    else float(s.adsorption_jump_pressure_pa / p0)),
                     "desorption": (None if s.desorption_jump_pressure_pa is None
                                    else float(s.desorption_jump_pressure_pa / p0)),
                     "added_per_nm": float(s.added_per_nm), "filling": str(s.filling)}
                    for s in iso.steps]
    return out


def _layer_pressures(iso) -> list:
    """Per layer counted from the wall (the last: the pore full), the pressure (Pa) where its least-filled
    orbit reaches half occupancy on the equilibrium branch (`porefill.physics.sweep.occupancy_profile`),
    interpolated in ln p between grid points, or the equilibrium pressure of a first-order step between them;
    None where it stays below half."""
    from porefill.physics.sweep import occupancy_profile

    prof = occupancy_profile(iso)
    log_p = np.log(prof["pressure_pa"])
    jumps = np.log([st.pressure_pa for st in iso.steps if st.kind == "first-order"])
    out = []
    for occ in [*prof["layers"], prof["pore"]]:
        occ = np.asarray(occ, float)
        above = np.flatnonzero(np.isfinite(occ) & (occ >= 0.5))
        if above.size == 0:
            out.append(None)
            continue
        k = int(above[0])
        if k == 0:
            out.append(float(np.exp(log_p[0])))
            continue
        inside = jumps[(jumps >= log_p[k - 1]) & (jumps <= log_p[k])]
        if inside.size:               # a first-order step in this interval: its equilibrium pressure
            out.append(float(np.exp(inside[0])))
            continue
        f = (0.5 - occ[k - 1]) / (occ[k] - occ[k - 1])
        out.append(float(np.exp(log_p[k - 1] + f * (log_p[k] - log_p[k - 1]))))
    return out


@dataclass(frozen=True, eq=False)
class Kernel:
    """The columns of a `KernelSpec`, in its size order. ``columns``: `kernel_column` dicts; a column with an
    ``error`` is a size the model cannot compute and carries no weight. A column is the mean of its parts'
    isotherms per pore volume: a unit volume of pores spread evenly over the size's bin."""

    spec: KernelSpec
    columns: tuple
    _curves: dict = field(default_factory=dict, repr=False)

    def __post_init__(self) -> None:
        if len(self.columns) != len(self.spec.sizes_angstrom):
            raise ValueError(f"kernel holds {len(self.columns)} columns for {len(self.spec.sizes_angstrom)} sizes")

    @property
    def sizes_angstrom(self) -> np.ndarray:
        return np.asarray(self.spec.sizes_angstrom, float)

    @property
    def diameters_angstrom(self) -> np.ndarray:
        return pore_diameter_angstrom(self.spec.base.shape, self.sizes_angstrom)

    @property
    def usable(self) -> np.ndarray:
        return np.array(["error" not in c for c in self.columns])

    def parts(self, i: int) -> list[dict]:
        return list(self.columns[i]["parts"])

    @property
    def saturation_pressure_pa(self) -> float:
        return float(next(c["parts"][0]["saturation_pressure_pa"] for c in self.columns if "error" not in c))

    def errors(self) -> list[str]:
        return [f"size {c['size_angstrom']:g} Å: {c['error']}" for c in self.columns if "error" in c]

    def _curve(self, i: int, k: int, branch: str) -> tuple[np.ndarray, np.ndarray]:
        key = (i, k, branch)
        if key not in self._curves:
            c = self.columns[i]["parts"][k][branch]
            self._curves[key] = (np.asarray(c["log_p"], float), np.log(np.maximum(np.asarray(c["per_angstrom"],
                                                                                                float), 1e-300)))
        return self._curves[key]

    def pressure_span_pa(self, used=None) -> tuple[float, float]:
        """The pressures (Pa) every usable column (or every one of ``used``) covers."""
        lows, highs = [], []
        chosen = self.usable if used is None else (self.usable & np.asarray(used, bool))
        for i in np.flatnonzero(chosen):
            for k in range(len(self.columns[i]["parts"])):
                lp, _ = self._curve(int(i), k, "equilibrium")
                lows.append(lp[0])
                highs.append(lp[-1])
        return float(np.exp(max(lows))), float(np.exp(min(highs)))

    def per_pore_volume(self, log_p, branch: str) -> np.ndarray:
        """(n, sizes) atoms per Å³ of pore volume of each size at ln p (Pa) on ``branch``: the mean over a
        column's parts of atoms per Å of one pore over its cross-section; 0 for unusable columns.
        Interpolated linearly in (ln p, ln amount), exact in the Henry range where the amount is
        proportional to p (a linear interpolation of the amount overshoots there by up to the grid's
        ratio). Outside a part's range its end values hold (nearly empty below, p0's amount above)."""
        if branch not in BRANCHES:
            raise ValueError(f"branch must be one of {', '.join(BRANCHES)}; got {branch!r}")
        x = np.asarray(log_p, float)
        out = np.zeros((x.size, len(self.columns)))
        for i in np.flatnonzero(self.usable):
            parts = self.columns[i]["parts"]
            for k, part in enumerate(parts):
                lp, log_per = self._curve(int(i), k, branch)
                out[:, i] += np.exp(np.interp(x, lp, log_per)) / part["area_angstrom2"]
            out[:, i] /= len(parts)
        return out

    def steps(self, i: int) -> list[dict]:
        """Every part's steps of column ``i``."""
        return [st for part in self.columns[i]["parts"] for st in part.get("steps", ())]

    def to_json(self) -> dict:
        return {"spec": self.spec.to_dict(), "columns": list(self.columns)}

    @classmethod
    def from_json(cls, data: dict, spec: KernelSpec) -> "Kernel":
        """A kernel read back for ``spec``; ValueError when the data were built for another spec."""
        if data.get("spec") != json.loads(json.dumps(spec.to_dict())):
            raise ValueError("the stored kernel was built for another specification")
        return cls(spec, tuple(data["columns"]))


def build_kernel(spec: KernelSpec, *, progress=None) -> Kernel:
    """Every column of ``spec`` in this process, one after the other (the explorer runs them in parallel
    and caches them: `porefill.explorer.jobs.kernels`). ``progress(done, total)`` after each size."""
    columns = []
    total = len(spec.sizes_angstrom)
    for i in range(total):
        columns.append(kernel_column(spec, i))
        if progress is not None:
            progress(i + 1, total)
    return Kernel(spec, tuple(columns))


__all__.append("build_kernel")
