"""`porefill fit FILE --distribution`: the pore-size distribution of the measured runs, and its carried prediction.

Thin: the kernel comes from `porefill.explorer.jobs.kernels` (built in parallel, kept on disk), the inversion
is `porefill.physics.distribution.inversion.invert`, the carried prediction
`porefill.physics.distribution.carry.carry`; this module turns options into a kernel spec and the result into
JSON, a table or CSV.
"""
from __future__ import annotations

import sys

from porefill.explorer.cli.main import UsageError

__all__ = ["add_distribution_options", "run_distribution"]


def add_distribution_options(p) -> None:
    p.add_argument("--distribution", action="store_true",
                   help="find the distribution of pore volume over pore size (a kernel of model isotherms over "
                        "sizes, non-negative and smoothed; strength by generalised cross-validation) instead of "
                        "fitting one pore")
    p.add_argument("--sizes", metavar="START:STOP:COUNT",
                   help="kernel sizes, Å, in the shape's own size (hexagon side, cylinder radius, slit width); "
                        "default: 48 sizes whose equivalent diameters span 2–10 nm")
    p.add_argument("--kernel-points", type=int, default=None, metavar="N",
                   help="chemical potentials per kernel isotherm (default 200)")
    p.add_argument("--kernel-parts", type=int, default=None, metavar="N",
                   help="pores averaged across each kernel size's bin (default 3; 1: single sizes)")
    p.add_argument("--carry", metavar="GAS:K[:MODEL]",
                   help="with --distribution: predict another gas at another temperature in the same sample "
                        "(e.g. helium-4:1.5, or helium-4:1.5:classical): its isotherm and the pressure band over "
                        "which each layer forms; MODEL the site model (default: the gas's own)")
    p.add_argument("--legs", choices=("adsorption", "desorption", "both"), default=None,
                   help="with --distribution: the legs to invert (default: adsorption when the files have it)")
    p.add_argument("--bootstrap", type=int, default=None, metavar="N",
                   help="bootstrap resamples for the distribution's errors (default 200)")


def _spec(args, scenario):
    from porefill.physics.distribution.kernel import DEFAULT_KERNEL_POINTS, DEFAULT_PARTS, KernelSpec, default_sizes
    from porefill.physics.sweep import parse_range

    try:
        sizes = parse_range(args.sizes, name="--sizes") if args.sizes else default_sizes(scenario.shape)
        return KernelSpec(scenario.replace(title="", notes=""), tuple(sorted(sizes)),
                          n_points=args.kernel_points or DEFAULT_KERNEL_POINTS,
                          parts=DEFAULT_PARTS if args.kernel_parts is None else args.kernel_parts)
    except ValueError as exc:
        raise UsageError(str(exc)) from None


def _carry_scenario(text: str, scenario):
    from porefill.physics.choices import SITE_MODELS
    from porefill.physics.substances.materials import ADSORBATES

    parts = (text or "").split(":")
    model = parts.pop() if len(parts) == 3 else None
    if len(parts) != 2 or parts[0] not in ADSORBATES or (model is not None and model not in SITE_MODELS):
        raise UsageError(f"--carry {text!r}: give GAS:K or GAS:K:MODEL with GAS one of {', '.join(ADSORBATES)} "
                         f"and MODEL one of {', '.join(SITE_MODELS)} (e.g. helium-4:1.5)")
    gas, temp = parts
    try:
        t = float(temp)
    except ValueError:
        raise UsageError(f"--carry {text!r}: the temperature {temp!r} is not a number of kelvin") from None
    try:
        # the carried gas keeps the sample's pores; its own pair, bond and (unless named) default site model
        from porefill.physics.distribution.carry import carried_base

        return carried_base(scenario, adsorbate=gas, temperature_k=t, site_model=model)
    except ValueError as exc:
        raise UsageError(f"--carry {text!r}: {exc}") from None


def _progress(label: str):
    if not sys.stderr.isatty():
        return None

    def show(done, total):
        sys.stderr.write(f"\rporefill: {label}: {done}/{total} sizes")
        if done == total:
            sys.stderr.write("\n")
        sys.stderr.flush()
    return show


def run_distribution(args, runs, notes, scenario, sample, csv_path) -> int:
    from porefill.explorer.jobs.kernels import kernel_for
    from porefill.explorer.outputs.distribution_export import distribution_csv, distribution_json
    from porefill.physics.distribution.carry import carry
    from porefill.physics.distribution.inversion import BOOTSTRAP_SAMPLES, invert
    from porefill.physics.distribution.kernel import KernelSpec

    spec = _spec(args, scenario)
    carry_spec = None
    if args.carry:
        other = _carry_scenario(args.carry, spec.base)
        carry_spec = KernelSpec(other, spec.sizes_angstrom, n_points=spec.n_points, relative_pressure_range=None,
                                parts=spec.parts)
    kernel = kernel_for(spec, progress=_progress(f"{spec.base.adsorbate} kernel"))
    try:
        legs = None if args.legs is None else (("adsorption", "desorption") if args.legs == "both" else (args.legs,))
        dist = invert(kernel, runs, sample, noise_relative=args.noise, legs=legs,
                      bootstrap=BOOTSTRAP_SAMPLES if args.bootstrap is None else args.bootstrap, seed=args.seed)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    carried = None
    if carry_spec is not None:
        other_kernel = kernel_for(carry_spec, progress=_progress(f"{carry_spec.base.adsorbate} kernel"))
        try:
            carried = carry(dist.sizes_angstrom, dist.pore_volume_cm3_g, other_kernel)
        except ValueError as exc:
            raise UsageError(f"--carry: {exc}") from None
    data = distribution_json(dist, carried)
    data["file_notes"] = list(notes)
    if csv_path is not None:
        from porefill.explorer.cli.main import write_output

        write_output(csv_path, distribution_csv(dist))
    from porefill.explorer.cli.fit import emit

    return emit(args, data, _table, notes)


def _table(data: dict) -> str:
    t = data["distribution"]
    s = data["summary"]
    k = data["kernel"]
    lines = [f"pore-size distribution of {k['base']['adsorbate']} at {k['base']['temperature_k']:g} K, "
             f"{len(t['size_angstrom'])} kernel sizes",
             f"{'size Å':>8} {'diam. Å':>8} {'cm³/g':>10} {'± cm³/g':>10} {'cumul.':>8}"]
    for row in zip(t["size_angstrom"], t["diameter_angstrom"], t["pore_volume_cm3_g"], t["stderr_cm3_g"],
                   t["cumulative_cm3_g"]):
        if row[2] and row[2] > 1e-6:
            err = "—" if row[3] is None else f"{row[3]:.3g}"
            lines.append(f"{row[0]:>8.3f} {row[1]:>8.2f} {row[2]:>10.4g} {err:>10} {row[4]:>8.4g}")

    def fmt(key):
        v, e = s[key]["value"], s[key]["stderr"]
        return "—" if v is None else (f"{v:.4g}" + ("" if e is None else f" ± {e:.2g}"))
    lines.append(f"total {fmt('total_cm3_g')} cm³/g; mode {fmt('mode')} Å, mean {fmt('mean')} Å, "
                 f"median {fmt('median')} Å, width {fmt('width')} Å")
    st = data["statistics"]
    one = data["single_size"]
    red = "—" if st["reduced_chi2"] is None else f"{st['reduced_chi2']:.3g}"
    lines.append(f"χ² {st['chi2']:.4g} over {st['points']} points (reduced {red}, λ {data['regularisation']['lambda']:.3g} "
                 f"by GCV); one size alone: {one.get('size_angstrom', float('nan')):g} Å, reduced χ² "
                 f"{one.get('reduced_chi2', float('nan')):.3g}")
    carried = data.get("carried")
    if carried:
        lines.append(f"carried to {carried['adsorbate']} at {carried['temperature_k']:g} K "
                     f"({carried['site_model']} sites): where each layer forms (Pa, volume-weighted 10/50/90 %)")
        for layer in carried["layers"]:
            if "median_pa" in layer:
                lines.append(f"  {layer['name']:<28} {layer['p10_pa']:.3g} / {layer['median_pa']:.3g} / "
                             f"{layer['p90_pa']:.3g}  ({layer['volume_fraction']:.0%} of the pore volume)")
            else:
                lines.append(f"  {layer['name']:<28} does not form below p0")
    lines += [f"note: {n}" if not n.startswith("warning:") else n for n in data["notes"]]
    return "\n".join(lines)
