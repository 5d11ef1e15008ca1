"""Measured isotherms as the physics layer sees them: frozen runs of numbers, and the sample that scales them.

Files are read at the edge (`porefill.explorer.files.measured`); what reaches the physics is a `MeasuredRun` — one
temperature, one leg, pressures and amounts as arrays in a named unit — and a `Sample`, the description
that turns a measured amount into the model's amount per Å of one pore.

Amount units a lab writes (``MEASURED_AMOUNT_UNITS``):
- specific amounts: mmol/g, mol/g, cm³(STP)/g (STP as in `porefill.physics.substances.units`: 273.15 K, 101.325 kPa);
- amounts per pore: molecules per nm² of wall, per nm of pore length (slit: per nm²);
- dosed amounts: mol, cm³(STP) — divided by the sample mass into mol/g;
- amounts per m² of the sample's surface (as papers normalise by the BET area): mmol/m², µmol/m² —
  multiplied by the sample's specific surface area into mmol/g.
Pressures: any of `porefill.physics.substances.units.PRESSURE_UNITS`; p/p0 needs the model's p0 at the run's temperature. NaN
marks a point with an amount but no usable pressure (a dosed point below what the gauge reads): it is kept,
and compared with the model at equal coverage.

Common practice, no source: for a hexagonal array of pores the X-ray (100) spacing fixes the centre-to-centre
distance a0 = 2·d100/√3, which ties the pore's size to its wall thickness (`Sample.array_spacing_angstrom`).
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from porefill.physics.substances.units import PRESSURE_UNITS, AmountBasis, STP_CM3_PER_MMOL, to_atoms_per_angstrom, to_pascal
from porefill.physics.choices import LEGS, MEASURED_AMOUNT_UNITS

__all__ = ["MEASURED_AMOUNT_UNITS", "LEGS", "Sample", "MeasuredRun", "amount_to_model", "PER_AREA_UNITS", "DOSED_UNITS"]

DOSED_UNITS = ("mol", "cm3(STP)")
PER_AREA_UNITS = ("mmol/m2", "umol/m2")
_PER_AREA_MMOL = {"mmol/m2": 1.0, "umol/m2": 1e-3}       # mmol per m² in each
SOURCES = ("typed", "fitted", "default", "file")


def _positive_or_none(name: str, value) -> None:
    if value is None:
        return
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value) or value <= 0:
        raise ValueError(f"{name} must be a positive number or left empty; got {value!r}")


@dataclass(frozen=True)
class Sample:
    """What turns a measured amount into the model's: mass (g), specific pore volume (cm³/g), specific
    surface area (m²/g), the X-ray (100) spacing d100 (Å). Each may be unknown (None).

    ``sources`` says where each given value came from: a tuple of (field name, one of "typed", "fitted",
    "default", "file") pairs, so the page can show it beside the value.
    """

    mass_g: float | None = None
    pore_volume_cm3_g: float | None = None
    surface_area_m2_g: float | None = None
    d100_angstrom: float | None = None
    sources: tuple[tuple[str, str], ...] = ()

    def __post_init__(self) -> None:
        for name in ("mass_g", "pore_volume_cm3_g", "surface_area_m2_g", "d100_angstrom"):
            _positive_or_none(name, getattr(self, name))
        for name, source in self.sources:
            if name not in ("mass_g", "pore_volume_cm3_g", "surface_area_m2_g", "d100_angstrom"):
                raise ValueError(f"sources names an unknown sample field {name!r}")
            if source not in SOURCES:
                raise ValueError(f"source of {name} must be one of {', '.join(SOURCES)}; got {source!r}")

    @property
    def array_spacing_angstrom(self) -> float | None:
        """Centre-to-centre spacing of a hexagonal array, a0 = 2·d100/√3 (Å); None without d100."""
        return None if self.d100_angstrom is None else 2.0 * self.d100_angstrom / np.sqrt(3.0)

    def source_of(self, name: str) -> str | None:
        """Where ``name``'s value came from, or None when it is unset."""
        if getattr(self, name) is None:
            return None
        return dict(self.sources).get(name, "typed")

    def with_value(self, name: str, value: float | None, source: str) -> "Sample":
        """A copy with ``name`` set to ``value`` and its source recorded."""
        sources = tuple((n, s) for n, s in self.sources if n != name) + (((name, source),) if value is not None else ())
        return replace(self, **{name: value}, sources=sources)

    def to_dict(self) -> dict:
        out = {k: getattr(self, k) for k in ("mass_g", "pore_volume_cm3_g", "surface_area_m2_g", "d100_angstrom")
               if getattr(self, k) is not None}
        if self.sources:
            out["sources"] = dict(self.sources)
        return out

    @classmethod
    def from_dict(cls, data: dict) -> "Sample":
        data = dict(data)
        sources = tuple(sorted(dict(data.pop("sources", {})).items()))
        known = {"mass_g", "pore_volume_cm3_g", "surface_area_m2_g", "d100_angstrom"}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"unknown sample key(s) {', '.join(unknown)}; known: {', '.join(sorted(known))}")
        return cls(**data, sources=sources)


@dataclass(frozen=True, eq=False)
class MeasuredRun:
    """One measured leg at one temperature, as read from a file.

    ``pressure`` (n,) in ``pressure_unit`` (NaN: no usable pressure), ``amount`` (n,) in ``amount_unit``,
    ``rows`` (n,) the 1-based row numbers in ``source`` (for messages). ``temperature_k`` None when the file
    does not say (the scenario's temperature is then assumed). ``leg`` is "adsorption" or "desorption".
    """

    name: str
    source: str
    pressure: np.ndarray
    pressure_unit: str
    amount: np.ndarray
    amount_unit: str
    leg: str = "adsorption"
    temperature_k: float | None = None
    rows: np.ndarray = field(default=None)

    def __post_init__(self) -> None:
        pressure = np.asarray(self.pressure, float).ravel()
        amount = np.asarray(self.amount, float).ravel()
        if pressure.shape != amount.shape:
            raise ValueError(f"{self.source}: pressure and amount columns differ in length "
                             f"({pressure.size} and {amount.size})")
        if amount.size == 0:
            raise ValueError(f"{self.source}: run {self.name!r} has no points")
        if self.pressure_unit not in PRESSURE_UNITS:
            raise ValueError(f"pressure unit must be one of {', '.join(PRESSURE_UNITS)}; got {self.pressure_unit!r}")
        if self.amount_unit not in MEASURED_AMOUNT_UNITS:
            raise ValueError(f"amount unit must be one of {', '.join(MEASURED_AMOUNT_UNITS)}; "
                             f"got {self.amount_unit!r}")
        if self.leg not in LEGS:
            raise ValueError(f"leg must be one of {', '.join(LEGS)}; got {self.leg!r}")
        if not np.all(np.isfinite(amount)):
            raise ValueError(f"{self.source}: amounts must be finite numbers")
        bad = np.isfinite(pressure) & (pressure <= 0)
        if bad.any():
            raise ValueError(f"{self.source}: pressures must be positive (or empty); got {pressure[bad][0]!r}")
        if self.temperature_k is not None:
            _positive_or_none("temperature_k", self.temperature_k)
        rows = np.arange(1, amount.size + 1) if self.rows is None else np.asarray(self.rows, int).ravel()
        if rows.shape != amount.shape:
            raise ValueError(f"{self.source}: rows must give one row number per point")
        for name, value in (("pressure", pressure), ("amount", amount), ("rows", rows)):
            value.setflags(write=False)
            object.__setattr__(self, name, value)

    @property
    def has_pressure(self) -> np.ndarray:
        """(n,) bool: points with a usable pressure."""
        return np.isfinite(self.pressure)

    def pressure_pa(self, p0_pa: float | None = None) -> np.ndarray:
        """Pressures in Pa (NaN kept); p/p0 data needs the model's ``p0_pa``."""
        return to_pascal(self.pressure, self.pressure_unit, p0_pa=p0_pa)

    @property
    def is_dosed(self) -> bool:
        return self.amount_unit in DOSED_UNITS

    def to_dict(self) -> dict:
        """Plain types (for saved scenarios and JSON)."""
        return {"name": self.name, "source": self.source, "leg": self.leg, "temperature_k": self.temperature_k,
                "pressure_unit": self.pressure_unit, "amount_unit": self.amount_unit,
                "pressure": [None if not np.isfinite(v) else float(v) for v in self.pressure],
                "amount": [float(v) for v in self.amount], "rows": [int(r) for r in self.rows]}

    @classmethod
    def from_dict(cls, data: dict) -> "MeasuredRun":
        data = dict(data)
        data["pressure"] = [np.nan if v is None else v for v in data.get("pressure", [])]
        return cls(**data)


def amount_to_model(run: MeasuredRun, basis: AmountBasis, sample: Sample, *, scale: float = 1.0) -> np.ndarray:
    """The run's amounts as atoms (molecules) per Å of one pore — the model's internal amount.

    ``basis`` is the model pore's (`porefill.physics.substances.units.AmountBasis.of`); per-gram amounts use the sample's
    pore volume, dosed amounts also its mass. ``scale`` multiplies the pore volume (a fitted amount scale).
    Raises ValueError naming the missing sample value.
    """
    unit, values = run.amount_unit, np.asarray(run.amount, float)
    if unit in PER_AREA_UNITS:
        if sample.surface_area_m2_g is None:
            raise ValueError(f"{run.source}: amounts in {unit} need the sample's specific surface area (m²/g)")
        values, unit = values * _PER_AREA_MMOL[unit] * sample.surface_area_m2_g, "mmol/g"
    if unit in DOSED_UNITS:
        if sample.mass_g is None:
            raise ValueError(f"{run.source}: dosed amounts in {unit} need the sample mass (g)")
        values = values / sample.mass_g
        unit = "mol/g" if unit == "mol" else "cm3(STP)/g"
    if unit == "mol/g":
        values, unit = values * 1e3, "mmol/g"
    if unit in ("mmol/g", "cm3(STP)/g"):
        if sample.pore_volume_cm3_g is None:
            raise ValueError(f"{run.source}: amounts in {run.amount_unit} need the sample's specific pore "
                             "volume (cm³/g)")
        basis = replace(basis, pore_volume_cm3_g=sample.pore_volume_cm3_g * scale)
    return to_atoms_per_angstrom(values, unit, basis)


# 1 mmol of ideal gas at STP, re-exported for readers that convert dosed volumes
CM3_STP_PER_MMOL = STP_CM3_PER_MMOL
