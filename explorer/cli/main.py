"""The `porefill` command line: a thin layer over the physics functions the dashboard also calls.

Errors in the user's input exit with status 2 and one line naming the problem; no traceback.
"""
from __future__ import annotations

import argparse
import json
import math
import sys

__all__ = ["main"]


class UsageError(Exception):
    """Bad user input; printed as one line, exit status 2."""


def _point(text: str) -> tuple[float, float]:
    parts = text.split(",")
    try:
        if len(parts) != 2:
            raise ValueError
        x, y = (float(p) for p in parts)
    except ValueError:
        raise argparse.ArgumentTypeError(f"point {text!r} is not 'x,y' in Å (e.g. 3.5,1)") from None
    if not (math.isfinite(x) and math.isfinite(y)):
        raise argparse.ArgumentTypeError(f"point {text!r} must have finite coordinates")
    return x, y


# What a command starts from when no scenario file is given (a scenario file's own fields replace these)
CLI_DEFAULTS = {"shape": "hexagon", "size_angstrom": 15.0, "wall_angstrom": 8.0, "adsorbate": "helium-4",
                "solid": "silica"}


def add_pore_options(p: argparse.ArgumentParser, *, scenario_positional: bool = True) -> None:
    """The scenario to start from (a file, or a shipped scenario's name) and the pore options that override
    its fields. ``scenario_positional``: SCENARIO is the first positional argument, else ``--scenario``."""
    from porefill.physics.choices import SHAPES
    from porefill.physics.substances.materials import ADSORBATES, SOLIDS

    help_text = ("scenario TOML file, or the name of a shipped one (e.g. demo-hexagon-helium): its fields are "
                 "the starting point and the options given override them (default: porefill's defaults)")
    if scenario_positional:
        p.add_argument("scenario", nargs="?", metavar="SCENARIO", help=help_text)
    else:
        p.add_argument("--scenario", metavar="SCENARIO", help=help_text)
    p.add_argument("--pore", choices=SHAPES, default=None, help="pore shape (default hexagon)")
    from porefill.physics.choices import MAX_PLATING_LAYERS, PLATING_GASES
    p.add_argument("--plating", choices=PLATING_GASES, default=None,
                   help="a gas whose adsorbed layers cover the wall first (pre-plated pore; default: the bare wall)")
    p.add_argument("--plating-layers", type=int, default=None, metavar="N",
                   help=f"plating layers, 1 to {MAX_PLATING_LAYERS} (default 1)")
    p.add_argument("--size", type=float, default=None,
                   help="hexagon side length (centre to corner), cylinder radius or slit width, Å (default 15)")
    p.add_argument("--wall", type=float, default=None,
                   help="wall thickness between neighbouring pores of the array, Å (hexagon, slit; at least "
                        "one spacing of the solid's force centres, 2.83 Å for silica; default 8)")
    p.add_argument("--isolated", action="store_true", help="one pore in an unbounded solid (ignores --wall)")
    p.add_argument("--adsorbate", default=None, help=f"one of {', '.join(ADSORBATES)} (default helium-4)")
    p.add_argument("--solid", default=None, help=f"one of {', '.join(SOLIDS)} (default silica)")
    p.add_argument("--pair-epsilon", type=float, metavar="K", help="override adsorbate–solid ε/k_B, K")
    p.add_argument("--pair-sigma", type=float, metavar="Å", help="override adsorbate–solid σ, Å")
    p.add_argument("--solid-density", type=float, metavar="Å^-3",
                   help="override the solid's force-centre number density, Å^-3")


def base_scenario(args):
    """The scenario file (or shipped scenario) named on the command line, or None."""
    name = getattr(args, "scenario", None)
    if not name:
        return None
    from porefill.explorer.files.scenario_file import ScenarioFileError, load_document, resolve_scenario

    try:
        return load_document(resolve_scenario(name)).scenario
    except ScenarioFileError as exc:
        raise UsageError(str(exc)) from None
    except OSError as exc:
        raise UsageError(f"scenario {name}: cannot read it ({exc.strerror or exc})") from None


def scenario_from_args(args, **extra):
    """The scenario of a command: a scenario file's fields (or porefill's defaults) with every option given
    on the command line over them. ``extra``: more fields, each applied only when not None."""
    from porefill.physics.scenario import Scenario

    base = base_scenario(args)
    fields = {} if base is not None else dict(CLI_DEFAULTS)
    given = {"shape": args.pore, "size_angstrom": args.size, "wall_angstrom": args.wall,
             "plating": getattr(args, "plating", None), "plating_layers": getattr(args, "plating_layers", None),
             "adsorbate": args.adsorbate, "solid": args.solid, "pair_epsilon_k": args.pair_epsilon,
             "pair_sigma_angstrom": args.pair_sigma, "solid_density_per_a3": args.solid_density, **extra}
    fields.update({k: v for k, v in given.items() if v is not None})
    if args.isolated:
        fields["wall_angstrom"] = None
    try:
        return base.replace(**fields) if base is not None else Scenario(**fields)
    except ValueError as exc:
        raise UsageError(str(exc)) from None


def output_place(args, attribute: str, option: str, inputs=()):
    """The checked place of an output option (`porefill.explorer.outputs.writing.check_output`), before any
    computing; None when the option was not given."""
    name = getattr(args, attribute, None)
    if name is None:
        return None
    from porefill.explorer.outputs.writing import OutputRefused, check_output

    scenario = getattr(args, "scenario", None)
    try:
        return check_output(name, option=option, force=getattr(args, "force", False),
                            inputs=[*inputs, *([scenario] if scenario else [])])
    except OutputRefused as exc:
        raise UsageError(str(exc)) from None


def write_output(path, text: str) -> None:
    """Write an output atomically (the old file stays whole if this fails); UsageError names the problem."""
    from porefill.explorer.outputs.writing import write_atomic

    try:
        write_atomic(path, text)
    except OSError as exc:
        raise UsageError(f"cannot write {path}: {exc.strerror or exc}") from None


def _json_number(v: float):
    return float(v) if math.isfinite(v) else None


def _cmd_potential(args) -> int:
    import numpy as np
    from porefill.physics.limits import check_grid
    from porefill.physics.pore.wall_potential import deepest_minimum, potential_map, wall_potential

    from porefill.explorer.outputs.formatting import format_minimum

    scenario = scenario_from_args(args)
    pore, pair = scenario.pore(), scenario.pair()
    if args.grid is not None:
        try:
            n = check_grid(args.grid)
            m = potential_map(pore=pore, pair=pair, n=n)
            low = deepest_minimum(pore=pore, pair=pair)
        except ValueError as exc:
            raise UsageError(f"--grid: {exc}") from None
        result = {"unit": "K", "x": [float(v) for v in m.x], "y": [float(v) for v in m.y],
                  "potential": [[_json_number(v) for v in row] for row in m.values],
                  "deepest_minimum": {"potential": low.depth_k, "x": low.x_angstrom, "y": low.y_angstrom,
                                      "wall_distance": low.wall_distance_angstrom}}
    else:
        pts = np.array(args.at, float)
        values = wall_potential(pts[:, 0], pts[:, 1], pore=pore, pair=pair)
        result = {"unit": "K", "points": [{"x": float(x), "y": float(y), "potential": _json_number(v)}
                                          for (x, y), v in zip(args.at, values)]}
    if args.json:
        json.dump(result, sys.stdout)
        sys.stdout.write("\n")
    elif "points" in result:
        for p in result["points"]:
            v = "inside the solid" if p["potential"] is None else f"{p['potential']:.6f} K"
            print(f"x = {p['x']:g} Å, y = {p['y']:g} Å: {v}")
    else:
        finite = m.values[np.isfinite(m.values)]
        print(f"{args.grid} x {args.grid} map; {format_minimum(low)}; "
              f"{finite.size} points inside the pore (use --json for the values)")
    return 0


def add_model_options(p: argparse.ArgumentParser) -> None:
    """Options of the lattice-gas model beside the pore's: bond, spacing, site model, pore volume."""
    from porefill.physics.choices import BOND_RULES, PORE_ENDS, SITE_MODELS

    p.add_argument("--bond", type=float, metavar="K", help="fluid–fluid bond energy ε_b, K (overrides the rule)")
    p.add_argument("--bond-rule", choices=BOND_RULES, help="calibration of ε_b (default vapour-pressure)")
    p.add_argument("--spacing", type=float, metavar="Å", help="lattice site spacing, Å (default: bulk liquid density)")
    p.add_argument("--allow-above-p0", action="store_true",
                   help="allow a pressure range above the saturated vapour pressure p0 (bulk condensation)")
    p.add_argument("--site-model", choices=SITE_MODELS, default=None,
                   help="how site free energies are computed: classical cell averages, or the exact one-atom "
                        "quantum states (default: quantum for helium-4, hydrogen and neon, classical otherwise)")
    p.add_argument("--pore-volume", type=float, metavar="cm³/g",
                   help="specific pore volume of the sample, cm³/g (adds mmol/g and cm³(STP)/g)")
    p.add_argument("--pore-ends", choices=PORE_ENDS, default=None,
                   help="how the pores end, which decides the branch a measurement follows: open (default; "
                        "desorption at the equilibrium transition), closed-end (no hysteresis), infinite "
                        "(the mean-field spinodals)")


def model_scenario(args):
    if base_scenario(args) is None and args.temperature is None:
        raise UsageError("give the temperature with --temperature K (or a scenario file that has one)")
    return scenario_from_args(args, temperature_k=args.temperature, lattice_spacing_angstrom=args.spacing,
                               bond_energy_k=args.bond, bond_calibration=args.bond_rule,
                               pore_volume_cm3_g=args.pore_volume, site_model=args.site_model,
                               pore_ends=args.pore_ends)


def _cmd_isotherm(args) -> int:
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    from porefill.explorer.outputs.isotherm_export import isotherm_csv, isotherm_json, isotherm_summary

    scenario = model_scenario(args)
    csv_path = output_place(args, "csv", "--csv")
    try:
        iso = compute_isotherm(
            scenario, n_points=args.points,
            pressure_range_pa=None if args.pressure_range is None else tuple(args.pressure_range),
            relative_pressure_range=(None if args.relative_pressure_range is None
                                     else tuple(args.relative_pressure_range)),
            allow_above_p0=args.allow_above_p0)
    except ValueError as exc:          # includes VapourPressureRangeError and the limits
        message = str(exc)
        if message.startswith("number of points"):
            message = f"--points: {message}"
        raise UsageError(message) from None
    if csv_path is not None:
        write_output(csv_path, isotherm_csv(iso))
    if args.json:
        json.dump(isotherm_json(iso), sys.stdout)
        sys.stdout.write("\n")
    else:
        print(isotherm_summary(iso))
    if iso.stage.scale.p0_extrapolated:
        from porefill.physics.substances.vapour_pressure import temperature_range
        sys.stderr.write(f"porefill: note: p0 of {scenario.adsorbate} at {scenario.temperature_k:g} K is extrapolated "
                         f"({temperature_range(scenario.adsorbate)[2]}); the JSON flags it\n")
    return 0


def _cmd_states(args) -> int:
    from porefill.physics.sites.quantum import model_states

    if base_scenario(args) is None and args.temperature is None:
        raise UsageError("give the temperature with --temperature K (or a scenario file that has one)")
    scenario = scenario_from_args(args, temperature_k=args.temperature)
    try:
        from porefill.physics.substances.vapour_pressure import saturated_vapour_pressure
        saturated_vapour_pressure(scenario.adsorbate, scenario.temperature_k)     # the same T range as isotherms
        from porefill.physics.lattice_gas.stages import geometry_stage
        geo = geometry_stage(scenario)
        t = scenario.temperature_k
        cap = {} if args.max_states is None else {"max_states": args.max_states}
        st = model_states(geo, t, **cap)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    from porefill.physics.sites.state_sites import states_numbers

    result = {"units": {"energy": "K", "length": "angstrom", "henry": "atoms per nm of pore per Pa"},
              "scenario": scenario.to_dict(), **states_numbers(st, geo, t)}
    from porefill.physics.lattice_gas.stages import thermal_stage
    from porefill.physics.sites.state_bands import site_labels, state_bands
    labels = site_labels(thermal_stage(scenario.replace(site_model="classical")))
    result["bands"] = [b.to_dict() for b in state_bands(st, geo, t, labels=labels)]
    if args.json:
        json.dump(result, sys.stdout)
        sys.stdout.write("\n")
    else:
        print(f"{scenario.adsorbate} at {t:g} K: ground state {st.ground_state_k:.3f} K, potential minimum "
              f"{st.potential_minimum_k:.3f} K, zero-point energy {st.zero_point_energy_k:.3f} K")
        wanted = result["states_wanted"]
        print(f"states wanted up to {wanted['top_k']:.3f} K: the first layer's, to {wanted['weight_fraction']:g} of "
              "the ground state's weight")
        print(f"{st.energies_k.size} states{' (capped)' if st.capped else ''} on a {st.spacing_angstrom:g} Å grid "
              f"({st.points.shape[0]} points, energies good to about {st.error_k:.2g} K); the states above them, "
              f"summed semiclassically, hold {result['boltzmann_tail_fraction']:.2g} of the Boltzmann sum")
        print(f"Henry constant: quantum {result['henry_quantum']:.4g}, classical {result['henry_classical']:.4g} "
              "atoms per nm per Pa")
        print("lowest excitations (K): " + ", ".join(f"{e:.3f}" for e in result["excitation_energies_k"][:12]))
        print("lowest bands: " + "; ".join(f"+{b['excitation_k']:.2f} K ×{b['degeneracy']} {b['where']}"
                                           for b in result["bands"][:6]))
        inner = result["inner_states"]
        if inner:
            print(f"rows inside the first: {inner['states_used']} states{' (capped)' if inner['capped'] else ''} of the "
                  f"region the filled first row leaves ({inner['points']} points, ψ = 0 on its edge), up to "
                  f"{inner['top_k']:.3f} K: {inner['margin_kt']:g} kT above the higher of its ground state "
                  f"({inner['ground_state_k']:.3f} K) and the centre's potential ({inner['centre_potential_k']:.3f} K)")
        print("site free energies of the quantum site model, per orbit:")
        for o in result["orbits"]:
            how = (f"{o['states']} states homed, {o['boltzmann_share']:.3g} of the Boltzmann sum"
                   if o["source"] == "quantum states" else
                   f"states inside the first row, {o['states']} mostly here, {o['boltzmann_share']:.3g} of the sum"
                   if o["source"] == "quantum states inside the first row" else
                   "no computed state reaches it: semiclassical integral above the states' cut"
                   if o["source"].startswith("semiclassical") else
                   "no computed state reaches it: classical cell integral")
            print(f"  {o['label']:>8} ×{o['sites']:<3} {o['free_energy_k']:9.3f} K  ({how}; classical "
                  f"{o['classical_free_energy_k']:.3f} K)")
    if st.capped:
        sys.stderr.write(f"porefill: note: the state count reached its cap ({st.energies_k.size}); the states "
                         f"above it are summed semiclassically ({result['boltzmann_tail_fraction']:.2g} of the "
                         "Boltzmann sum)\n")
    return 0


def _cmd_vapour_pressure(args) -> int:
    from porefill.physics.substances.materials import ADSORBATES
    from porefill.physics.substances.vapour_pressure import VapourPressureRangeError, saturated_vapour_pressure, temperature_range

    if args.adsorbate not in ADSORBATES:
        raise UsageError(f"adsorbate must be one of {', '.join(ADSORBATES)}; got {args.adsorbate!r}")
    try:
        p0 = saturated_vapour_pressure(args.adsorbate, args.temperature)
    except VapourPressureRangeError as exc:
        raise UsageError(str(exc)) from None
    source = temperature_range(args.adsorbate)[2]
    if args.json:
        json.dump({"adsorbate": args.adsorbate, "temperature_k": args.temperature, "pressure_pa": p0,
                   "source": source}, sys.stdout)
        sys.stdout.write("\n")
    else:
        print(f"{args.adsorbate} at {args.temperature:g} K: p0 = {p0:.6g} Pa ({source})")
    return 0


def _cmd_serve(args) -> int:
    # every check runs before Panel is imported, so a mistake is reported at once
    from porefill.explorer.server.security import AccessPolicy, ServeError, check_address, check_can_listen, is_loopback, read_password

    scenario = None
    if args.scenario:
        from porefill.explorer.files.scenario_file import ScenarioFileError, load_document, resolve_scenario
        try:
            scenario = load_document(resolve_scenario(args.scenario))    # a path, or a shipped one's name
        except ScenarioFileError as exc:
            raise UsageError(str(exc)) from None
        except OSError as exc:
            raise UsageError(f"--scenario {args.scenario}: cannot read it ({exc.strerror or exc})") from None
    if not (0 < args.port < 65536):
        raise UsageError(f"--port must be between 1 and 65535, got {args.port}")
    try:
        password = read_password(args.password_file)
        check_address(args.address)
        if not is_loopback(args.address):
            if not args.allow_origin:
                raise UsageError(f"--address {args.address} is reachable from other machines: name the "
                                 "addresses people will type with --allow-origin HOST[:PORT]")
            if password is None:
                raise UsageError(f"--address {args.address} is reachable from other machines: set a "
                                 "password with --password-file FILE or POREFILL_PASSWORD")
        policy = AccessPolicy.for_server(address=args.address, port=args.port,
                                         allowed_origins=tuple(args.allow_origin or ()), password=password)
        check_can_listen(args.address, args.port)
        from porefill.explorer.server.server import serve
        serve(scenario, address=args.address, port=args.port, policy=policy, show=args.show)
    except ServeError as exc:
        raise UsageError(str(exc)) from None
    return 0


def build_parser(*, serve_only: bool = False) -> argparse.ArgumentParser:
    """The full parser; ``serve_only`` leaves out the computing commands, whose option lists import the
    physics (numpy, scipy), so that `porefill serve` checks its arguments at once."""
    from porefill.physics.choices import DEFAULT_POINTS

    parser = argparse.ArgumentParser(prog="porefill", description=(
        "Wall potentials and adsorption in ordered nanoporous solids. Lengths in Å, energies in K."))
    sub = parser.add_subparsers(dest="command", required=True)

    p = sub.add_parser("serve", help="serve the dashboard in the browser")
    p.add_argument("--scenario", help="scenario TOML file to open, or the name of a shipped one in scenarios/ "
                                      "(e.g. demo-hexagon-helium; default: built-in defaults)")
    p.add_argument("--address", default="127.0.0.1", help="address to listen on (default 127.0.0.1)")
    p.add_argument("--port", type=int, default=5006, help="port (default 5006)")
    p.add_argument("--show", action="store_true", help="open a browser window")
    p.add_argument("--allow-origin", action="append", metavar="HOST[:PORT]",
                   help="a host name people type to reach the page (repeatable; required with an "
                        "--address other than loopback)")
    p.add_argument("--password-file", metavar="FILE",
                   help="file whose first line is the password (else $POREFILL_PASSWORD); required "
                        "with an --address other than loopback")
    p.set_defaults(func=_cmd_serve)
    if serve_only:
        return parser

    p = sub.add_parser("potential", help="wall potential at points or on a grid, K")
    add_pore_options(p)
    where = p.add_mutually_exclusive_group(required=True)
    where.add_argument("--at", type=_point, action="append", metavar="X,Y",
                       help="a point x,y in Å (origin at the pore centre, a corner on +x); repeatable")
    where.add_argument("--grid", type=int, metavar="N", help="N x N map over the pore's bounding box")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_potential)

    p = sub.add_parser("isotherm", help="mean-field isotherm with both branches and the layer steps")
    add_pore_options(p)
    p.add_argument("--temperature", type=float, help="temperature, K (default: the scenario file's)")
    p.add_argument("--points", type=int, default=DEFAULT_POINTS,
                   help=f"number of chemical potentials (default {DEFAULT_POINTS})")
    rng = p.add_mutually_exclusive_group()
    rng.add_argument("--pressure-range", type=float, nargs=2, metavar=("LOW", "HIGH"),
                     help="pressure range, Pa (default: from an empty pore to p0)")
    rng.add_argument("--relative-pressure-range", type=float, nargs=2, metavar=("LOW", "HIGH"),
                     help="range of p/p0 (dimensionless)")
    add_model_options(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--csv", metavar="FILE", help="also write the branches as CSV")
    p.add_argument("--force", action="store_true", help="replace an existing --csv file")
    p.set_defaults(func=_cmd_isotherm)

    p = sub.add_parser("states", help="exact one-atom quantum states of the pore cross-section, K")
    add_pore_options(p)
    p.add_argument("--temperature", type=float,
                   help="temperature, K (sets how many states; default: the scenario file's)")
    p.add_argument("--max-states", type=int, default=None,
                   help="at most this many states (default: the model's own cap)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_states)

    p = sub.add_parser("vapour-pressure", help="saturated vapour pressure p0(T), Pa")
    p.add_argument("--adsorbate", required=True, help="adsorbate name")
    p.add_argument("--temperature", type=float, required=True, help="temperature, K")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.set_defaults(func=_cmd_vapour_pressure)
    _register_commands(sub)
    return parser


def _register_commands(sub) -> None:
    """Commands that live in a module of their own under `porefill.explorer.cli` (each has ``register(sub)``)."""
    import importlib

    for name in ("fit", "report", "sweep"):
        importlib.import_module(f"porefill.explorer.cli.{name}").register(sub)


def _glue_negative_points(argv: list[str]) -> list[str]:
    """Let `--at -7,-5` through: argparse would take '-7,-5' for an option."""
    out: list[str] = []
    i = 0
    while i < len(argv):
        nxt = argv[i + 1] if i + 1 < len(argv) else ""
        if argv[i] == "--at" and len(nxt) > 1 and nxt[0] == "-" and (nxt[1].isdigit() or nxt[1] == "."):
            out.append(f"--at={nxt}")
            i += 2
            continue
        out.append(argv[i])
        i += 1
    return out


def main(argv: list[str] | None = None) -> int:
    from porefill.explorer.jobs.threads import one_blas_thread_environment

    one_blas_thread_environment()      # before NumPy loads; sweep workers inherit it (explorer/jobs/threads.py)
    argv = _glue_negative_points(list(sys.argv[1:] if argv is None else argv))
    parser = build_parser(serve_only=bool(argv) and argv[0] == "serve")

    def one_line_error(message: str):
        sys.stderr.write(f"porefill: error: {message}\n")
        sys.exit(2)

    parser.error = one_line_error  # type: ignore[method-assign]
    for action in parser._subparsers._group_actions:  # noqa: SLF001 - give subcommands the same style
        for sub in action.choices.values():
            sub.error = one_line_error  # type: ignore[method-assign]
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except UsageError as exc:
        sys.stderr.write(f"porefill: error: {exc}\n")
        return 2
    except BrokenPipeError:          # output piped into `head` and the like
        sys.stderr.close()
        return 0
    except KeyboardInterrupt:        # Ctrl-C: one line, not a traceback (outputs are written whole or not at all)
        sys.stderr.write("porefill: stopped (Ctrl-C)\n")
        return 130


if __name__ == "__main__":
    sys.exit(main())
