"""``tracer check``: screen a measured member as a single-span beam in bending."""

from __future__ import annotations

import argparse

from .common import add_assess_options, command_parser, draw_options, emit, read_measurement

__all__ = ["add_parser", "check_command"]

_CHECK_EPILOG = """\
examples:
  tracer check joist.toml --material C24 --span 3.6m --support simple --udl 1.5kN/m
  tracer check beam.toml --material S275 --span 5m --support fixed --point 12kN --limit 360
  tracer check beam.jpg --target 6x4:10mm --material S235 --span 2m --support cantilever --point 2kip
  tracer check joist.toml --material my-oak.toml --span 12ft --support simple --udl 300lbf/ft --json -

Self-weight (density x g x A) is added to the uniform load. Values are value ± U, U = 2u (k = 2),
from Monte Carlo draws of the measured section; loads, E and strength are taken as given.
Screening only, not a design check: lateral-torsional buckling, shear, bearing, connections,
defects and durability are not checked; a qualified engineer must assess any member for reuse
under the local building code.
"""


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer check`` to `sub`, the top parser's subcommands; returns its parser."""
    c = command_parser(
        sub, "check",
        help="screen a measured member as a beam: moment, stress, utilisation, deflection, longest span",
        description="Screen the member in INPUT as a single-span beam in bending, with the uncertainty of the "
                    "measured section carried through. Screening only, not a design check.",
        epilog=_CHECK_EPILOG,
    )
    c.add_argument("input", metavar="INPUT", help="a section sheet (.toml) or a photo of the cut end")
    c.add_argument("--material", required=True, metavar="NAME|FILE.toml",
                   help="a shipped material (S235 S275 S355 C16 C24 D30, values from memory: check them) or a "
                        "FILE.toml with E and strength")
    c.add_argument("--span", required=True, metavar="LENGTH", help="the span, with its unit, e.g. 3.6m")
    c.add_argument("--support", required=True, choices=("simple", "cantilever", "fixed"),
                   help="simple: both ends pinned; cantilever: one end fixed; fixed: both ends fixed")
    c.add_argument("--udl", metavar="FORCE/LENGTH", help="uniform load over the span, e.g. 5kN/m or 300lbf/ft")
    c.add_argument("--point", metavar="FORCE", help="point load at midspan (at the tip of a cantilever), e.g. 12kN")
    c.add_argument("--limit", type=float, default=250.0, metavar="N",
                   help="deflection limit span/N (default 250; use your code's)")
    c.add_argument("--axis", default="x", choices=("x", "y"),
                   help="bending about x (loads along y, the default) or about y")
    c.add_argument("--partial-factor", type=float, default=None, metavar="G",
                   help="divides the strength (default: the material's, else 1)")
    add_assess_options(c)
    c.set_defaults(command="check", run=check_command)
    return c


def check_command(args: argparse.Namespace) -> int:
    """Run ``tracer check``: screen INPUT as a beam and print the table or the JSON; returns the exit status."""
    from ..assess import screen_capacity, screen_json
    from ..assess.tables import format_screen
    from ..assess.materials import load_material
    from ..units import parse_force, parse_length, parse_line_load

    material = load_material(args.material)
    span = parse_length(args.span, field="--span")
    udl = parse_line_load(args.udl, field="--udl") if args.udl else 0.0
    point = parse_force(args.point, field="--point") if args.point else 0.0
    measurement, _ = read_measurement(args.input, args)
    screen = screen_capacity(measurement, material, span=span, support=args.support, udl=udl, point=point,
                             limit=args.limit, axis=args.axis, partial_factor=args.partial_factor,
                             **draw_options(args, 1000))
    return emit(args, screen_json(screen), format_screen(screen))
