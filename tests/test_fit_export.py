"""The fit's CSV files (porefill.explorer.outputs.fit_export, `porefill fit --csv`, the dashboard's downloads): one
table per file, residuals measured − model as the plot draws them, and every residual recomputed from its own row."""
from __future__ import annotations

import csv
import io
import math

import numpy as np
import pytest

from porefill.explorer.outputs.fit_export import (POINT_COLUMNS, companion_paths, model_csv, parameters_csv,
                                                  points_csv)
from porefill.physics.fitting import model as fm
from porefill.physics.fitting.measured import MeasuredRun, Sample
from porefill.physics.fitting.solve import FitRequest, fit
from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.scenario import Scenario
from porefill.physics.substances.materials import pair_parameters

# model-made nitrogen data (invented for the test) from a 17.3 Å hexagon, fitted with a 16.5 Å one so the
# condensation step sits beside some points: there the pressure noise compares them across the step
TRUE = Scenario(shape="hexagon", size_angstrom=17.3, wall_angstrom=8.0, adsorbate="nitrogen", temperature_k=77.35,
                pair_epsilon_k=1.08 * pair_parameters("nitrogen", "silica").epsilon_k, pore_volume_cm3_g=0.62,
                site_model="classical")
SMALL = dict(global_points=32, local_points=120, population=4, global_iterations=2, local_evaluations=4,
             local_starts=1)


def _runs():
    p0 = compute_isotherm(TRUE, n_points=3).stage.saturation_pressure_pa
    p = np.r_[np.geomspace(2e-3, 0.1, 6), np.linspace(0.15, 0.9, 26)] * p0
    run = fm.simulated_run(TRUE, pressure_pa=p, pressure_unit="kPa", amount_unit="mmol/g", n_points=400)
    rng = np.random.default_rng(11)
    amount = run.amount * (1 + 0.01 * rng.standard_normal(p.size))
    pressure = run.pressure.copy()
    pressure[[1, 3]] = np.nan                     # two points recorded without pressure: equal coverage
    return (MeasuredRun("invented", "invented-n2.csv", pressure, "kPa", amount, "mmol/g", "adsorption", 77.35),)


@pytest.fixture(scope="module", params=[0.01, 0.0], ids=["pressure-noise", "amounts-only"])
def result(request):
    base = TRUE.replace(size_angstrom=16.5, pore_volume_cm3_g=None)
    return fit(FitRequest(base, _runs(), Sample(), free=("pore-volume",), pressure_noise=request.param, **SMALL))


def _table(text: str) -> tuple[list[str], list[str], list[list[str]]]:
    lines = text.splitlines()
    comments = [line for line in lines if line.startswith("#")]
    assert all(line.startswith("#") for line in lines[:len(comments)])       # comments only above the table
    rows = list(csv.reader(io.StringIO("\n".join(lines[len(comments):]))))
    return comments, rows[0], rows[1:]


def _f(cell: str) -> float:
    return float(cell) if cell != "" else math.nan


def test_points_file_is_one_table_of_the_points(result):
    # one table per file (issue 21): a header and one row per measured point, every row as wide as the header
    comments, header, rows = _table(points_csv(result, name="fit.csv"))
    assert header == list(POINT_COLUMNS)
    assert len(rows) == sum(rr.run.amount.size for rr in result.runs) == 32
    assert all(len(r) == len(header) for r in rows)
    assert "kind" not in header and all(r[header.index("run")] == "invented" for r in rows)
    assert any("fit-parameters.csv" in c and "fit-model.csv" in c for c in comments)
    assert not any("," in c for c in comments)          # a spreadsheet shows each # line in one cell


def test_every_residual_is_recomputed_from_its_own_row(result):
    # the definition written in the file's # lines (RESIDUAL_DEFINITION); 1e-9: the cells hold every digit
    # (repr), so only rounding of the logarithm is left (common practice, no source)
    _, header, rows = _table(points_csv(result))
    col = {name: i for i, name in enumerate(header)}
    recomputed, written, across = [], [], 0
    for r in rows:
        y, m, s = _f(r[col["measured_amount"]]), _f(r[col["model_amount"]]), _f(r[col["sigma_amount"]])
        s_lnp, y_near = _f(r[col["sigma_ln_pressure"]]), _f(r[col["nearest_model_amount"]])
        pressure_term = 0.0
        if r[col["compared"]] == "at pressure" and s_lnp > 0:
            pressure_term = math.log(_f(r[col["pressure_Pa"]]) / _f(r[col["nearest_model_pressure_Pa"]])) / s_lnp
        amount_term = (y - y_near) / s
        across += abs(pressure_term) > 1e-6
        assert pressure_term == pytest.approx(_f(r[col["pressure_term"]]), abs=1e-9)
        assert amount_term == pytest.approx(_f(r[col["amount_term"]]), abs=1e-9)
        recomputed.append(math.copysign(math.hypot(pressure_term, amount_term), y - m) if y != m else 0.0)
        written.append(_f(r[col["residual"]]))
    np.testing.assert_allclose(recomputed, written, rtol=0, atol=1e-9)
    # with pressure noise some points are compared across the step (the unwritten term), and the
    # file's residuals are the fit's: Σ residual² = χ²
    assert (across > 0) == (result.request.pressure_noise > 0)
    assert float(np.sum(np.square(written))) == pytest.approx(result.chi2, rel=1e-9)
    assert {r[col["compared"]] for r in rows} == {"at pressure", "equal coverage"}


def test_residuals_are_measured_minus_model_as_the_plot_draws_them(result):
    # one sign everywhere: the residual plot (porefill.explorer.views.overlay, "measured − model") and the CSV
    from porefill.explorer.views.overlay import overlay_run

    _, header, rows = _table(points_csv(result))
    col = {name: i for i, name in enumerate(header)}
    at_p = [r for r in rows if r[col["compared"]] == "at pressure"]
    for r in at_p:
        y, m, res = (_f(r[col[k]]) for k in ("measured_amount", "model_amount", "residual"))
        assert res == 0.0 or math.copysign(1.0, res) == math.copysign(1.0, y - m)
    run = result.runs[0].run
    iso = compute_isotherm(result.scenario, n_points=400)
    plotted = overlay_run(iso, run, result.sample, "pressure")
    by_row = dict(zip(plotted.rows.tolist(), plotted.residual))
    # points off the model by more than σ/2 at their pressure, where the plot's own grid cannot flip the sign
    clear = [r for r in at_p if abs(_f(r[col["measured_amount"]]) - _f(r[col["model_amount"]]))
             > 0.5 * _f(r[col["sigma_amount"]])]
    assert clear, "no point far enough from the model to compare signs"
    for r in clear:
        assert np.sign(by_row[int(r[col["row"]])]) == np.sign(_f(r[col["residual"]]))


def test_parameters_and_model_files_are_one_table_each(result):
    _, header, rows = _table(parameters_csv(result))
    assert header[:4] == ["quantity", "label", "value", "standard_error"] and all(len(r) == len(header) for r in rows)
    by_name = {r[0]: r for r in rows}
    value, err = result.parameters["pore-volume"]
    assert float(by_name["pore-volume"][2]) == value and float(by_name["pore-volume"][3]) == err
    assert by_name["pore-volume"][4] == "cm³/g"
    # fit statistics are labelled for people (issue 21), the machine key kept beside the label
    assert by_name["reduced_chi2"][1] == "reduced χ²" and float(by_name["reduced_chi2"][2]) == result.reduced_chi2
    assert by_name["chi2"][1] == "χ²" and by_name["r_squared"][1] == "R²"
    _, header, rows = _table(model_csv(result))
    assert header[:4] == ["run", "source", "leg", "model_branch"] and len(rows) > 32
    assert all(len(r) == len(header) for r in rows)
    assert [p.name for p in companion_paths("out/fit.csv")] == ["fit-parameters.csv", "fit-model.csv"]


def test_dashboard_downloads_are_the_same_three_files(result):
    # the Measured data tab offers the files `porefill fit --csv` writes, one download each
    from porefill.explorer.views.measured import MeasuredView
    from porefill.explorer.views.state import ExplorerState

    view = MeasuredView(state=ExplorerState.from_scenario(TRUE))
    assert view.fit_csv().getvalue() == b"no fit yet\n"
    view._fit = result
    assert [view.download.filename, view.download_parameters.filename, view.download_model.filename] == \
        ["porefill-fit.csv", "porefill-fit-parameters.csv", "porefill-fit-model.csv"]
    assert view.fit_csv().getvalue().decode() == points_csv(result, name="porefill-fit.csv")
    assert view._fit_file("parameters").getvalue().decode() == parameters_csv(result)
    assert view._fit_file("model").getvalue().decode() == model_csv(result)
