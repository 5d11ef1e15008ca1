"""The Measured data and Sizing tabs' inputs to and from what a scenario file keeps of them
(`porefill.explorer.files.page_choices`): read from the widgets when the page is saved, put back when a
file is opened. Words on screen map to the file's words here and nowhere else."""
from __future__ import annotations

from porefill.explorer.files.page_choices import CARRY_DEFAULT_MODEL, NO_TARGET, MeasuredChoices, SizingChoices
from porefill.explorer.views.distribution import _GAS_DEFAULT      # its words for the carried gas's own model
from porefill.physics.choices import TARGET_KINDS, WINDOW_UNITS

__all__ = ["sizing_choices", "show_sizing_choices", "measured_choices", "show_measured_choices", "tab_widgets"]

_SCENARIO_MODEL = "as the scenario"           # the Sizing tab's words for "the site model the Pore tab uses"


def _checked(kind, values: dict):
    """``kind(**values)`` without the values it refuses (a widget holding something a file may not): the
    page saves what it can rather than nothing."""
    kept = {}
    for key, value in values.items():
        if value is None:
            continue
        try:
            kind(**{key: value})
        except (TypeError, ValueError):
            continue
        kept[key] = value
    return kind(**kept)


# sizing ------------------------------------------------------------------------------------------------
def sizing_choices(view) -> SizingChoices:
    """What the Sizing tab (`porefill.explorer.views.sizing.SizingView`) holds (its scheduler address aside)."""
    from porefill.explorer.views.sizing import MODES

    unit = next((k for k, v in WINDOW_UNITS.items() if v == view.window_unit.value), None)
    model = view.model.value
    return _checked(SizingChoices, {
        "across": MODES[view.mode.value], "sizes": view.sizes.value, "walls": view.walls.value,
        "temperatures": view.temps.value, "d100_angstrom": view.d100.value,
        "site_model": "scenario" if model == _SCENARIO_MODEL else model, "points": view.points.value,
        "window_unit": unit, "low": view.low.value, "high": view.high.value,
        "target": view._kind() or NO_TARGET, "layer": view.layer.value})         # noqa: SLF001


def show_sizing_choices(view, choices: SizingChoices | None) -> None:
    """Put a file's Sizing choices in the tab's inputs; an absent one keeps what the tab holds."""
    from porefill.explorer.views.sizing import MODES

    if choices is None:
        return
    c = choices
    if c.across is not None:
        view.mode.value = next(k for k, v in MODES.items() if v == c.across)
    for widget, value in ((view.sizes, c.sizes), (view.walls, c.walls), (view.temps, c.temperatures),
                          (view.d100, c.d100_angstrom), (view.points, c.points), (view.layer, c.layer)):
        if value is not None:
            widget.value = value
    if c.site_model is not None:
        view.model.value = _SCENARIO_MODEL if c.site_model == "scenario" else c.site_model
    if c.window_unit is not None:
        view.window_unit.value = WINDOW_UNITS[c.window_unit]     # first: a new unit resets the window
    if c.low is not None:
        view.low.value = c.low
    if c.high is not None:
        view.high.value = c.high
    if c.target is not None:
        view.target.value = view.target.options[0] if c.target == NO_TARGET else TARGET_KINDS[c.target]


# measured data -----------------------------------------------------------------------------------------
def measured_choices(view) -> MeasuredChoices:
    """What the Measured data tab (`porefill.explorer.views.measured.MeasuredView`) holds besides its runs
    and sample: the overlay's axis and amounts (only when picked by hand: else they follow the files), the
    fit's free parameters and points above p₀, the distribution's kernel and carried gas."""
    d = view.distribution
    model = d.site_model.value
    return _checked(MeasuredChoices, {
        "axis": view.axis.value,
        "amounts_in": None if view._display_default else view.amount_display.value,     # noqa: SLF001
        "free": tuple(view.free.value), "drop_above_p0": bool(view.drop_high.value),
        "kernel_first_angstrom": d.first.value, "kernel_last_angstrom": d.last.value, "kernel_count": d.count.value,
        "carry_gas": d.gas.value, "carry_temperature_k": d.temperature.value,
        "carry_site_model": CARRY_DEFAULT_MODEL if model == _GAS_DEFAULT else model})


def show_measured_choices(view, choices: MeasuredChoices | None) -> None:
    """Put a file's Measured data choices in the tab's inputs; an absent one keeps what the tab holds."""
    if choices is None:
        return
    c, d = choices, view.distribution
    if c.amounts_in is not None:
        view.pick_amount_unit(c.amounts_in)
    if c.axis is not None:
        view.axis.value = c.axis
    if c.free is not None:
        view.free.value = list(c.free)
    if c.drop_above_p0 is not None:
        view.drop_high.value = c.drop_above_p0
    for widget, value in ((d.first, c.kernel_first_angstrom), (d.last, c.kernel_last_angstrom),
                          (d.count, c.kernel_count), (d.gas, c.carry_gas)):
        if value is not None:
            widget.value = value
    if c.carry_temperature_k is not None:          # after the gas: a new gas proposes its own temperature
        d.temperature.value = c.carry_temperature_k
    if c.carry_site_model is not None:
        d.site_model.value = _GAS_DEFAULT if c.carry_site_model == CARRY_DEFAULT_MODEL else c.carry_site_model


def tab_widgets(measured, sizing) -> list:
    """The widgets whose values `measured_choices` and `sizing_choices` read (either view may be None)."""
    out = []
    if measured is not None:
        d = measured.distribution
        out += [measured.axis, measured.amount_display, measured.free, measured.drop_high, d.first, d.last, d.count,
                d.gas, d.temperature, d.site_model]
    if sizing is not None:
        out += [sizing.mode, sizing.sizes, sizing.walls, sizing.temps, sizing.d100, sizing.model, sizing.points,
                sizing.window_unit, sizing.low, sizing.high, sizing.target, sizing.layer]
    return out
