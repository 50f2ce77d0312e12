"""The ``tracer`` command: parses arguments, calls the science modules, prints.

Exit status (DESIGN.md): 0 done; 1 the input was readable but the job could not be done;
2 bad usage or unreadable input. Errors are one or two plain lines; ``--debug`` shows the
traceback.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path
from typing import Sequence

from ._version import __version__

__all__ = ["main"]

_EXAMPLES_DIR = Path(__file__).parent / "examples"

_MAIN_EPILOG = f"""\
examples:
  tracer measure tracer/examples/waney-joist.toml     (from a checkout of the project)
  tracer measure beam.toml --units cm --json beam.json
  tracer measure --help

A section sheet (.toml) holds caliper or tape readings: units, name, and one of [shape],
[outline] or [stations]. Example sheets (invented scenarios) are installed in
{_EXAMPLES_DIR}
"""

_MEASURE_EPILOG = """\
examples:
  tracer measure joist.toml                      table of every property, in mm
  tracer measure joist.toml --units in           the same in inches
  tracer measure joist.toml --json -             result JSON on standard output
  tracer measure joist.toml --json joist.json    table, and the JSON saved to a file
  tracer measure angle.toml --align principal    properties about the principal axes
  tracer measure beam.toml --save-sheet beam-outline.toml
                                                 save the geometry as an editable outline
  tracer measure joist.toml --budget             which reading dominates the uncertainty
  tracer measure joist.toml --characteristic     add the 5th-percentile values
  tracer measure beam.toml --torsion             add J, shear centre and Cw (finite elements)

Values are shown as value ± U with U = 2u (k = 2); the JSON gives u (k = 1).

exit status: 0 done, 1 input readable but not measurable, 2 bad usage or unreadable input.
Results are for screening only, not a design check.
"""

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

_FIT_EPILOG = """\
examples:
  tracer fit beam.jpg --target 6x4:10mm --kind i-section
  tracer fit outline.toml --kind channel --nominal channel:h=200mm,b=75mm,tw=8.5mm,tf=11.5mm,r=12mm
  tracer fit joist.toml --kind rectangle --json -

Robust to pits and wane (soft-L1 loss). u combines the measurement's own uncertainty, carried
through the fit, and the scatter of the residuals. The shipped rolling tolerances are from
memory: check them. Screening only, not a design check.
"""


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 2
    try:
        return args.run(args)
    except KeyboardInterrupt:
        print("tracer: stopped", file=sys.stderr)
        return 130
    except BrokenPipeError:  # the reader (e.g. head) closed the pipe: nothing is wrong
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except Exception as e:  # noqa: BLE001 - every error becomes one plain line
        from .errors import TracerError

        if args.debug:
            raise
        if isinstance(e, TracerError):
            print(f"tracer: {e}", file=sys.stderr)
            return e.exit_status
        print(f"tracer: internal error: {type(e).__name__}: {e}", file=sys.stderr)
        print("tracer: please report it with the input file; rerun with --debug for the traceback",
              file=sys.stderr)
        return 1


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="tracer",
        description="Exact section properties of members that no catalogue describes, "
                    "from caliper readings or a traced outline.",
        epilog=_MAIN_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"tracer {__version__}")
    parser.set_defaults(command=None, debug=False)
    sub = parser.add_subparsers(title="commands", metavar="COMMAND")

    m = sub.add_parser(
        "measure",
        help="section properties of a section sheet",
        description="Compute area, centroid, second moments, principal axes, elastic and plastic "
                    "moduli of the section in INPUT and print them as a table.",
        epilog=_MEASURE_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    m.add_argument("input", metavar="INPUT", help="a section sheet (.toml) or a photo or scan of the cut end")
    m.add_argument("--json", metavar="PATH", help="write the result JSON to PATH, or to standard output with -")
    m.add_argument("--units", default="mm", choices=("mm", "cm", "m", "in"),
                   help="length unit of the table and the JSON (default mm)")
    m.add_argument("--align", choices=("principal",),
                   help="turn the section onto its principal axes before reporting")
    m.add_argument("--save-sheet", metavar="PATH",
                   help="also write the geometry as an [outline] sheet, to edit by hand and measure again")
    m.add_argument("--budget", action="store_true",
                   help="add the uncertainty budget of A, Ix, Iy to the table (it is always in the JSON)")
    m.add_argument("--characteristic", action="store_true",
                   help="add the 5th-percentile (low characteristic) value of each property")
    m.add_argument("--torsion", action="store_true",
                   help="also compute J, the shear centre (xs, ys) and Cw by finite elements")
    m.add_argument("--draws", type=_positive_int, metavar="N",
                   help="a fixed number of Monte Carlo draws (default: adaptive, JCGM 101 7.9; "
                        "200 for the torsion properties)")
    m.add_argument("--random-seed", type=int, default=None, metavar="N",
                   help="seed of the Monte Carlo draws (default fixed, so reruns print the same numbers)")
    _add_photo_options(m)
    m.add_argument("--overlay", metavar="PATH.png", help="write the review picture of the trace")
    m.add_argument("--debug", action="store_true", help="show the traceback of an error")
    m.set_defaults(command="measure", run=_measure)

    d = sub.add_parser(
        "demo",
        help="measure a bundled sample photo (synthetic) and write its review picture",
        description="Measure one of the bundled sample photos (synthetic renders of invented members) with "
                    "the settings of its sidecar file, print the table and write the review picture.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    d.add_argument("--sample", default=None, metavar="NAME", help="which sample (default: the first); --list shows them")
    d.add_argument("--list", action="store_true", help="list the samples")
    d.add_argument("--overlay", default="tracer-demo-overlay.png", metavar="PATH.png",
                   help="where to write the review picture (default tracer-demo-overlay.png)")
    d.add_argument("--debug", action="store_true", help="show the traceback of an error")
    d.set_defaults(command="demo", run=_demo)

    t = sub.add_parser(
        "target",
        help="write a printable, true-scale checkerboard target with a 100 mm check bar",
        description="Write a checkerboard target to print at 100 %, as SVG or PDF by the file's suffix. "
                    "Measure the printed check bar: it must be 100 mm.",
        epilog="examples:\n  tracer target --out target.pdf\n  tracer target --board 6x4:15mm --out small.svg",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    t.add_argument("--out", required=True, metavar="FILE.svg|FILE.pdf", help="where to write the target")
    t.add_argument("--board", default="9x6:20mm", metavar="CxR:SIZE",
                   help="inner corners across x down and the square size (default 9x6:20mm)")
    t.add_argument("--paper", default="a4", choices=("a4", "letter"), help="paper, landscape (default a4)")
    t.add_argument("--debug", action="store_true", help="show the traceback of an error")
    t.set_defaults(command="target", run=_target)

    c = _assess_parser(sub, "check", _CHECK_EPILOG,
                       help="screen a measured member as a beam: moment, stress, utilisation, deflection, longest span",
                       description="Screen the member in INPUT as a single-span beam in bending, with the uncertainty of the "
                                   "measured section carried through. Screening only, not a design check.")
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
    _add_assess_options(c)
    c.set_defaults(command="check", run=_check)

    k = _assess_parser(sub, "compare", _COMPARE_EPILOG,
                       help="section loss of a measured member against its nominal section, with a loss map",
                       description="Register the measured section onto the nominal (best rigid fit, mirror allowed) and report "
                                   "the loss of A, Ix, Iy, Sx_top, Zx and J in per cent, and the thinnest reading of each plate "
                                   "element against the nominal and its rolling tolerance.")
    k.add_argument("measured", metavar="MEASURED", help="a section sheet (.toml) or a photo of the cut end")
    k.add_argument("nominal", metavar="NOMINAL",
                   help="a sheet, or KIND:DIM=LENGTH,..., e.g. i-section:h=200mm,b=100mm,tw=5.6mm,tf=8.5mm,r=12mm")
    k.add_argument("--figure", metavar="PATH.svg|PATH.png|PATH.pdf",
                   help="write the loss map: nominal and measured outlines, loss shaded")
    k.add_argument("--tolerances", metavar="FILE.toml", help="a rolling-tolerance table (default: the shipped one)")
    k.add_argument("--torsion-draws", type=_positive_int, default=100, metavar="N",
                   help="Monte Carlo draws for the u of J (default 100; each is a finite-element solve)")
    _add_assess_options(k)
    k.set_defaults(command="compare", run=_compare)

    f = _assess_parser(sub, "fit", _FIT_EPILOG,
                       help="fit a parametric kind (i-section, channel, angle, ...) to a measured outline",
                       description="Fit the dimensions of a parametric kind to the outline in INPUT by robust least squares of "
                                   "the boundary distance, with their uncertainty; with --nominal, judge each against its rolling "
                                   "tolerance.")
    f.add_argument("input", metavar="INPUT", help="a section sheet (.toml) or a photo of the cut end")
    f.add_argument("--kind", required=True,
                   choices=("rectangle", "i-section", "channel", "angle", "tee", "tube", "box"),
                   help="the kind to fit")
    f.add_argument("--nominal", metavar="SHEET.toml|KIND:DIM=LENGTH,...",
                   help="the nominal section of the same kind: start there and check the rolling tolerances")
    f.add_argument("--tolerances", metavar="FILE.toml", help="a rolling-tolerance table (default: the shipped one)")
    _add_assess_options(f)
    f.set_defaults(command="fit", run=_fit)
    return parser


def _assess_parser(sub, name: str, epilog: str, *, help: str, description: str) -> argparse.ArgumentParser:
    """A subcommand of the assessment family, its examples kept as written."""
    return sub.add_parser(name, help=help, description=description, epilog=epilog,
                          formatter_class=argparse.RawDescriptionHelpFormatter)


def _add_assess_options(parser: argparse.ArgumentParser) -> None:
    """--json, Monte Carlo settings, the photo options and --debug of compare, fit and check."""
    parser.add_argument("--json", metavar="PATH", help="write the JSON to PATH, or to standard output with -")
    parser.add_argument("--draws", type=_positive_int, metavar="N",
                        help="Monte Carlo draws of the measured section")
    parser.add_argument("--random-seed", type=int, default=None, metavar="N", help="seed of the Monte Carlo draws")
    _add_photo_options(parser)
    parser.add_argument("--debug", action="store_true", help="show the traceback of an error")


def _add_photo_options(parser: argparse.ArgumentParser) -> None:
    """The options of a photo INPUT (shared by measure, compare, fit and check)."""
    photo = parser.add_argument_group("photo options")
    photo.add_argument("--target", metavar="CxR:SIZE",
                       help="a printed checkerboard in the plane of the cut face: inner corners across x down, "
                            "and the square size, e.g. 6x4:10mm")
    photo.add_argument("--scale", metavar="X1,Y1,X2,Y2=LENGTH",
                       help="two image points (pixels, x right, y down) a known distance apart, e.g. 120,80,1620,95=100mm")
    photo.add_argument("--dpi", type=float, metavar="N", help="the resolution of a flatbed scan")
    photo.add_argument("--known", metavar="depth=LENGTH|width=LENGTH",
                       help="one caliper reading of the member: the scale alone, or a cross-check with a target")
    photo.add_argument("--seed", metavar="X,Y", help="a pixel on the member, where several objects are in view")
    photo.add_argument("--max-tilt", type=float, default=None, metavar="DEG",
                       help="assumed bound of the camera's tilt to the face without a target (default 5)")
    photo.add_argument("--texture", metavar="LENGTH",
                       help="cracks and specks narrower than this are texture (default 2mm)")


def _measure(args: argparse.Namespace) -> int:
    from .errors import InputError
    from .files import write_atomic
    from .result import measure, result_json
    from .sheet import sheet_text
    from .table import format_table

    measurement, pm = _read_measurement(args.input, args, name=getattr(args, "name", None))
    from .uncertainty import DEFAULT_SEED

    seed = DEFAULT_SEED if args.random_seed is None else args.random_seed
    result = measure(measurement, align=args.align, draws=args.draws, seed=seed,
                     characteristic=args.characteristic, torsion=args.torsion)
    # Everything is computed before anything is written: an error never leaves a half output.
    outputs: list[tuple[str, str]] = []
    doc_text = None
    if args.json is not None:
        doc = result_json(result, units=args.units, characteristic=args.characteristic)
        doc_text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
        if args.json != "-":
            outputs.append((args.json, doc_text))
    if args.save_sheet:
        sheet_units = result.measurement.source.get("sheet_units", "mm")
        outputs.append((args.save_sheet, sheet_text(result.measurement.section, name=result.name,
                                                    units=sheet_units,
                                                    uncertainty=dict(result.measurement.uncertainty) or None)))
    overlay = getattr(args, "overlay", None)
    for target in [t for t, _ in outputs] + ([overlay] if overlay else []):
        if not Path(target).parent.is_dir():
            raise InputError(f"{target}: its folder does not exist; create it or choose another path")
    for target, text in outputs:
        write_atomic(target, text)
    if overlay and pm is not None:
        from .photo.overlay import write_overlay

        write_overlay(overlay, pm, result.properties, result.u)
        outputs.append((overlay, ""))

    if args.json == "-":
        sys.stdout.write(doc_text or "")
    else:
        print(format_table(result, units=args.units, budget=args.budget, characteristic=args.characteristic))
        for target, _ in outputs:
            print(f"\n  wrote {target}")
    return 0


def _read_measurement(input_path: str, args: argparse.Namespace, *, name: str | None = None):
    """INPUT (a sheet or a photo, with the photo options in `args`) -> (Measurement, PhotoMeasurement or None)."""
    from .errors import InputError
    from .sheet import read_sheet

    path = Path(input_path)
    photo_opts = {k: getattr(args, k)
                  for k in ("target", "scale", "dpi", "known", "seed", "max_tilt", "texture", "overlay")
                  if getattr(args, k, None) is not None}
    if path.suffix.lower() == ".toml":
        if photo_opts:
            raise InputError(f"--{next(iter(photo_opts)).replace('_', '-')} is a photo option; {path} is a sheet")
        return read_sheet(path), None
    from .photo.pipeline import PHOTO_SUFFIXES, measure_photo

    if path.suffix.lower() not in PHOTO_SUFFIXES and not path.exists():
        raise InputError(f"{path}: no such file")
    kw = {k: photo_opts[k] for k in ("target", "scale", "dpi", "known", "seed", "texture") if k in photo_opts}
    if "max_tilt" in photo_opts:
        kw["max_tilt"] = photo_opts["max_tilt"]
    pm = measure_photo(path, name=name, **kw)
    return pm.measurement, pm


def _check(args: argparse.Namespace) -> int:
    from .assess import screen_capacity, screen_json
    from .assess_table import format_screen
    from .materials import load_material
    from .units import parse_force, parse_length, parse_line_load

    material = load_material(args.material)
    span = parse_length(args.span, field="--span")
    udl = parse_line_load(args.udl, field="--udl") if args.udl else 0.0
    point = parse_force(args.point, field="--point") if args.point else 0.0
    measurement, _ = _read_measurement(args.input, args)
    screen = screen_capacity(measurement, material, span=span, support=args.support, udl=udl, point=point,
                             limit=args.limit, axis=args.axis, partial_factor=args.partial_factor,
                             **_draw_options(args, 1000))
    return _emit(args, screen_json(screen), format_screen(screen))


def _compare(args: argparse.Namespace) -> int:
    from .assess import compare_json, compare_sections, nominal_input
    from .assess_table import format_comparison
    from .errors import InputError
    from .tolerances import load_tolerances

    if args.figure and Path(args.figure).suffix.lower() not in (".svg", ".png", ".pdf"):
        raise InputError(f"--figure {args.figure}: write .svg, .png or .pdf")
    nominal = nominal_input(args.nominal)
    tolerances = load_tolerances(args.tolerances)
    measurement, _ = _read_measurement(args.measured, args)
    comparison = compare_sections(measurement, nominal, tolerances=tolerances, torsion_draws=args.torsion_draws,
                                  **_draw_options(args, 1000))
    files = []
    if args.figure:
        from .assess_figure import loss_map

        files.append((args.figure, loss_map(comparison, Path(args.figure).suffix)))
    return _emit(args, compare_json(comparison), format_comparison(comparison), files)


def _fit(args: argparse.Namespace) -> int:
    from .assess import fit_json, nominal_input, shape_of
    from .assess_table import format_fit
    from .errors import InputError
    from .fit import fit_shape
    from .tolerances import load_tolerances

    nominal = None
    if args.nominal:
        shape = shape_of(nominal_input(args.nominal))
        if shape is None or shape[0] != args.kind:
            raise InputError(f"--nominal {args.nominal}: give a {args.kind} (a [shape] sheet or {args.kind}:DIM=LENGTH,...)")
        nominal = shape[1]
    tolerances = load_tolerances(args.tolerances)
    measurement, _ = _read_measurement(args.input, args)
    opts = _draw_options(args, 100)
    result = fit_shape(measurement, args.kind, nominal=nominal, tolerances=tolerances, **opts)
    return _emit(args, fit_json(result, measurement), format_fit(result, measurement.name))


def _draw_options(args: argparse.Namespace, default: int) -> dict:
    from .uncertainty import DEFAULT_SEED

    return {"draws": args.draws or default,
            "seed": DEFAULT_SEED if args.random_seed is None else args.random_seed}


def _emit(args: argparse.Namespace, doc: dict, table: str, files: list[tuple[str, bytes]] = ()) -> int:
    """Write the JSON and any other files (all computed already), then print the table or the JSON."""
    from .errors import InputError
    from .files import write_atomic_bytes

    doc_text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    outputs = list(files)
    if args.json not in (None, "-"):
        outputs.insert(0, (args.json, doc_text.encode("utf-8")))
    for target, _ in outputs:
        if not Path(target).parent.is_dir():
            raise InputError(f"{target}: its folder does not exist; create it or choose another path")
    for target, data in outputs:
        write_atomic_bytes(target, data)
    if args.json == "-":
        sys.stdout.write(doc_text)
    else:
        print(table)
        for target, _ in outputs:
            print(f"\n  wrote {target}")
    return 0


def _positive_int(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if n < 2:
        raise argparse.ArgumentTypeError(f"{n}: at least 2 draws are needed")
    return n


def _target(args: argparse.Namespace) -> int:
    from .errors import InputError
    from .photo.scale import parse_target
    from .photo.target import write_target

    cols, rows, square = parse_target(args.board)
    if not Path(args.out).parent.is_dir():
        raise InputError(f"{args.out}: its folder does not exist; create it or choose another path")
    write_target(args.out, cols, rows, square, paper=args.paper)
    print(f"  wrote {args.out}: {cols} x {rows} inner corners of {square:g} mm; print at 100 % and check that the "
          f"bar measures 100 mm; measure with --target {args.board}")
    return 0


def _demo(args: argparse.Namespace) -> int:
    from .photo.samples import sample_names, sample_settings

    names = sample_names()
    if args.list:
        for n in names:
            print(n)
        return 0
    name = args.sample or names[0]
    if name not in names:
        from .errors import InputError

        raise InputError(f"--sample {name!r} is not a bundled sample; use one of {', '.join(names)}")
    path, settings = sample_settings(name)
    print(f"  demo: {path.name} is a synthetic photo of an invented member; settings from its sidecar: "
          + " ".join(f"--{k.replace('_', '-')} {v}" for k, v in settings.items()))
    ns = _parser().parse_args(["measure", str(path), "--overlay", args.overlay]
                              + [x for k, v in settings.items() for x in (f"--{k.replace('_', '-')}", str(v))])
    ns.debug = args.debug
    ns.name = f"{name} (synthetic photo of an invented member)"
    return _measure(ns)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
