"""Measured runs on the model's axes: a run made from the model itself sits on the model curve."""
from __future__ import annotations

import numpy as np
import pytest

from porefill.explorer.views.overlay import AXES, model_curves, overlay_run
from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.fitting.measured import MeasuredRun, Sample
from porefill.physics.scenario import Scenario
from porefill.physics.substances.units import from_atoms_per_angstrom

NITROGEN = Scenario(shape="cylinder", size_angstrom=20.0, adsorbate="nitrogen", temperature_k=77.35)


@pytest.fixture(scope="module")
def iso():
    return compute_isotherm(NITROGEN, n_points=200, relative_pressure_range=(1e-3, 0.95))


def _run_from_model(iso, unit="per nm", leg="adsorption", sample=Sample(), every=7):
    k = np.arange(3, iso.mu.size - 3, every)
    per_a = iso.per_angstrom(iso.measured_branch(leg))[k]
    basis = iso.basis if sample.pore_volume_cm3_g is None else iso.basis.__class__(
        iso.basis.area_angstrom2, iso.basis.perimeter_angstrom, sample.pore_volume_cm3_g, iso.basis.per_area)
    amount = from_atoms_per_angstrom(per_a, unit, basis)
    return MeasuredRun(name="model", source="model.csv", pressure=iso.pressure_pa[k], pressure_unit="Pa",
                       amount=amount, amount_unit=unit, leg=leg, temperature_k=77.35), k


@pytest.mark.parametrize("axis", [a for a in AXES if a != "coverage"])
@pytest.mark.parametrize("leg", ["adsorption", "desorption"])
def test_model_points_have_zero_residual_on_every_pressure_axis(iso, axis, leg):
    run, k = _run_from_model(iso, leg=leg)
    o = overlay_run(iso, run, Sample(), axis)
    # open pores (the default): nitrogen fills and empties at the equilibrium transition (porefill.physics.lattice_gas.branches)
    assert o.branch == {"adsorption": "equilibrium", "desorption": "equilibrium"}[leg]
    np.testing.assert_allclose(o.residual, 0.0, atol=1e-9 * iso.per_nm(o.branch).max())
    x_model, _ = model_curves(iso, axis)[leg]
    np.testing.assert_allclose(o.x, x_model[k], rtol=1e-9)


def test_axes_are_the_pressure_scale(iso):
    # p/p0 divides by the model's p0; μ inverts p = p0 exp[(μ − μ_coex)/kT] (the pressure scale, porefill.physics.lattice_gas.stages)
    run, k = _run_from_model(iso)
    rel = overlay_run(iso, run, Sample(), "relative-pressure").x
    mu = overlay_run(iso, run, Sample(), "chemical-potential").x
    np.testing.assert_allclose(rel, iso.relative_pressure[k], rtol=1e-12)
    np.testing.assert_allclose(mu, iso.mu[k], atol=1e-9)


def test_amounts_per_gram_need_the_pore_volume_and_convert(iso):
    run, _ = _run_from_model(iso, unit="mmol/g", sample=Sample(pore_volume_cm3_g=0.7))
    with pytest.raises(ValueError, match="pore volume"):
        overlay_run(iso, run, Sample(), "relative-pressure")
    o = overlay_run(iso, run, Sample(pore_volume_cm3_g=0.7), "relative-pressure")
    np.testing.assert_allclose(o.residual, 0.0, atol=1e-9 * iso.per_nm("adsorption").max())


def test_points_without_pressure_are_kept_on_the_coverage_axis(iso):
    run, k = _run_from_model(iso)
    pressure = np.array(run.pressure)
    pressure[:3] = np.nan                       # dosed points below the gauge
    dosed = MeasuredRun(name="dosed", source="dosed.csv", pressure=pressure, pressure_unit="Pa",
                        amount=run.amount, amount_unit="per nm")
    on_p = overlay_run(iso, dosed, Sample(), "pressure")
    assert on_p.x.size == run.amount.size - 3 and on_p.without_pressure == 3 and "without a usable pressure" in on_p.note
    on_n = overlay_run(iso, dosed, Sample(), "coverage")
    assert on_n.x.size == run.amount.size and np.all(np.isnan(on_n.residual[:3]))
    # where the branch rises steeply enough to invert, the model's own points sit on p(N)
    rising = np.flatnonzero(np.isfinite(on_n.residual))
    assert rising.size and np.nanmedian(np.abs(on_n.residual[rising])) < 1e-3


def test_unknown_axis_is_refused(iso):
    run, _ = _run_from_model(iso)
    with pytest.raises(ValueError, match="axis must be one of"):
        overlay_run(iso, run, Sample(), "sideways")
