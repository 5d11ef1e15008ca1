"""`porefill fit FILE [FILE ...]`: fit the model's uncertain parameters to measured isotherms.

Thin: the files are read by `porefill.explorer.files.measured`, the fit is `porefill.physics.fitting.solve.fit`; this module turns options
into a `FitRequest` and the `FitResult` into JSON, a table or CSV. A file or request that cannot be used
exits with status 2 and a few plain lines.
"""
from __future__ import annotations

import json
import math
import sys

from porefill.explorer.cli.distribution import add_distribution_options, run_distribution
from porefill.explorer.cli.main import (UsageError, add_model_options, add_pore_options, base_scenario, model_scenario,
                                         output_place, write_output)

__all__ = ["register"]

_MAX_PROBLEM_LINES = 5


def _bounds(texts: list[str] | None) -> dict:
    out = {}
    for text in texts or ():
        for part in filter(None, (p.strip() for p in text.split(","))):
            name, _, rng = part.partition("=")
            lo, _, hi = rng.partition(":")
            try:
                out[name.strip()] = (float(lo), float(hi))
            except ValueError:
                raise UsageError(f"--bounds {part!r} is not NAME=LOW:HIGH (e.g. size=10:20, in Å)") from None
    return out


def register(sub) -> None:
    from porefill.physics.choices import FREE_PARAMETERS, MEASURED_AMOUNT_UNITS
    from porefill.physics.substances.units import PRESSURE_UNITS

    p = sub.add_parser("fit", help="fit wall strength, pore size and pore volume to measured isotherms")
    p.add_argument("files", nargs="+", metavar="FILE", help="measured isotherm files (delimited text or .xlsx)")
    add_pore_options(p, scenario_positional=False)
    p.add_argument("--temperature", type=float,
                   help="temperature, K, of runs whose file does not say (default: the files' own)")
    add_model_options(p)
    p.add_argument("--free", default="wall-strength,size,pore-volume",
                   help=f"comma-separated free parameters, from {', '.join(FREE_PARAMETERS)} "
                        "(wall-strength: factor on the catalog pair ε; size, wall, a0 in Å; pore-volume cm³/g)")
    p.add_argument("--bounds", action="append", metavar="NAME=LOW:HIGH",
                   help="bounds of a free parameter in its unit (e.g. size=10:20); repeatable or comma-separated")
    p.add_argument("--mass", type=float, metavar="g", help="sample mass, g (needed for dosed amounts)")
    p.add_argument("--surface-area", type=float, metavar="m²/g",
                   help="specific surface area of the sample, m²/g (needed for amounts per m², e.g. µmol/m²)")
    p.add_argument("--d100", type=float, metavar="Å",
                   help="X-ray (100) spacing, Å: fixes a0 = 2·d100/√3 and ties the hexagon's wall to its side")
    p.add_argument("--pressure-column", help="column of pressures (default: guessed from the header)")
    p.add_argument("--amount-column", help="column of amounts (default: guessed from the header)")
    p.add_argument("--pressure-unit", choices=tuple(PRESSURE_UNITS), help="unit of the pressure column")
    p.add_argument("--amount-unit", choices=MEASURED_AMOUNT_UNITS, help="unit of the amount column")
    p.add_argument("--sheet", help="sheet of an .xlsx workbook (default: the first)")
    p.add_argument("--desorption-branch", choices=("desorption", "equilibrium"), default=None,
                   help="model branch the desorption legs are compared with (default: by --pore-ends; "
                        "open pores: equilibrium)")
    p.add_argument("--gauge-floor", type=float, metavar="Pa",
                   help="lowest pressure the gauge reads, Pa (for points recorded without pressure)")
    p.add_argument("--noise", type=float, default=0.02,
                   help="relative noise of the amounts (default 0.02); the scatter rescales the errors")
    p.add_argument("--pressure-noise", type=float, default=0.01,
                   help="relative uncertainty of the pressures (default 0.01; 0: compare amounts only)")
    p.add_argument("--seed", type=int, default=0, help="seed of the global search (default 0)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--csv", metavar="FILE",
                   help="also write CSV (with --distribution: the distribution's table), one table per file: FILE (e.g. fit.csv) the measured points with every "
                        "term of their residual (measured − model), and beside it fit-parameters.csv (the fitted "
                        "parameters and statistics) and fit-model.csv (the fitted model curves)")
    p.add_argument("--force", action="store_true", help="replace existing --csv files")
    p.add_argument("--drop-above-p0", action="store_true",
                   help="leave out the points recorded above the model's p0 (each named on standard error)")
    add_distribution_options(p)
    p.set_defaults(func=_cmd_fit)


def _read_runs(args) -> tuple[list, list[str]]:
    from porefill.explorer.files.measured import ColumnMap, MeasuredFileError, read_measured_path

    try:
        columns = ColumnMap(pressure=args.pressure_column, amount=args.amount_column,
                            pressure_unit=args.pressure_unit, amount_unit=args.amount_unit)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    runs, notes = [], []
    for path in args.files:
        try:
            read = read_measured_path(path, columns=columns, sheet=args.sheet, temperature_k=args.temperature)
        except MeasuredFileError as exc:
            raise UsageError(str(exc)) from None
        problems = [str(p) for p in read.problems]
        if not read.ok:
            shown = problems[:_MAX_PROBLEM_LINES] or [f"{path}: no usable run"]
            more = len(problems) - len(shown)
            raise UsageError("\n".join(shown) + (f"\n... and {more} more" if more > 0 else ""))
        runs.extend(read.runs)
        notes.extend(problems)
    return runs, notes


def _scenario_and_sample(args, runs):
    from porefill.physics.fitting.measured import Sample

    if args.temperature is None:
        temps = [r.temperature_k for r in runs if r.temperature_k is not None]
        if not temps and base_scenario(args) is not None:
            temps = [base_scenario(args).temperature_k]
        if not temps:
            raise UsageError("the files do not say their temperature: give --temperature (K)")
        args.temperature = temps[0]
    scenario = model_scenario(args)
    try:
        return scenario, Sample(mass_g=args.mass, pore_volume_cm3_g=args.pore_volume, d100_angstrom=args.d100,
                                surface_area_m2_g=args.surface_area)
    except ValueError as exc:
        raise UsageError(str(exc)) from None


def _request(args, runs):
    from porefill.physics.fitting.solve import FitRequest

    scenario, sample = _scenario_and_sample(args, runs)
    try:
        return FitRequest(scenario, tuple(runs), sample, free=tuple(args.free.split(",")), bounds=_bounds(args.bounds),
                          branches={} if args.desorption_branch is None else {"desorption": args.desorption_branch},
                          noise_relative=args.noise,
                          pressure_noise=args.pressure_noise, gauge_floor_pa=args.gauge_floor, seed=args.seed)
    except ValueError as exc:
        raise UsageError(str(exc)) from None


def _dropped(args, runs, scenario, notes) -> list:
    """The runs without their points above p0 when --drop-above-p0 is given (each run's rows told)."""
    if not getattr(args, "drop_above_p0", False):
        return runs
    from porefill.physics.fitting.model import drop_above_p0

    kept, said = drop_above_p0(runs, scenario.adsorbate, scenario.temperature_k)
    notes.extend(said)
    if not kept:
        raise UsageError("every point lies above p0: nothing is left to fit")
    return list(kept)


def _number(v):
    return float(v) if v is not None and math.isfinite(v) else None


def result_json(result, notes=()) -> dict:
    """The fit as plain JSON types (sizes in Å, pore volume in cm³/g)."""
    from porefill.physics.fitting.solve import PARAMETER_UNITS

    scenario = result.scenario
    return {
        "parameters": {name: {"value": _number(v), "stderr": _number(e), "unit": PARAMETER_UNITS[name],
                              "bounds": list(result.bounds[name])} for name, (v, e) in result.parameters.items()},
        "statistics": {k: (_number(v) if isinstance(v, float) else v) for k, v in result.statistics().items()},
        "correlation": {"names": list(result.names),
                        "matrix": [[_number(c) for c in row] for row in result.correlation]},
        "warnings": list(result.warnings),
        "runs": [{"name": rr.run.name, "source": rr.run.source, "leg": rr.run.leg, "branch": rr.branch,
                  "temperature_k": rr.temperature_k, "points": int((~rr.coverage).sum()),
                  "coverage_points": int(rr.coverage.sum()), "rms": _number(rr.rms),
                  "amount_unit": rr.run.amount_unit, "pressure_unit": rr.run.pressure_unit} for rr in result.runs],
        "site_model": getattr(scenario, "site_model_used", scenario.site_model),
        "scenario": scenario.to_dict(),
        "sample": result.sample.to_dict(),
        "file_notes": list(notes),
    }


def _csv_places(args, points_path) -> list:
    """The checked places of the three --csv files (`porefill.explorer.outputs.fit_export.companion_paths`),
    before any computing."""
    from porefill.explorer.outputs.fit_export import companion_paths
    from porefill.explorer.outputs.writing import OutputRefused, check_output

    places = [points_path]
    scenario = getattr(args, "scenario", None)
    for path in companion_paths(points_path):
        try:
            places.append(check_output(str(path), option="--csv", force=args.force,
                                       inputs=[*args.files, *([scenario] if scenario else [])]))
        except OutputRefused as exc:
            raise UsageError(str(exc)) from None
    return places


def _table(data: dict) -> str:
    from porefill.explorer.outputs.fit_export import parameter_label

    lines = [f"{'parameter':<14} {'value':>12} {'stderr':>10}  unit    {'bounds':<14}  what it is"]
    for name, p in data["parameters"].items():
        err = "—" if p["stderr"] is None else f"{p['stderr']:.3g}"
        label, meaning = parameter_label(name, data["scenario"].get("shape"))
        what = "factor on the built-in pair ε" if name == "wall-strength" else label
        bounds = f"{p['bounds'][0]:g} to {p['bounds'][1]:g}"
        lines.append(f"{name:<14} {p['value']:>12.5g} {err:>10}  {p['unit'] or '-':<6}  {bounds:<14}  {what}")
    s = data["statistics"]
    red = "—" if s["reduced_chi2"] is None else f"{s['reduced_chi2']:.3g}"
    lines.append(f"χ² {s['chi2']:.4g} over {s['points']} points ({s['coverage_points']} more at equal coverage), "
                 f"reduced χ² {red}, R² {s['r_squared']:.5f}, {s['evaluations']} model evaluations")
    for run in data["runs"]:
        lines.append(f"  {run['source']} · {run['name']} ({run['leg']} vs {run['branch']} branch, "
                     f"{run['temperature_k']:g} K): {run['points']} points, RMS {run['rms']:.3g} {run['amount_unit']}")
    lines += [f"warning: {w}" for w in data["warnings"]]
    return "\n".join(lines)


def _cmd_fit(args) -> int:
    from porefill.physics.fitting.solve import fit
    from porefill.physics.pore import compiled

    compiled.enable()          # hundreds of isotherms: loading the compiled kernels pays

    csv_path = output_place(args, "csv", "--csv", inputs=args.files)
    if args.carry and not args.distribution:
        raise UsageError("--carry needs --distribution (it carries a pore-size distribution to another gas)")
    if args.distribution:
        runs, notes = _read_runs(args)
        scenario, sample = _scenario_and_sample(args, runs)
        runs = _dropped(args, runs, scenario, notes)
        return run_distribution(args, runs, notes, scenario, sample, csv_path)
    csv_places = None if csv_path is None else _csv_places(args, csv_path)
    runs, notes = _read_runs(args)
    if args.drop_above_p0:
        runs = _dropped(args, runs, _scenario_and_sample(args, runs)[0], notes)
    request = _request(args, runs)
    try:
        result = fit(request)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    data = result_json(result, notes)
    if csv_places is not None:
        from porefill.explorer.outputs.fit_export import model_csv, parameters_csv, points_csv

        points, params, model = csv_places
        write_output(points, points_csv(result, name=points.name))
        write_output(params, parameters_csv(result))
        write_output(model, model_csv(result))
    return emit(args, data, _table, notes)


def emit(args, data: dict, table, notes) -> int:
    """Print ``data`` as JSON (--json) or as ``table(data)``, and the notes about the files on standard
    error (the first few, then how many more)."""
    if args.json:
        json.dump(data, sys.stdout)
        sys.stdout.write("\n")
    else:
        print(table(data))
    for note in notes[:_MAX_PROBLEM_LINES]:
        sys.stderr.write(f"porefill: note: {note}\n")
    if len(notes) > _MAX_PROBLEM_LINES:
        sys.stderr.write(f"porefill: note: ... and {len(notes) - _MAX_PROBLEM_LINES} more notes about the files\n")
    return 0


