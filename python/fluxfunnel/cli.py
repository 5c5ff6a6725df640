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
    _parser().print_help()
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
