"""``tracer compare``: section loss of a measured member against its nominal section, with a loss map."""

from __future__ import annotations

import argparse
from pathlib import Path

from .common import (add_assess_options, command_parser, draw_options, emit, positive_int,
                     read_measurement)

__all__ = ["add_parser", "compare_command"]

_COMPARE_EPILOG = """\
examples:
  tracer compare corroded.toml i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm --figure loss.svg
  tracer compare beam.jpg --target 6x4:10mm nominal.toml --json loss.json

Loss is (nominal - measured) / nominal, positive = material lost, value ± U (k = 2). A plate
element whose thinnest reading lies within the rolling tolerance (an editable table; the shipped
bands are from memory: check them) is reported as within tolerance, not as loss. Screening
only, not a design check; a qualified engineer must assess any member for reuse under the
local building code.
"""


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer compare`` to `sub`, the top parser's subcommands; returns its parser."""
    k = command_parser(
        sub, "compare",
        help="section loss of a measured member against its nominal section, with a loss map",
        description="Register the measured section onto the nominal (best rigid fit, mirror allowed) and report "
                    "the loss of A, Ix, Iy, Sx_top, Zx and J in per cent, and the thinnest reading of each plate "
                    "element against the nominal and its rolling tolerance.",
        epilog=_COMPARE_EPILOG,
    )
    k.add_argument("measured", metavar="MEASURED", help="a section sheet (.toml) or a photo of the cut end")
    k.add_argument("nominal", metavar="NOMINAL",
                   help="a sheet, or KIND:DIM=LENGTH,..., e.g. i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm")
    k.add_argument("--figure", metavar="PATH.svg|PATH.png|PATH.pdf",
                   help="write the loss map: nominal and measured outlines, loss shaded")
    k.add_argument("--tolerances", metavar="FILE.toml", help="a rolling-tolerance table (default: the shipped one)")
    k.add_argument("--torsion-draws", type=positive_int, default=100, metavar="N",
                   help="Monte Carlo draws for the u of J (default 100; each is a finite-element solve)")
    add_assess_options(k)
    k.set_defaults(command="compare", run=compare_command)
    return k


def compare_command(args: argparse.Namespace) -> int:
    """Run ``tracer compare``: the loss against the nominal, its table or JSON, and the loss map; returns
    the exit status."""
    from ..assess import compare_json, compare_sections, nominal_input
    from ..assess.tables import format_comparison
    from ..errors import InputError
    from ..assess.tolerances import load_tolerances

    if args.figure and Path(args.figure).suffix.lower() not in (".svg", ".png", ".pdf"):
        raise InputError(f"--figure {args.figure}: write .svg, .png or .pdf")
    nominal = nominal_input(args.nominal)
    tolerances = load_tolerances(args.tolerances)
    measurement, _ = read_measurement(args.measured, args)
    comparison = compare_sections(measurement, nominal, tolerances=tolerances, torsion_draws=args.torsion_draws,
                                  **draw_options(args, 1000))
    files = []
    if args.figure:
        from ..assess.figure import loss_map

        files.append((args.figure, loss_map(comparison, Path(args.figure).suffix)))
    return emit(args, compare_json(comparison), format_comparison(comparison), files)
