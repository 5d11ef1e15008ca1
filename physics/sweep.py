"""Sweeps over pore size, wall thickness and temperature, and the targets a pore size is chosen for.

A `SweepSpec` is a base `Scenario` and the values to vary; `SweepSpec.scenarios` lists the frozen
scenarios of its grid (temperature slowest, then wall, size fastest). `sweep_point` computes one of them
into a plain dict (picklable, JSON-ready): its steps, what fills at each step and the occupancy profile
that `meets` reads a `Target` from. Running a whole grid in parallel is the explorer's job
(`porefill.explorer.jobs.sweep_runner`); nothing here prints, reads files or knows about workers.

Site groups (from the orbit labels of `porefill.physics.lattice_gas.stages.ThermalStage.orbit_labels`, the same words a
`Step.filling` uses):

- **centre**: the central channel (label "centre");
- **next ring**: the ring of sites next out from it: the innermost "ring k" (largest k), or, in a pore
  with no inner rings, the wall-contact layer;
- **first layer**: every wall-contact site ("corner", "face", or "wall" for the cylinder and the slit);
- **pore**: every kept site;
- **layer n**: the rows counted from the wall: layer 1 the wall-contact sites, layer k + 1 the sites of
  "ring k" (rings are numbered inwards from the first row inside the wall layer), the centre the last layer.

A group counts as *filled* at a pressure when its sites' equilibrium occupancy is at least the target's
threshold (the centre: its mean, `Isotherm.central_channel_occupancy`; the first layer and the pore: every
orbit of sites), and *empty* when every orbit of it is below the threshold.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from porefill.physics.choices import DEFAULT_POINTS, TARGET_KINDS
from porefill.physics.scenario import Scenario

__all__ = ["SweepSpec", "parse_range", "sweep_point", "fill_class", "step_fill_class", "occupancy_profile",
           "Target", "TARGET_KINDS", "meets", "holding_intervals", "range_edges", "edge_words", "wall_from_d100",
           "FILL_CLASSES",
           "MAX_SWEEP_PORES"]

MAX_SWEEP_PORES = 5000         # pores in one sweep: a few hours on a laptop with the classical model
FILL_CLASSES = ("corner", "face", "wall", "ring", "centre")
_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"


def parse_range(text: str, *, name: str = "range") -> tuple[float, ...]:
    """Values from ``"start:stop:count"`` (inclusive at both ends, like `numpy.linspace`), a single
    number (``"8"``) or a comma list (``"8,10,12.5"``).

    Raises ValueError naming ``name`` and the text when it is none of these, when a number is not finite,
    or when the count is not a whole number of at least 2.
    """
    if not isinstance(text, str) or not text.strip():
        raise ValueError(f"{name}: give start:stop:count (e.g. 10:50:40), one number or a comma list; got {text!r}")
    s = text.strip()
    if ":" in s:
        parts = s.split(":")
        if len(parts) != 3:
            raise ValueError(f"{name} {text!r}: give start:stop:count, three numbers separated by ':' "
                             "(e.g. 10:50:40)")
        start, stop = (_number(p, name, text) for p in parts[:2])
        count_text = parts[2].strip()
        if not re.fullmatch(r"\d+", count_text):
            raise ValueError(f"{name} {text!r}: the count {count_text!r} must be a whole number of at least 2")
        count = int(count_text)
        if count < 2:
            raise ValueError(f"{name} {text!r}: the count must be at least 2 (for one value give just the number)")
        if count > MAX_SWEEP_PORES:
            raise ValueError(f"{name} {text!r}: the count {count} is above the limit of {MAX_SWEEP_PORES}")
        if start == stop:
            raise ValueError(f"{name} {text!r}: start and stop are equal (for one value give just the number)")
        return tuple(float(v) for v in np.linspace(start, stop, count))
    return tuple(_number(p, name, text) for p in s.split(","))


def _number(part: str, name: str, text: str) -> float:
    p = part.strip()
    if not re.fullmatch(_NUMBER, p):
        raise ValueError(f"{name} {text!r}: {p!r} is not a number")
    v = float(p)
    if not math.isfinite(v):
        raise ValueError(f"{name} {text!r}: {p!r} is not finite")
    return v


def wall_from_d100(side_angstrom, d100_angstrom: float):
    """Wall thickness (Å) of a hexagonal array of side ``side_angstrom`` whose X-ray (100) spacing is
    ``d100_angstrom``: w = a0 − √3·t with a0 = 2·d100/√3 (p6mm lattice; `HexagonPore.lattice_spacing_angstrom`
    is a0 = √3·t + w). Negative where the pores would overlap."""
    a0 = 2.0 * d100_angstrom / math.sqrt(3.0)
    return a0 - math.sqrt(3.0) * np.asarray(side_angstrom, float)


def _values(name: str, values) -> tuple:
    if values is None:
        return ()
    if isinstance(values, (str, bytes)) or not hasattr(values, "__iter__"):
        values = (values,)
    out = []
    for v in values:
        if v is None and name == "walls_angstrom":
            out.append(None)          # an isolated pore
            continue
        if isinstance(v, bool) or not isinstance(v, (int, float, np.integer, np.floating)) or not math.isfinite(v):
            raise ValueError(f"{name} must hold finite numbers; got {v!r}")
        out.append(float(v))
    return tuple(out)


@dataclass(frozen=True)
class SweepSpec:
    """A grid of scenarios: ``base`` with each of ``sizes_angstrom`` (Å), ``walls_angstrom`` (Å; None for an
    isolated pore) and ``temperatures_k`` (K). An empty tuple keeps the base's value. ``n_points``: chemical
    potentials along each isotherm.

    ``d100_angstrom`` (hexagonal arrays only, no ``walls_angstrom``): the X-ray (100) spacing of the array
    is known, so each size has its own wall, `wall_from_d100`; a size whose wall would fall outside the
    limits raises ValueError naming it.
    """

    base: Scenario
    sizes_angstrom: tuple = ()
    walls_angstrom: tuple = ()
    temperatures_k: tuple = ()
    n_points: int = DEFAULT_POINTS
    d100_angstrom: float | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.base, Scenario):
            raise ValueError(f"base must be a Scenario; got {type(self.base).__name__}")
        for name in ("sizes_angstrom", "walls_angstrom", "temperatures_k"):
            object.__setattr__(self, name, _values(name, getattr(self, name)))
        from porefill.physics.limits import check_number, check_points
        object.__setattr__(self, "n_points", check_points(self.n_points))
        if self.d100_angstrom is not None:
            check_number("X-ray spacing (d100_angstrom)", self.d100_angstrom, low=0.0, low_open=True, unit="Å")
            if self.base.shape != "hexagon" or self.walls_angstrom:
                raise ValueError("a d100 spacing ties the wall to the side length of a hexagonal array: "
                                 "give it for the hexagon, without walls")
        if self.size > MAX_SWEEP_PORES:
            raise ValueError(f"a sweep of {self.size} pores is above the limit of {MAX_SWEEP_PORES}")
        self.scenarios()                # every value within the limits, or a ValueError naming it

    @property
    def axes(self) -> tuple[tuple, tuple, tuple]:
        """(temperatures, walls, sizes) actually swept, each at least the base's one value."""
        b = self.base
        return (self.temperatures_k or (b.temperature_k,), self.walls_angstrom or (b.wall_angstrom,),
                self.sizes_angstrom or (b.size_angstrom,))

    @property
    def size(self) -> int:
        t, w, s = self.axes
        return len(t) * (1 if self.d100_angstrom is not None else len(w)) * len(s)

    def scenarios(self) -> tuple[Scenario, ...]:
        """The grid's scenarios, temperature slowest, then wall, size fastest (each validated: a value
        outside the limits raises ValueError naming it)."""
        temps, walls, sizes = self.axes
        if self.d100_angstrom is not None:
            return tuple(self._tied(t, s) for t in temps for s in sizes)
        return tuple(self.base.replace(temperature_k=t, wall_angstrom=w, size_angstrom=s)
                     for t in temps for w in walls for s in sizes)

    def _tied(self, temperature_k: float, size: float) -> Scenario:
        wall = float(wall_from_d100(size, self.d100_angstrom))
        try:
            return self.base.replace(temperature_k=temperature_k, wall_angstrom=wall, size_angstrom=size)
        except ValueError as exc:
            raise ValueError(f"side {size:g} Å with d100 = {self.d100_angstrom:g} Å leaves a wall of {wall:.3g} Å: "
                             f"{exc}") from None


# what fills -----------------------------------------------------------------------------------------
def fill_class(label: str) -> str:
    """The class of a site label: 'corner', 'face' (a polygon's face), 'wall' (the wall of a cylinder or
    slit: the word the step table uses for them), 'ring' (any inner ring) or 'centre'."""
    if label in ("face", "wall"):
        return label
    if label.startswith("ring"):
        return "ring"
    if label in ("corner", "centre"):
        return label
    raise ValueError(f"unknown site label {label!r}")


def step_fill_class(step) -> str:
    """The class holding most of the sites a step fills ('spread' when it names none)."""
    counts: dict[str, float] = {}
    for label, n in step.filling:
        c = fill_class(label)
        counts[c] = counts.get(c, 0.0) + float(n)
    return max(counts, key=counts.get) if counts else "spread"


def _ring_number(label: str) -> int | None:
    m = re.fullmatch(r"ring (\d+)", label)
    return int(m.group(1)) if m else None


def occupancy_profile(iso) -> dict[str, np.ndarray]:
    """Along the isotherm's μ grid (equilibrium branch): ``pressure_pa`` (Pa) and the occupancies of the
    site groups of this module's docstring: ``centre`` (mean), ``next_ring`` (highest orbit), ``first_layer``
    and ``pore`` (lowest orbit), and ``layers`` from the wall, the last the centre's.

    A pore between two row counts (`porefill.physics.lattice_gas.row_blend`) gives its lattices' profiles
    averaged with their weights, layer by layer from the wall as the heavier lattice counts them (a layer the
    other lattice lacks is its last ring's; the centre's is its centre's)."""
    parts = getattr(iso, "parts", ())
    if parts:
        profiles = [(w, _one_profile(part)) for w, part in parts]
        heavy = profiles[0][1]
        out = {k: v for k, v in heavy.items() if k in ("pressure_pa", "relative_pressure")}
        for k in ("centre", "next_ring", "first_layer", "pore"):
            out[k] = sum(w * prof[k] for w, prof in profiles)
        n = len(heavy["layers"])

        def layer(prof, i):
            own = prof["layers"]
            return own[-1] if i == n - 1 else own[max(min(i, len(own) - 2), 0)]

        out["layers"] = [sum(w * layer(prof, i) for w, prof in profiles) for i in range(n)]
        return out
    return _one_profile(iso)


def _one_profile(iso) -> dict[str, np.ndarray]:
    """`occupancy_profile` of one lattice."""
    labels = iso.stage.orbit_labels()
    occ = iso.equilibrium_occupancy()
    rings = [_ring_number(lab) for lab in labels]
    wall_layer = [i for i, lab in enumerate(labels) if lab in ("corner", "face", "wall")]
    inner = [r for r in rings if r is not None]
    nxt = [i for i, r in enumerate(rings) if r == max(inner)] if inner else wall_layer
    m = iso.mu.size

    def lowest(idx):
        return occ[:, idx].min(axis=1) if idx else np.full(m, np.nan)

    has_centre = "centre" in labels
    layer_of = [1 if i in wall_layer else (r + 1 if r is not None else None) for i, r in enumerate(rings)]
    last = max([k for k in layer_of if k is not None], default=0) + 1
    layer_of = [last if lab == "centre" else k for lab, k in zip(labels, layer_of)]
    layers = [lowest([i for i, k in enumerate(layer_of) if k == n]) for n in range(1, max(layer_of) + 1)]
    pressure = np.asarray(iso.pressure_pa, float)
    return {
        "pressure_pa": pressure,
        "relative_pressure": pressure / float(iso.stage.saturation_pressure_pa),
        "centre": iso.central_channel_occupancy() if has_centre else np.zeros(m),
        "next_ring": occ[:, nxt].max(axis=1) if nxt else np.zeros(m),
        "first_layer": lowest(wall_layer),
        "pore": occ.min(axis=1),
        "layers": layers,
    }


def _plain(values) -> list:
    return [float(v) if math.isfinite(v) else None for v in np.asarray(values, float)]


def sweep_point(scenario: Scenario, n_points: int = DEFAULT_POINTS) -> dict:
    """One pore of a sweep, computed (`porefill.physics.lattice_gas.adsorption.compute_isotherm`) into plain types.

    Keys: ``size_angstrom``, ``wall_angstrom``, ``temperature_k``, ``site_model`` (the one used),
    ``n_points``, ``saturation_pressure_pa``, ``steps`` (`Isotherm.step_dict` of each step), ``step_fills`` (`step_fill_class` of each step, in the same order) and
    ``profile`` (`occupancy_profile` as lists; None for NaN).
    """
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    iso = compute_isotherm(scenario, n_points=n_points)
    return {
        "size_angstrom": scenario.size_angstrom,
        "wall_angstrom": scenario.effective_wall_angstrom,
        "temperature_k": scenario.temperature_k,
        "site_model": scenario.site_model_used,
        "n_points": n_points,
        "saturation_pressure_pa": float(iso.stage.saturation_pressure_pa),
        "steps": [iso.step_dict(s) for s in iso.steps],
        "step_fills": [step_fill_class(s) for s in iso.steps],
        "profile": {k: ([_plain(x) for x in v] if k == "layers" else _plain(v))
                    for k, v in occupancy_profile(iso).items()},
    }


# targets --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Target:
    """What an experiment wants of a pore, somewhere in the pressure window [``low_pa``, ``high_pa``] (Pa).

    ``kind`` is one of `TARGET_KINDS`: "walls-full-centre-empty" (every wall-contact site filled while the
    centre is still empty), "single-channel" (the centre filled while the next ring is empty), "first-layer"
    (every wall-contact site filled; "below p" is ``high_pa`` = p), "layer" (every site of layer ``layer``
    filled, counted from the wall) or "full-pore" (every site filled). ``threshold``: the occupancy that counts
    as filled (module docstring). With ``relative`` the window is in p/p0 instead of Pa (``low_pa`` and
    ``high_pa`` then hold p/p0; "condensation by p/p0 0.5" is "full-pore" with ``high_pa`` = 0.5).
    """

    kind: str
    low_pa: float = 0.0
    high_pa: float = math.inf
    threshold: float = 0.5
    layer: int = 1
    relative: bool = False

    def __post_init__(self) -> None:
        if self.kind not in TARGET_KINDS:
            raise ValueError(f"target kind must be one of {', '.join(TARGET_KINDS)}; got {self.kind!r}")
        from porefill.physics.limits import check_number
        lo = check_number("target low pressure (low_pa)", self.low_pa, low=0.0, unit="Pa")
        if isinstance(self.high_pa, bool) or not isinstance(self.high_pa, (int, float)) or math.isnan(self.high_pa):
            raise ValueError(f"target high pressure (high_pa) must be a number in Pa; got {self.high_pa!r}")
        if not self.high_pa > lo:
            raise ValueError(f"target pressure window must have low < high; got {self.low_pa!r} – {self.high_pa!r} Pa")
        check_number("target threshold", self.threshold, low=0.0, high=1.0, low_open=True)
        if isinstance(self.layer, bool) or not isinstance(self.layer, int) or not 1 <= self.layer <= 200:
            raise ValueError(f"target layer must be a whole number from 1 (against the wall) to 200; got {self.layer!r}")

    @property
    def description(self) -> str:
        if self.kind == "layer":
            return f"layer {self.layer} complete (counted from the wall)"
        return TARGET_KINDS[self.kind]

    @property
    def window_unit(self) -> str:
        return "p/p₀" if self.relative else "Pa"

    def holds(self, profile: dict) -> np.ndarray:
        """(M,) whether the configuration holds at each grid point of an `occupancy_profile` (any pressure)."""
        g = {k: np.array([np.nan if v is None else v for v in profile[k]], float) for k in profile if k != "layers"}
        t = self.threshold
        with np.errstate(invalid="ignore"):
            if self.kind == "single-channel":
                return (g["centre"] >= t) & (g["next_ring"] < t)
            if self.kind == "walls-full-centre-empty":
                return (g["first_layer"] >= t) & (g["centre"] < t)
            if self.kind == "layer":
                layers = profile.get("layers") or []
                if self.layer > len(layers):
                    return np.zeros(g["pore"].shape, bool)         # the pore has fewer layers
                occ = np.array([np.nan if v is None else v for v in layers[self.layer - 1]], float)
                return occ >= t
            return g["first_layer" if self.kind == "first-layer" else "pore"] >= t


def _profile_of(result) -> dict:
    return result["profile"] if isinstance(result, dict) else occupancy_profile(result)


def holding_intervals(target: Target, result) -> list[tuple[float, float]]:
    """Every run of grid pressures (Pa, lowest and highest of the run) inside the target's window at which
    its configuration holds (the window read in p/p0 for a ``relative`` target; the runs always in Pa).
    ``result``: an `Isotherm` or a `sweep_point` dict (without an ``error``).
    The ends are grid points of the isotherm's μ grid, so they are as fine as its ``n_points``."""
    profile = _profile_of(result)
    p = np.array([np.nan if v is None else v for v in profile["pressure_pa"]], float)
    scale = p
    if target.relative:
        scale = np.array([np.nan if v is None else v for v in profile["relative_pressure"]], float)
    ok = target.holds(profile) & (scale >= target.low_pa) & (scale <= target.high_pa)
    edges = np.diff(np.concatenate([[0], ok.astype(np.int8), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1
    return [(float(p[a]), float(p[b])) for a, b in zip(starts, ends)]


def range_edges(result, interval: tuple[float, float]) -> tuple[bool, bool]:
    """Whether a holding interval (Pa) starts at the first and ends at the last pressure the isotherm was
    computed at: there the configuration may hold further than the computed range shows."""
    p = [v for v in _profile_of(result)["pressure_pa"] if v is not None]
    lo, hi = interval
    return bool(lo <= p[0] * (1 + 1e-9)), bool(hi >= p[-1] * (1 - 1e-9))


def edge_words(result, interval: tuple[float, float], unit: str = "Pa") -> str:
    """``lo – hi`` with what is known past an end that is the computed range's: "to p₀ and beyond the
    computed range" rather than a last grid point that reads as a limit."""
    lo, hi = interval
    first, last = range_edges(result, interval)
    text = f"{'≤ ' if first else ''}{lo:.3g} – {hi:.3g}{' ' + unit if unit else ''}"
    if last:
        text += " (the computed range ends there: it holds up to at least that)"
    elif first:
        text += " (the computed range starts there)"
    return text


def meets(target: Target, result) -> tuple[bool, tuple[float, float] | None]:
    """Whether a pore meets ``target``, and the lowest run of pressures (Pa) where it does
    (`holding_intervals`; None when it does not)."""
    runs = holding_intervals(target, result)
    return (True, runs[0]) if runs else (False, None)
