"""What the Measured data and Sizing tabs hold on screen, as a scenario file keeps it in ``[view.measured]``
and ``[view.sizing]`` (`porefill.explorer.files.scenario_file`).

Every field may be absent (None): a file written before these tables existed, or one that names only some
inputs, opens with the page's own choice for the rest. A value that is there is checked here, with the
words and limits the controls use (`porefill.physics.choices`, `porefill.physics.limits`), so a bad one is
refused with its key and what would be accepted.
"""
from __future__ import annotations

from dataclasses import dataclass, fields

from porefill.physics.choices import (AXES, FREE_PARAMETERS, MEASURED_AMOUNT_UNITS, SITE_MODELS, TARGET_KINDS,
                                      WINDOW_UNITS)
from porefill.physics.limits import MAX_WALL_ANGSTROM, SIZE_RANGE_ANGSTROM, check_number

__all__ = ["MeasuredChoices", "SizingChoices", "AMOUNTS_SHOWN", "SWEEP_ACROSS", "SWEEP_SITE_MODELS", "NO_TARGET",
           "SWEEP_POINTS_RANGE", "KERNEL_COUNT_RANGE", "TARGET_LAYER_RANGE", "CARRY_DEFAULT_MODEL"]

AMOUNTS_SHOWN = ("per nm", *MEASURED_AMOUNT_UNITS)       # the overlay's amounts: per nm of pore or a file's unit
SWEEP_ACROSS = ("size", "temperature", "d100")           # what a sweep varies
SWEEP_SITE_MODELS = ("scenario", *SITE_MODELS)           # "scenario": the site model the Pore tab uses
CARRY_DEFAULT_MODEL = "default"                          # the carried gas's own default site model
NO_TARGET = "none"
SWEEP_POINTS_RANGE = (20, 2000)          # points per isotherm of a sweep (each of many pores)
KERNEL_COUNT_RANGE = (3, 200)            # sizes in a distribution's kernel (each one isotherm)
TARGET_LAYER_RANGE = (1, 200)            # the layer a target asks to be complete
_MAX_TEXT = 200                          # characters in a typed range ("10:30:11")
_MAX_SIZE = max(hi for _, hi in SIZE_RANGE_ANGSTROM.values())


def _one_of(name: str, value, known) -> None:
    if not isinstance(value, str) or value not in known:
        raise ValueError(f"{name} must be one of {', '.join(known)}; got {value!r}"[:300])


def _whole(name: str, value, low: int, high: int) -> None:
    if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
        raise ValueError(f"{name} must be a whole number from {low} to {high}; got {value!r}"[:300])


def _flag(name: str, value) -> None:
    if not isinstance(value, bool):
        raise ValueError(f"{name} must be true or false; got {value!r}"[:300])


def _text(name: str, value) -> None:
    if not isinstance(value, str) or len(value) > _MAX_TEXT or any(ord(c) < 32 for c in value):
        raise ValueError(f"{name} must be one line of text of at most {_MAX_TEXT} characters; got {value!r}"[:300])


class _Choices:
    """A frozen set of optional choices: checked on creation, written without the absent ones."""

    _TABLE = ""

    def to_dict(self) -> dict:
        out = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if value is not None:
                out[f.name] = list(value) if isinstance(value, tuple) else value
        return out

    @classmethod
    def from_dict(cls, data: dict):
        known = [f.name for f in fields(cls)]
        unknown = sorted(set(data) - set(known))
        if unknown:
            raise ValueError(f"unknown {cls._TABLE} key(s) {', '.join(unknown)}; known: {', '.join(known)}")
        return cls(**data)


@dataclass(frozen=True)
class MeasuredChoices(_Choices):
    """The Measured data tab's view and fit inputs (the runs and the sample are tables of their own): the
    overlay's x axis, the unit its amounts are shown in, the parameters a fit frees, whether points above p₀
    are left out, the distribution's kernel sizes (the shape's own size, Å) and the gas, temperature (K) and
    site model its prediction is carried to."""

    _TABLE = "view.measured"

    axis: str | None = None
    amounts_in: str | None = None
    free: tuple | None = None
    drop_above_p0: bool | None = None
    kernel_first_angstrom: float | None = None
    kernel_last_angstrom: float | None = None
    kernel_count: int | None = None
    carry_gas: str | None = None
    carry_temperature_k: float | None = None
    carry_site_model: str | None = None

    def __post_init__(self) -> None:
        from porefill.physics.substances.materials import ADSORBATES

        if self.axis is not None:
            _one_of("axis", self.axis, AXES)
        if self.amounts_in is not None:
            _one_of("amounts_in", self.amounts_in, AMOUNTS_SHOWN)
        if self.free is not None:
            if not isinstance(self.free, (list, tuple)):
                raise ValueError(f"free must be a list of parameter names; got {self.free!r}"[:300])
            for item in self.free:
                _one_of("free", item, FREE_PARAMETERS)
            object.__setattr__(self, "free", tuple(dict.fromkeys(self.free)))
        if self.drop_above_p0 is not None:
            _flag("drop_above_p0", self.drop_above_p0)
        for name in ("kernel_first_angstrom", "kernel_last_angstrom"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, check_number(name, getattr(self, name), low=0.0, high=_MAX_SIZE,
                                                            unit="Å"))
        if self.kernel_count is not None:
            _whole("kernel_count", self.kernel_count, *KERNEL_COUNT_RANGE)
        if self.carry_gas is not None:
            _one_of("carry_gas", self.carry_gas, list(ADSORBATES))
        if self.carry_temperature_k is not None:
            object.__setattr__(self, "carry_temperature_k",
                               check_number("carry_temperature_k", self.carry_temperature_k, low=0.0, high=1000.0,
                                            low_open=True, unit="K"))
        if self.carry_site_model is not None:
            _one_of("carry_site_model", self.carry_site_model, (CARRY_DEFAULT_MODEL, *SITE_MODELS))


@dataclass(frozen=True)
class SizingChoices(_Choices):
    """The Sizing tab's inputs: what the sweep varies, the ranges as typed (sizes and walls in Å,
    temperatures in K: "start:stop:count", one number or a list), the d100 spacing (Å), the site model, the
    points per isotherm, the apparatus's window (its unit, lowest and highest: Pa or p/p₀) and the target
    (a kind of `porefill.physics.choices.TARGET_KINDS` or "none", and the layer a "layer" target asks for).
    A Dask scheduler's address is not kept: it names a machine, not the question."""

    _TABLE = "view.sizing"

    across: str | None = None
    sizes: str | None = None
    walls: str | None = None
    temperatures: str | None = None
    d100_angstrom: float | None = None
    site_model: str | None = None
    points: int | None = None
    window_unit: str | None = None
    low: float | None = None
    high: float | None = None
    target: str | None = None
    layer: int | None = None

    def __post_init__(self) -> None:
        if self.across is not None:
            _one_of("across", self.across, SWEEP_ACROSS)
        for name in ("sizes", "walls", "temperatures"):
            if getattr(self, name) is not None:
                _text(name, getattr(self, name))
        if self.d100_angstrom is not None:
            object.__setattr__(self, "d100_angstrom", check_number("d100_angstrom", self.d100_angstrom, low=1.0,
                                                                   high=2 * (_MAX_SIZE + MAX_WALL_ANGSTROM), unit="Å"))
        if self.site_model is not None:
            _one_of("site_model", self.site_model, SWEEP_SITE_MODELS)
        if self.points is not None:
            _whole("points", self.points, *SWEEP_POINTS_RANGE)
        if self.window_unit is not None:
            _one_of("window_unit", self.window_unit, tuple(WINDOW_UNITS))
        for name in ("low", "high"):
            if getattr(self, name) is not None:
                object.__setattr__(self, name, check_number(name, getattr(self, name), low=0.0, high=1e12))
        if self.target is not None:
            _one_of("target", self.target, (NO_TARGET, *TARGET_KINDS))
        if self.layer is not None:
            _whole("layer", self.layer, *TARGET_LAYER_RANGE)
