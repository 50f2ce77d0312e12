"""``tracer fit``: the dimensions of a parametric kind fitted to a measured outline."""

from __future__ import annotations

import argparse

from .common import add_assess_options, command_parser, draw_options, emit, read_measurement

__all__ = ["add_parser", "fit_command"]

_FIT_EPILOG = """\
examples:
  tracer fit beam.jpg --target 6x4:10mm --kind i-section
  tracer fit outline.toml --kind channel --nominal channel:h=200mm,b=75mm,tw=8.5mm,tf=11.5mm,r=12mm
  tracer fit joist.toml --kind rectangle --json -

Robust to pits and wane (soft-L1 loss). u combines the measurement's own uncertainty, carried
through the fit, and the scatter of the residuals. The shipped rolling tolerances are from
memory: check them. Screening only, not a design check.
"""


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer fit`` to `sub`, the top parser's subcommands; returns its parser."""
    f = command_parser(
        sub, "fit",
        help="fit a parametric kind (i-section, channel, angle, ...) to a measured outline",
        description="Fit the dimensions of a parametric kind to the outline in INPUT by robust least squares of "
                    "the boundary distance, with their uncertainty; with --nominal, judge each against its rolling "
                    "tolerance.",
        epilog=_FIT_EPILOG,
    )
    f.add_argument("input", metavar="INPUT", help="a section sheet (.toml) or a photo of the cut end")
    f.add_argument("--kind", required=True,
                   choices=("rectangle", "i-section", "channel", "angle", "tee", "tube", "box"),
                   help="the kind to fit")
    f.add_argument("--nominal", metavar="SHEET.toml|KIND:DIM=LENGTH,...",
                   help="the nominal section of the same kind: start there and check the rolling tolerances")
    f.add_argument("--tolerances", metavar="FILE.toml", help="a rolling-tolerance table (default: the shipped one)")
    add_assess_options(f)
    f.set_defaults(command="fit", run=fit_command)
    return f


def fit_command(args: argparse.Namespace) -> int:
    """Run ``tracer fit``: fit --kind to INPUT and print the table or the JSON; returns the exit status."""
    from ..assess import fit_json, nominal_input, shape_of
    from ..assess.tables import format_fit
    from ..errors import InputError
    from ..assess.fit import fit_shape
    from ..assess.tolerances import load_tolerances

    nominal = None
    if args.nominal:
        shape = shape_of(nominal_input(args.nominal))
        if shape is None or shape[0] != args.kind:
            raise InputError(f"--nominal {args.nominal}: give a {args.kind} (a [shape] sheet or {args.kind}:DIM=LENGTH,...)")
        nominal = shape[1]
    tolerances = load_tolerances(args.tolerances)
    measurement, _ = read_measurement(args.input, args)
    opts = draw_options(args, 100)
    result = fit_shape(measurement, args.kind, nominal=nominal, tolerances=tolerances, **opts)
    return emit(args, fit_json(result, measurement), format_fit(result, measurement.name))
