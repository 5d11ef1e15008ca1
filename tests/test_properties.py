"""Property-based checks (hypothesis): conversions invert each other, and bad input is refused by name,
never with another exception or a silent result."""
from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from porefill.physics.substances import units
from porefill.physics.pore.geometry import CylinderPore, HexagonPore, SlitPore
from porefill.physics.scenario import Scenario

finite_positive = st.floats(min_value=1e-30, max_value=1e30, allow_nan=False, allow_infinity=False)
anything = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-10**6, 10**6), st.booleans(),
                     st.text(max_size=5), st.none())


@given(value=finite_positive, unit=st.sampled_from(sorted(units.PRESSURE_UNITS)), p0=finite_positive)
def test_pressure_conversion_round_trips(value, unit, p0):
    # from_pascal ∘ to_pascal = identity to rounding (definitions: SI multiples, Torr = atm/760, p/p0)
    back = units.from_pascal(units.to_pascal(value, unit, p0_pa=p0), unit, p0_pa=p0)
    assert back == pytest.approx(value, rel=1e-12)


@given(value=st.floats(min_value=0.0, max_value=1e6), unit=st.sampled_from(units.AMOUNT_UNITS),
       pore=st.sampled_from([HexagonPore(15.0, 8.0), CylinderPore(20.0), SlitPore(12.0)]),
       volume=st.floats(min_value=0.01, max_value=5.0))
def test_amount_conversion_round_trips(value, unit, pore, volume):
    basis = units.AmountBasis(pore.area_angstrom2, pore.perimeter_angstrom, volume, pore.lattice_kind == "rows")
    back = units.to_atoms_per_angstrom(units.from_atoms_per_angstrom(value, unit, basis), unit, basis)
    assert back == pytest.approx(value, rel=1e-12, abs=1e-300)


@given(value=finite_positive)
def test_amounts_scale_linearly(value):
    # every amount unit is a fixed factor of the internal amount (definitions in porefill.physics.substances.units)
    basis = units.AmountBasis(1256.6, 125.66, pore_volume_cm3_g=1.0)
    for unit in units.AMOUNT_UNITS:
        one = float(units.from_atoms_per_angstrom(1.0, unit, basis))
        assert float(units.from_atoms_per_angstrom(value, unit, basis)) == pytest.approx(value * one, rel=1e-12)


@settings(max_examples=200, deadline=None)
@given(field=st.sampled_from(["size_angstrom", "wall_angstrom", "temperature_k", "pair_epsilon_k",
                              "lattice_spacing_angstrom", "pore_volume_cm3_g", "bond_energy_k"]),
       value=anything)
def test_scenario_accepts_or_names_the_field(field, value):
    # a user's value is either accepted as given or refused with a ValueError naming what was wrong
    try:
        sc = Scenario(**{"wall_angstrom": 8.0, field: value})
    except ValueError as exc:
        words = {"size_angstrom": "size_angstrom", "wall_angstrom": "wall", "temperature_k": "temperature_k",
                 "pair_epsilon_k": "pair_epsilon_k", "lattice_spacing_angstrom": "lattice spacing",
                 "pore_volume_cm3_g": "pore_volume_cm3_g", "bond_energy_k": "bond_energy_k"}[field]
        assert words in str(exc)
        return
    assert getattr(sc, field) == value                 # nothing silently replaced
    assert value is None or (not isinstance(value, bool) and math.isfinite(float(value)))


@settings(max_examples=60, deadline=None)
@given(size=st.floats(allow_nan=True, allow_infinity=True), grid=st.integers(-5, 5000))
def test_potential_command_exits_0_or_2_with_one_line(size, grid):
    from cli_runs import in_process

    run = in_process("potential", "--isolated", "--size", repr(size), "--grid", str(min(grid, 60)))
    if run.returncode == 2:
        lines = run.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("porefill: error:") and "Traceback" not in run.stderr
    else:
        assert run.returncode == 0 and "deepest minimum" in run.stdout
