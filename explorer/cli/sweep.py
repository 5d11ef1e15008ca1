"""`porefill sweep`: the layer steps of a grid of pores (sizes × walls × temperatures), in parallel.

    porefill sweep --pore hexagon --sizes 10:50:40 --wall 8 --adsorbate helium-4 --temperature 1.5 --json

Ranges are start:stop:count (both ends included), one number, or a comma list. Progress goes to stderr
(unless --quiet); Ctrl-C stops the sweep and prints what was computed, marked ``"stopped": true``.
"""
from __future__ import annotations

import json
import sys
import threading

from porefill.explorer.cli.main import (UsageError, add_model_options, add_pore_options, base_scenario, model_scenario,
                                         output_place, write_output)

__all__ = ["register"]


def register(sub) -> None:
    from porefill.physics.choices import DEFAULT_POINTS
    from porefill.physics.choices import TARGET_KINDS

    p = sub.add_parser("sweep", help="layer steps across pore sizes, walls and temperatures (in parallel)")
    add_pore_options(p)
    p.add_argument("--sizes", metavar="RANGE",
                   help="sizes to sweep, Å: start:stop:count (inclusive, e.g. 10:50:40), one number or a "
                        "comma list (default: --size)")
    p.add_argument("--walls", metavar="RANGE", help="wall thicknesses to sweep, Å, as --sizes (default: --wall)")
    p.add_argument("--temperature", type=float, help="temperature, K (one value)")
    p.add_argument("--temperatures", metavar="RANGE", help="temperatures to sweep, K, as --sizes")
    p.add_argument("--points", type=int, default=DEFAULT_POINTS,
                   help=f"chemical potentials per isotherm (default {DEFAULT_POINTS})")
    add_model_options(p)
    p.add_argument("--json", action="store_true", help="print JSON: one entry per pore under \"pores\"")
    p.add_argument("--csv", metavar="FILE", help="also write one row per step to FILE")
    p.add_argument("--force", action="store_true", help="replace an existing --csv file")
    p.add_argument("--target", choices=list(TARGET_KINDS),
                   help="mark the pores that meet a target: " + "; ".join(f"{k}: {v}" for k, v in TARGET_KINDS.items()))
    p.add_argument("--window", type=float, nargs=2, metavar=("LOW", "HIGH"),
                   help="pressure window of the apparatus for --target, Pa (or p/p0 with --relative; "
                        "default: any pressure)")
    p.add_argument("--relative", action="store_true", help="--window is in p/p0 (relative pressure), not Pa")
    p.add_argument("--layer", type=int, default=1,
                   help="for --target layer: which layer must be complete, counted from the wall (default 1)")
    p.add_argument("--workers", type=int, help="worker processes on this machine (default: its cores; 1: none)")
    p.add_argument("--cluster", metavar="ADDRESS",
                   help="run on the Dask cluster whose scheduler is at ADDRESS (e.g. tcp://10.0.0.5:8786)")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.set_defaults(func=_cmd_sweep)


def _axis(text, name):
    from porefill.physics.sweep import parse_range

    if text is None:
        return ()
    try:
        return parse_range(text, name=name)
    except ValueError as exc:
        raise UsageError(str(exc)) from None


def _spec(args):
    from porefill.physics.sweep import SweepSpec
    from porefill.physics.substances.vapour_pressure import saturated_vapour_pressure

    if args.temperature is not None and args.temperatures is not None:
        raise UsageError("give --temperature or --temperatures, not both")
    temps = _axis(args.temperatures, "--temperatures")
    if args.temperature is None and not temps and base_scenario(args) is None:
        raise UsageError("give the temperature: --temperature K or --temperatures RANGE")
    if args.walls is not None and args.isolated:
        raise UsageError("--walls and --isolated contradict each other: an isolated pore has no wall")
    sizes, walls = _axis(args.sizes, "--sizes"), _axis(args.walls, "--walls")
    if args.temperature is None and temps:
        args.temperature = temps[0]
    base = model_scenario(args)
    for t in temps or (base.temperature_k,):
        try:
            saturated_vapour_pressure(base.adsorbate, t)
        except ValueError as exc:
            raise UsageError(f"temperature {t:g} K: {exc}") from None
    try:
        return SweepSpec(base, sizes_angstrom=sizes, walls_angstrom=walls, temperatures_k=temps,
                         n_points=args.points)
    except ValueError as exc:
        message = str(exc)
        if message.startswith("number of points"):
            message = f"--points: {message}"
        raise UsageError(message) from None


def _target(args):
    from porefill.physics.sweep import Target

    if args.target is None:
        if args.window is not None:
            raise UsageError("--window needs --target (the configuration to look for in it)")
        return None
    low, high = args.window if args.window is not None else (0.0, float("inf"))
    try:
        return Target(args.target, low_pa=low, high_pa=high, layer=args.layer, relative=args.relative)
    except ValueError as exc:
        raise UsageError(f"--window: {exc}") from None


def _progress(quiet: bool):
    if quiet:
        return None
    tty = sys.stderr.isatty()

    def show(done: int, total: int) -> None:
        end = "" if tty and done < total else "\n"
        sys.stderr.write(f"{chr(13) if tty else ''}porefill: sweep {done}/{total} pores{end}")
        sys.stderr.flush()
    return show


def _summary(result, target) -> str:
    lines = []
    for p in result.done:
        wall = "isolated" if p["wall_angstrom"] is None else f"wall {p['wall_angstrom']:g} Å"
        head = f"size {p['size_angstrom']:g} Å, {wall}, {p['temperature_k']:g} K ({p.get('site_model')})"
        if "error" in p:
            lines.append(f"{head}: {p['error']}")
            continue
        steps = ", ".join(f"{f} {s['pressure_pa']:.3g} Pa" for s, f in zip(p["steps"], p["step_fills"])) or "no steps"
        if target is not None:
            from porefill.physics.sweep import edge_words, meets
            ok, rng = meets(target, p)
            steps += f"; meets the target at {edge_words(p, rng)}" if ok else "; does not meet the target"
        lines.append(f"{head}: {steps}")
    if result.stopped:
        lines.append(f"stopped: {len(result.done)} of {len(result.points)} pores computed")
    return "\n".join(lines)


def _cmd_sweep(args) -> int:
    from porefill.explorer.outputs.sweep_export import sweep_csv, sweep_json
    from porefill.explorer.jobs.sweep_runner import ClusterError, SweepRunner

    csv_path = output_place(args, "csv", "--csv")
    if args.workers is not None and args.workers < 1:
        raise UsageError(f"--workers must be at least 1; got {args.workers}")
    spec, target = _spec(args), _target(args)
    stop = threading.Event()
    runner = SweepRunner(workers=args.workers, cluster=args.cluster)
    try:
        try:
            result = runner.run(spec, progress=_progress(args.quiet), stop=stop)
        except KeyboardInterrupt:      # Ctrl-C while waiting: stop, keep what is done
            stop.set()
            result = runner.run(spec, stop=stop)    # only the cache: every computed pore is in it
    except ClusterError as exc:
        raise UsageError(str(exc)) from None
    finally:
        runner.close(terminate=stop.is_set())
    if csv_path is not None:
        write_output(csv_path, sweep_csv(result))       # a stopped sweep's CSV says so in its first line
    if args.json:
        json.dump(sweep_json(result, target=target), sys.stdout)
        sys.stdout.write("\n")
    else:
        print(_summary(result, target))
    failed = [p for p in result.done if "error" in p]
    if failed and not args.quiet:
        sys.stderr.write(f"porefill: note: {len(failed)} pore(s) could not be computed; their entries say why\n")
    return 130 if result.stopped else 0
