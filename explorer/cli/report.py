"""`porefill report SCENARIO --out report.html`: the self-contained HTML report of a scenario file."""
from __future__ import annotations

import sys

__all__ = ["register"]


def _cmd_report(args) -> int:
    from porefill.explorer.cli.main import UsageError, output_place, write_output
    from porefill.explorer.files.scenario_file import ScenarioFileError, load_document, resolve_scenario

    out_path = output_place(args, "out", "--out")        # said before a minute of computing, not after
    try:
        doc = load_document(resolve_scenario(args.scenario))
    except ScenarioFileError as exc:
        raise UsageError(str(exc)) from None
    sizes = None
    if args.sizes is not None:
        try:
            from porefill.physics.sweep import parse_range
        except ImportError:
            raise UsageError("--sizes: this porefill has no sweep engine (porefill.physics.sweep)") from None
        try:
            sizes = () if args.sizes.strip() == "none" else parse_range(args.sizes, name="--sizes")
        except ValueError as exc:
            raise UsageError(str(exc)) from None
    from porefill.explorer.outputs.report import build_report

    def progress(message: str) -> None:
        if not args.quiet:
            sys.stderr.write(f"porefill: {message}\n")

    try:
        text = build_report(doc, sizes=sizes, progress=progress)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    write_output(out_path, text)
    if not args.quiet:
        sys.stderr.write(f"porefill: wrote {args.out} ({len(text.encode('utf-8')) / 1e6:.1f} MB; opens offline)\n")
    return 0


def register(sub) -> None:
    p = sub.add_parser("report", help="write a self-contained HTML report of a scenario (opens offline)")
    p.add_argument("scenario", help="scenario TOML file, or the name of a shipped one (e.g. demo-hexagon-helium)")
    p.add_argument("--out", required=True, metavar="FILE", help="the HTML file to write")
    p.add_argument("--sizes", metavar="START:STOP:COUNT",
                   help="pore sizes of the sizing map, Å (default: 5 from 0.8 to 1.2 × the scenario's; "
                        "'none' leaves it out)")
    p.add_argument("--force", action="store_true", help="replace an existing --out file")
    p.add_argument("--quiet", action="store_true", help="print nothing but errors")
    p.set_defaults(func=_cmd_report)
