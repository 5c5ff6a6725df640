"""Command line entry point: ``fluxfunnel demo`` and friends."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

__all__ = ["main"]

DESCRIPTION = """\
fluxfunnel: how accretion-disk turbulence moves large-scale magnetic flux.

Mean-field closure from turbulence statistics to transport coefficients, field-line bending through the
disk, and the global evolution of poloidal flux, for single systems and populations. All quantities CGS.
Every number printed is a model prediction under the stated assumptions (steady alpha disk, mean-field
closure), not a measurement.
"""


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="fluxfunnel", description=DESCRIPTION, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    p.add_argument("--version", action="store_true", help="print the version and exit")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    demo = sub.add_parser(
        "demo",
        help="run the built-in invented scenario end to end and write a report and plots",
        description="Run the built-in demo: three invented systems, their disks and inner edges.",
    )
    demo.add_argument(
        "--out", type=Path, default=Path("fluxfunnel-demo"), help="folder for the report and plots"
    )
    demo.add_argument("--no-plots", action="store_true", help="skip the PNG plots (no matplotlib needed)")
    run = sub.add_parser(
        "run",
        help="run the pipeline for your own scenario file (TOML)",
        description="Run object -> disk -> turbulence template -> transport speeds -> steady flux -> critical "
        "radius for a scenario file, and write a report, a netCDF file and plots.",
    )
    run.add_argument("scenario", nargs="?", type=Path, help="scenario file (TOML)")
    run.add_argument("--out", type=Path, default=None, help="output folder (default: the scenario's output.folder)")
    run.add_argument("--explain", action="store_true", help="list every scenario table and key and exit")
    run.add_argument("--check", action="store_true", help="only check the scenario file")
    return p


def main(argv: list[str] | None = None) -> int:
    """Run the command line interface; returns the process exit code."""
    args = _parser().parse_args(argv)
    if args.version:
        from . import __version__

        print(__version__)
        return 0
    if args.command == "demo":
        from . import demo

        try:
            demo.run(args.out, plots=not args.no_plots)
        except KeyboardInterrupt:
            print("interrupted", file=sys.stderr)
            return 130
        return 0
    if args.command == "run":
        return _run(args)
    _parser().print_help()
    return 0


def _run(args: argparse.Namespace) -> int:
    from .scenario import ScenarioError, explain, load_scenario

    if args.explain:
        print(explain())
        return 0
    if args.scenario is None:
        print("fluxfunnel run: give a scenario file (or --explain for the keys)", file=sys.stderr)
        return 2
    try:
        sc = load_scenario(args.scenario)
    except ScenarioError as exc:
        print(f"fluxfunnel run: {exc}", file=sys.stderr)
        return 2
    if args.check:
        print(f"{args.scenario}: scenario is valid")
        return 0
    from . import pipeline
    from ._errors import FluxfunnelError

    try:
        res = pipeline.run_scenario(sc)
        out = args.out if args.out is not None else sc.output_folder
        o = sc["output"]
        paths = pipeline.write_outputs(res, out, plots=o["plots"], data=o["data"] == "netcdf")
    except ScenarioError as exc:
        print(f"fluxfunnel run: {exc}", file=sys.stderr)
        return 2
    except FluxfunnelError as exc:
        print(f"fluxfunnel run: {type(exc).__name__}: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    print(pipeline.report(res))
    print("written: " + ", ".join(str(p) for p in paths))
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
