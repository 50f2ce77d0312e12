"""``tracer export``: the section's geometry or result as SVG, DXF, CSV, TOML sheet or JSON."""

from __future__ import annotations

import argparse

from .common import add_debug_option, add_photo_options, check_folder, command_parser, positive_int, read_measurement

__all__ = ["add_parser", "export_command"]

_EXPORT_EPILOG = """\
examples:
  tracer export joist.toml --to joist.svg            true-scale drawing (sizes in mm)
  tracer export joist.toml --to joist.dxf            closed polylines, layers OUTLINE and HOLES
  tracer export joist.toml --to joist.csv --units in ring, x, y of every vertex, in inches
  tracer export joist.toml --to joist.json           the result JSON (as measure --json)
  tracer export photo.jpg --target 6x4:10mm --to traced.toml
                                                     the traced outline as a sheet to edit and measure
"""


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer export`` to `sub`, the top parser's subcommands; returns its parser."""
    e = command_parser(
        sub, "export",
        help="write the section's geometry or result to a file: SVG, DXF, CSV, TOML sheet or JSON",
        description="Measure INPUT (anything tracer measure takes) and write its geometry, or its result, "
                    "in the format of the file's suffix.",
        epilog=_EXPORT_EPILOG,
    )
    e.add_argument("input", metavar="INPUT", help="a section sheet (.toml) or a photo or scan of the cut end")
    e.add_argument("--to", required=True, metavar="FILE", help="where to write: .svg .dxf .csv .toml or .json")
    e.add_argument("--units", default="mm", choices=("mm", "cm", "m", "in"),
                   help="length unit of the DXF, CSV, TOML and JSON (default mm); an SVG is always in mm")
    e.add_argument("--align", choices=("principal",),
                   help="turn the section onto its principal axes before writing it")
    e.add_argument("--draws", type=positive_int, metavar="N", help="as for tracer measure (JSON only)")
    e.add_argument("--random-seed", type=int, default=None, metavar="N", help="as for tracer measure (JSON only)")
    # Every photo option measure takes; the review picture (--overlay) is measure's alone.
    add_photo_options(e)
    add_debug_option(e)
    e.set_defaults(command="export", run=export_command)
    return e


def export_command(args: argparse.Namespace) -> int:
    """Run ``tracer export``: measure INPUT and write the file of --to's format; returns the exit status."""
    from ..outputs.export import export_bytes, export_format
    from ..files import write_atomic_bytes
    from ..result import measure
    from ..uncertainty import DEFAULT_SEED

    fmt = export_format(args.to)                       # a bad suffix is refused before any work
    check_folder(args.to)
    measurement, _ = read_measurement(args.input, args)
    seed = DEFAULT_SEED if args.random_seed is None else args.random_seed
    result = measure(measurement, align=args.align, draws=args.draws, seed=seed)
    write_atomic_bytes(args.to, export_bytes(fmt, result, units=args.units))
    s = result.measurement.section
    print(f"  wrote {args.to}: {result.name}, {s.n_parts} part(s), {s.n_holes} hole(s), {s.n_vertices} vertices")
    return 0
