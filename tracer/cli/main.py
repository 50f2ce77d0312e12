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

from .._version import __version__

__all__ = ["main"]

_EXAMPLES_DIR = Path(__file__).parents[1] / "examples"

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
  tracer measure joist.toml --report joist.html  the report for the assessment file (or .pdf)

Values are shown as value ± U with U = 2u (k = 2); the JSON gives u (k = 1).

exit status: 0 done, 1 input readable but not measurable, 2 bad usage or unreadable input.
Results are for screening only, not a design check.
"""

_REVIEW_EPILOG = """\
examples:
  tracer review beam.jpg                      open the page on one photo (its sidecar read)
  tracer review a.jpg b.jpg --target 9x6:15mm several photos, with a scale reference for all
  tracer review site-out/                     walk the failed and flagged members of a batch
  tracer review beam.jpg --no-browser         print the address only (the first line printed)

The address carries a token that changes with every run; the page answers nothing without it.
Ctrl-C stops the page; it also stops after --idle minutes without a request.
exit status: 0 stopped, 2 bad usage or unreadable input.
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


_EXPORT_EPILOG = """\
examples:
  tracer export joist.toml --to joist.svg            true-scale drawing (sizes in mm)
  tracer export joist.toml --to joist.dxf            closed polylines, layers OUTLINE and HOLES
  tracer export joist.toml --to joist.csv --units in ring, x, y of every vertex, in inches
  tracer export joist.toml --to joist.json           the result JSON (as measure --json)
  tracer export photo.jpg --target 6x4:10mm --to traced.toml
                                                     the traced outline as a sheet to edit and measure
"""


_BATCH_EPILOG = """\
examples:
  tracer batch yard/ --out inventory/ --target 6x4:10mm   every photo and sheet in yard/, one target for all
  tracer batch members.csv --out inventory/ --jobs 2      a manifest: path,name,target,scale,known,dpi,seed
  tracer batch yard/ --out inventory/ --report none       no report per member (faster)
  tracer batch --out inventory/ --rebuild                 rewrite inventory.csv and index.html only

Settings per photo: a sidecar STEM.toml beside it (target = "6x4:10mm", name = "joist J-14", ...) or
the manifest's cells, written as the tracer measure options take them; an item's own scale reference
replaces the lot's. Exit status: 0 all measured, 1 some failed (see inventory.csv), 2 bad usage,
130 stopped (run again to go on). Results are for screening only, not a design check.
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
        from ..errors import TracerError

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
        description="Exact section properties, with their uncertainty, of members that no catalogue describes, "
                    "from caliper readings, a traced outline, or a photo of the cut end; reports, exports, "
                    "batches and a screening of what a member can carry.",
        epilog=_MAIN_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"tracer {__version__}")
    parser.set_defaults(command=None, debug=False)
    sub = parser.add_subparsers(title="commands", metavar="COMMAND")

    m = sub.add_parser(
        "measure",
        help="section properties of a section sheet or a photo of the cut end",
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
    m.add_argument("--report", metavar="FILE.html|FILE.pdf",
                   help="write the report for the assessment file: HTML (self-contained) or PDF, by the suffix")
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
    photo = _add_photo_options(m)
    m.add_argument("--overlay", metavar="PATH.png", help="write the review picture of the trace")
    m.add_argument("--debug", action="store_true", help="show the traceback of an error")
    m.set_defaults(command="measure", run=_measure)

    r = sub.add_parser(
        "review",
        help="check and correct photo traces on a local page, and save what reproduces them",
        description="Open a local page (127.0.0.1 only) showing each PHOTO with its trace, scale reference, trace "
                    "check and A, I1, I2 with U. Click on the member, on the ground, drag a box, place two scale "
                    "points, move the boundary's vertices; each change measures again. Save writes the photo's "
                    "sidecar STEM.toml (so that tracer measure and tracer batch reproduce the trace), its result "
                    "JSON and its report. Given a batch output folder, it walks the members that failed or need "
                    "review, and saving one reruns its record and the inventory.",
        epilog=_REVIEW_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    r.add_argument("inputs", metavar="PHOTO", nargs="+", help="photos of cut ends, or one batch output folder")
    r.add_argument("--no-browser", action="store_true", help="print the address only; do not open a browser")
    r.add_argument("--out", metavar="DIR", help="save sidecars, result JSON and reports here (default: beside each photo)")
    r.add_argument("--port", type=int, default=0, metavar="N", help="listen on this port (default: a free one)")
    r.add_argument("--idle", type=float, default=30.0, metavar="MINUTES",
                   help="stop after this long without a request from the page (default 30)")
    from ..inputs.photo.sidecar import PHOTO_OPTIONS

    r_photo = r.add_argument_group("photo options (over each photo's sidecar; the page can change them)")
    for action in photo._group_actions:
        if action.dest in PHOTO_OPTIONS:
            r_photo._add_action(action)
    r.add_argument("--debug", action="store_true", help="show the traceback of an error")
    r.set_defaults(command="review", run=_review)

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
    d.add_argument("--report", metavar="FILE.html|FILE.pdf", help="also write the report for the assessment file")
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

    c = sub.add_parser(
        "calibrate",
        help="build a lens profile from photos of a checkerboard",
        description="Find the checkerboard in each photo and fit the camera's focal length, centre and lens "
                    "distortion; write them as a lens profile for tracer measure --lens. Take 6 to 15 photos "
                    "with the same camera and zoom, the board flat and tilted 20 to 40 degrees a different way "
                    "in each, reaching into the corners of the frame.",
        epilog="example:\n  tracer calibrate cal/*.jpg --board 9x6:20mm --out calib/phone.json\n"
               "  tracer measure beam.jpg --target 6x4:10mm --lens calib/phone.json",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    c.add_argument("photos", nargs="+", metavar="PHOTO", help="photos of the board")
    c.add_argument("--board", required=True, metavar="CxR:SIZE",
                   help="the board's inner corners across x down and square size, e.g. 9x6:20mm")
    c.add_argument("--out", required=True, metavar="FILE.json", help="where to write the lens profile")
    c.add_argument("--debug", action="store_true", help="show the traceback of an error")
    c.set_defaults(command="calibrate", run=_calibrate)

    e = sub.add_parser(
        "export",
        help="write the section's geometry or result to a file: SVG, DXF, CSV, TOML sheet or JSON",
        description="Measure INPUT (anything tracer measure takes) and write its geometry, or its result, "
                    "in the format of the file's suffix.",
        epilog=_EXPORT_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    e.add_argument("input", metavar="INPUT", help="a section sheet (.toml) or a photo or scan of the cut end")
    e.add_argument("--to", required=True, metavar="FILE", help="where to write: .svg .dxf .csv .toml or .json")
    e.add_argument("--units", default="mm", choices=("mm", "cm", "m", "in"),
                   help="length unit of the DXF, CSV, TOML and JSON (default mm); an SVG is always in mm")
    e.add_argument("--align", choices=("principal",),
                   help="turn the section onto its principal axes before writing it")
    e.add_argument("--draws", type=_positive_int, metavar="N", help="as for tracer measure (JSON only)")
    e.add_argument("--random-seed", type=int, default=None, metavar="N", help="as for tracer measure (JSON only)")
    e_photo = e.add_argument_group("photo options")
    # The same option objects as measure's (argparse shares actions this way for parents=), so
    # export takes every photo option measure takes; the review picture is measure's alone.
    for action in photo._group_actions:
        if action.dest != "overlay":
            e_photo._add_action(action)
    e.add_argument("--debug", action="store_true", help="show the traceback of an error")
    e.set_defaults(command="export", run=_export)

    from ..batch import REPORT_CHOICES

    b = sub.add_parser(
        "batch",
        help="measure a folder of photos and sheets (or a manifest) into one inventory",
        description="Measure every photo and sheet in FOLDER (or every row of MANIFEST.csv) with parallel "
                    "workers, and write into DIR one result JSON, review picture and report per member, "
                    "inventory.csv and index.html. A rerun skips members already measured with the same file "
                    "and settings; a stopped batch goes on where it stopped.",
        epilog=_BATCH_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    b.add_argument("input", metavar="FOLDER|MANIFEST.csv", nargs="?",
                   help="a folder of photos and sheets (a photo's settings in a sidecar STEM.toml beside it), "
                        "or a manifest CSV with the columns path,name,target,scale,known,dpi,seed")
    b.add_argument("--out", required=True, metavar="DIR", help="the output folder (made if missing)")
    b.add_argument("--jobs", type=_jobs, default=None, metavar="N",
                   help=f"worker processes (default: the number of cores, {os.cpu_count() or 1})")
    b.add_argument("--report", choices=REPORT_CHOICES, default="html",
                   help="a report per member as HTML (default) or PDF, or none (faster)")
    b.add_argument("--rebuild", action="store_true",
                   help="only rewrite inventory.csv and index.html in DIR from the records there")
    b_photo = b.add_argument_group("photo options for the whole lot (a sidecar or manifest cell overrides them)")
    for action in photo._group_actions:                # measure's own option objects, as export does
        if action.dest in PHOTO_OPTIONS:
            b_photo._add_action(action)
    b.add_argument("--debug", action="store_true", help="show the traceback of an error")
    b.set_defaults(command="batch", run=_batch)

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


def _add_photo_options(parser: argparse.ArgumentParser) -> argparse._ArgumentGroup:
    """The options of a photo INPUT (shared by measure, compare, fit and check); returns their group."""
    photo = parser.add_argument_group("photo options")
    photo.add_argument("--target", metavar="CxR:SIZE",
                       help="a printed checkerboard in the plane of the cut face: inner corners across x down, "
                            "and the square size, e.g. 6x4:10mm")
    photo.add_argument("--scale", metavar="X1,Y1,X2,Y2=LENGTH",
                       help="two image points (pixels, x right, y down) a known distance apart, e.g. 120,80,1620,95=100mm")
    photo.add_argument("--dpi", type=float, metavar="N", help="the resolution of a flatbed scan")
    photo.add_argument("--known", metavar="depth=LENGTH|width=LENGTH",
                       help="one caliper reading of the member: the scale alone, or a cross-check with a target")
    photo.add_argument("--seed", metavar="X,Y", action="append",
                       help="a point on the member (pixels, x right, y down); repeatable")
    photo.add_argument("--outside", metavar="X,Y", action="append",
                       help="a point on the ground, or on anything that is not the member; repeatable")
    photo.add_argument("--box", metavar="X0,Y0,X1,Y1", help="a rough box round the cut face (pixels)")
    photo.add_argument("--under-bark", action="store_true", default=None,
                       help="trace the wood inside the bark (round timber is taken under bark); by default the "
                            "whole face is traced and the table says where bark was included")
    photo.add_argument("--accept-trace", action="store_true", default=None,
                       help="measure even where the trace check asks for review; the JSON and the table then say "
                            "the trace was accepted unchecked")
    photo.add_argument("--max-tilt", type=float, default=None, metavar="DEG",
                       help="assumed bound of the camera's tilt to the face without a target (default 5)")
    photo.add_argument("--texture", metavar="LENGTH",
                       help="cracks and specks narrower than this are texture (default 2mm)")
    photo.add_argument("--ruler", metavar="auto|X1,Y1,X2,Y2",
                       help="a ruler in view as the scale: auto finds it; or a rough line along it (pixels)")
    photo.add_argument("--pitch", metavar="LENGTH", help="the ruler's graduation: 1mm (default), 1/16in, 1/32in")
    photo.add_argument("--ruler-class", choices=("I", "II", "III"), default=None,
                       help="the rule's accuracy class (default II, common for folding rules and tapes)")
    photo.add_argument("--lens", metavar="FILE", help="the camera's lens profile (tracer calibrate): distortion removed")
    return photo


def _measure(args: argparse.Namespace) -> int:
    from ..errors import InputError
    from ..files import write_atomic, write_atomic_bytes
    from ..result import measure, result_json
    from ..inputs.sheet import sheet_text
    from ..outputs.table import format_table
    from ..uncertainty import DEFAULT_SEED

    if args.report:
        from ..outputs.report import report_format

        report_format(args.report)                     # a bad suffix is refused before any work
    try:
        measurement, pm = _read_measurement(args.input, args, name=getattr(args, "name", None))
    except Exception as e:
        _overlay_of_refused(e, getattr(args, "overlay", None))
        raise
    seed = DEFAULT_SEED if args.random_seed is None else args.random_seed
    result = measure(measurement, align=args.align, draws=args.draws, seed=seed,
                     characteristic=args.characteristic, torsion=args.torsion)
    # Everything is computed before anything is written: an error never leaves a half output.
    outputs: list[tuple[str, str | bytes]] = []
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
    if args.report:
        from ..outputs.report import report_bytes

        outputs.append((args.report, report_bytes(args.report, result, units=args.units, photo=pm,
                                                  characteristic=args.characteristic)))
    overlay = getattr(args, "overlay", None)
    for target in [t for t, _ in outputs] + ([overlay] if overlay else []):
        if not Path(target).parent.is_dir():
            raise InputError(f"{target}: its folder does not exist; create it or choose another path")
    for target, data in outputs:
        if isinstance(data, bytes):
            write_atomic_bytes(target, data)
        else:
            write_atomic(target, data)
    if overlay and pm is not None:
        from ..outputs.overlay import write_overlay

        write_overlay(overlay, pm, result.properties, result.u)
        outputs.append((overlay, ""))

    if args.json == "-":
        sys.stdout.write(doc_text or "")
    else:
        print(format_table(result, units=args.units, budget=args.budget, characteristic=args.characteristic))
        for target, _ in outputs:
            print(f"\n  wrote {target}")
    return 0


def _review(args: argparse.Namespace) -> int:
    from ..errors import InputError
    from ..inputs.photo.sidecar import layer_options
    from ..review.launch import review_sessions
    from ..review.server import start_server

    given = {k: getattr(args, k) for k in _PHOTO_KEYS if getattr(args, k, None) is not None}
    options = layer_options(given, "the command line", Path.cwd())
    out = Path(args.out) if args.out else None
    if out is not None and not out.is_dir():
        raise InputError(f"--out {out}: no such folder; create it first")
    if args.idle <= 0:
        raise InputError(f"--idle {args.idle:g}: give a positive number of minutes")
    sessions, title = review_sessions(args.inputs, options, out)
    server = start_server(sessions, port=args.port, title=title)
    print(server.url, flush=True)
    print(f"  reviewing {len(sessions)} photo(s); Ctrl-C stops the page", flush=True)
    if not args.no_browser:
        import webbrowser

        webbrowser.open(server.url)
    why = server.serve(idle=60.0 * args.idle)
    if why == "idle":
        print(f"  stopped: no request from the page for {args.idle:g} min", flush=True)
    else:
        print("  stopped", flush=True)
    return 0


def _overlay_of_refused(error: Exception, overlay: str | None) -> None:
    """Where the trace check refused a trace and a review picture was asked for, write it, so
    that the person can see what was traced (without uncertainties: none were computed)."""
    from ..inputs.photo.pipeline import TraceNeedsReview

    if not overlay or not isinstance(error, TraceNeedsReview) or not Path(overlay).parent.is_dir():
        return
    from ..outputs.overlay import write_overlay
    from ..section.properties import section_properties

    pm = error.photo_measurement
    write_overlay(overlay, pm, section_properties(pm.measurement.section))
    print(f"  wrote {overlay} (the refused trace, to review)", file=sys.stderr)


def _export(args: argparse.Namespace) -> int:
    from ..errors import InputError
    from ..outputs.export import export_bytes, export_format
    from ..files import write_atomic_bytes
    from ..result import measure
    from ..uncertainty import DEFAULT_SEED

    fmt = export_format(args.to)                       # a bad suffix is refused before any work
    if not Path(args.to).parent.is_dir():
        raise InputError(f"{args.to}: its folder does not exist; create it or choose another path")
    measurement, _ = _read_measurement(args.input, args)
    seed = DEFAULT_SEED if args.random_seed is None else args.random_seed
    result = measure(measurement, align=args.align, draws=args.draws, seed=seed)
    write_atomic_bytes(args.to, export_bytes(fmt, result, units=args.units))
    s = result.measurement.section
    print(f"  wrote {args.to}: {result.name}, {s.n_parts} part(s), {s.n_holes} hole(s), {s.n_vertices} vertices")
    return 0


def _batch(args: argparse.Namespace) -> int:
    from ..batch import PHOTO_OPTIONS, rebuild_inventory, run_batch

    if args.rebuild:
        inventory, index = rebuild_inventory(args.out)
        print(f"  wrote {inventory} and {index}")
        return 0
    if args.input is None:
        from ..errors import InputError

        raise InputError("batch: give a FOLDER or MANIFEST.csv to measure (or --rebuild to rewrite the inventory)")
    defaults = {k: getattr(args, k) for k in PHOTO_OPTIONS if getattr(args, k, None) is not None}
    show = _BatchProgressLine(sys.stderr)
    summary = run_batch(args.input, args.out, defaults=defaults, jobs=args.jobs, report=args.report,
                        progress=show)
    show.close()
    print(f"  {summary.total} members: {summary.done} measured, {summary.skipped} skipped (already measured), "
          f"{summary.failed} failed" + (f", {summary.not_run} not run" if summary.not_run else "")
          + f"; {summary.elapsed:.1f} s")
    print(f"  wrote {summary.inventory} and {summary.index}")
    if summary.interrupted:
        print("tracer: stopped; run the same command again to go on", file=sys.stderr)
        return 130
    if summary.failed:
        print(f"  {summary.failed} failed: see the reason column of {summary.inventory}")
    print("  Section properties for screening only; this is not a design check.")
    return 1 if summary.failed else 0


class _BatchProgressLine:
    """The progress line on stderr: rewritten in place on a terminal, a line now and then elsewhere."""

    _EVERY = 10.0            # seconds between lines when stderr is not a terminal

    def __init__(self, stream) -> None:
        self.stream = stream
        self.tty = stream.isatty()
        self.last = None
        self.width = 0

    def __call__(self, p) -> None:
        import time

        if p.status == "failed":
            self._line(f"  failed: {p.item}: {p.reason}")
        if p.stopping:
            self._line("  stopping: the members in hand are finished, the rest left for a rerun")
        finished = p.done + p.failed
        text = f"  batch: {p.skipped + finished}/{p.total} ({p.done} measured, {p.skipped} skipped, {p.failed} failed)"
        if p.rate:
            text += f", {p.rate:.2f} per s, {_clock(p.remaining)} left"
        now = time.monotonic()
        if self.tty:
            self.stream.write("\r" + text.ljust(self.width))
            self.width = len(text)
            self.stream.flush()
        elif self.last is None or now - self.last >= self._EVERY or p.skipped + finished == p.total:
            self.stream.write(text + "\n")
            self.stream.flush()
            self.last = now

    def _line(self, text: str) -> None:
        if self.tty and self.width:
            self.stream.write("\r" + " " * self.width + "\r")
            self.width = 0
        self.stream.write(text + "\n")

    def close(self) -> None:
        if self.tty and self.width:
            self.stream.write("\n")
            self.width = 0


def _clock(seconds: float | None) -> str:
    if seconds is None:
        return "?"
    s = int(round(seconds))
    return f"{s // 3600}:{s // 60 % 60:02d}:{s % 60:02d}" if s >= 3600 else f"{s // 60}:{s % 60:02d}"


def _jobs(text: str) -> int:
    return _whole_number(text, 1, "give at least 1 worker")


def _read_measurement(input_path: str, args: argparse.Namespace, *, name: str | None = None):
    """INPUT (a sheet or a photo, with the photo options in `args` over those of the photo's
    sidecar) -> (Measurement, PhotoMeasurement or None)."""
    from ..errors import InputError
    from ..inputs.sheet import read_sheet

    path = Path(input_path)
    given = {k: getattr(args, k) for k in _PHOTO_KEYS + ("overlay",) if getattr(args, k, None) is not None}
    if path.suffix.lower() == ".toml":
        if given:
            raise InputError(f"--{next(iter(given)).replace('_', '-')} is a photo option; {path} is a sheet")
        return read_sheet(path), None
    from ..inputs.photo.pipeline import PHOTO_SUFFIXES, measure_photo
    from ..inputs.photo.sidecar import layer_options, merge_options, read_sidecar

    if path.suffix.lower() not in PHOTO_SUFFIXES and not path.exists():
        raise InputError(f"{path}: no such file")
    side, side_name = read_sidecar(path)
    cli = layer_options({k: v for k, v in given.items() if k != "overlay"}, "the command line", Path.cwd())
    kw = merge_options(side, cli)
    pm = measure_photo(path, name=name or side_name, **kw)
    return pm.measurement, pm


#: The photo options the command line passes on (measure_photo keywords).
_PHOTO_KEYS = ("target", "scale", "dpi", "known", "seed", "outside", "box", "max_tilt", "texture", "lens", "ruler",
               "pitch", "ruler_class", "under_bark", "accept_trace")


def _check(args: argparse.Namespace) -> int:
    from ..assess import screen_capacity, screen_json
    from ..assess.tables import format_screen
    from ..assess.materials import load_material
    from ..units import parse_force, parse_length, parse_line_load

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
    from ..assess import compare_json, compare_sections, nominal_input
    from ..assess.tables import format_comparison
    from ..errors import InputError
    from ..assess.tolerances import load_tolerances

    if args.figure and Path(args.figure).suffix.lower() not in (".svg", ".png", ".pdf"):
        raise InputError(f"--figure {args.figure}: write .svg, .png or .pdf")
    nominal = nominal_input(args.nominal)
    tolerances = load_tolerances(args.tolerances)
    measurement, _ = _read_measurement(args.measured, args)
    comparison = compare_sections(measurement, nominal, tolerances=tolerances, torsion_draws=args.torsion_draws,
                                  **_draw_options(args, 1000))
    files = []
    if args.figure:
        from ..assess.figure import loss_map

        files.append((args.figure, loss_map(comparison, Path(args.figure).suffix)))
    return _emit(args, compare_json(comparison), format_comparison(comparison), files)


def _fit(args: argparse.Namespace) -> int:
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
    measurement, _ = _read_measurement(args.input, args)
    opts = _draw_options(args, 100)
    result = fit_shape(measurement, args.kind, nominal=nominal, tolerances=tolerances, **opts)
    return _emit(args, fit_json(result, measurement), format_fit(result, measurement.name))


def _draw_options(args: argparse.Namespace, default: int) -> dict:
    from ..uncertainty import DEFAULT_SEED

    return {"draws": args.draws or default,
            "seed": DEFAULT_SEED if args.random_seed is None else args.random_seed}


def _emit(args: argparse.Namespace, doc: dict, table: str, files: list[tuple[str, bytes]] = ()) -> int:
    """Write the JSON and any other files (all computed already), then print the table or the JSON."""
    from ..errors import InputError
    from ..files import write_atomic_bytes

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
    return _whole_number(text, 2, "at least 2 draws are needed")


def _whole_number(text: str, least: int, why: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if n < least:
        raise argparse.ArgumentTypeError(f"{n}: {why}")
    return n


def _target(args: argparse.Namespace) -> int:
    from ..errors import InputError
    from ..inputs.photo.scale import parse_target
    from ..inputs.photo.target import write_target

    cols, rows, square = parse_target(args.board)
    if not Path(args.out).parent.is_dir():
        raise InputError(f"{args.out}: its folder does not exist; create it or choose another path")
    write_target(args.out, cols, rows, square, paper=args.paper)
    print(f"  wrote {args.out}: {cols} x {rows} inner corners of {square:g} mm; print at 100 % and check that the "
          f"bar measures 100 mm; measure with --target {args.board}")
    return 0


def _calibrate(args: argparse.Namespace) -> int:
    from ..errors import InputError
    from ..files import write_atomic
    from ..inputs.photo.lens import calibrate, profile_json
    from ..inputs.photo.scale import parse_target

    cols, rows, square = parse_target(args.board)
    if not args.out.lower().endswith(".json"):
        raise InputError(f"--out {args.out}: a lens profile is a .json file")
    if not Path(args.out).parent.is_dir():
        raise InputError(f"{args.out}: its folder does not exist; create it or choose another path")
    profile, views = calibrate(args.photos, cols, rows, square)
    write_atomic(args.out, profile_json(profile))
    K = profile.camera_matrix
    print(f"  lens profile from {sum(v.found for v in views)} of {len(views)} photos, "
          f"{profile.image_size[0]} x {profile.image_size[1]} px")
    for v in views:
        print(f"    {Path(v.path).name}: " + (f"reprojection {v.rms_px:.2f} px RMS" if v.found else "board not found, skipped"))
    print(f"  RMS reprojection error {profile.rms_px:.3f} px; focal length {K[0, 0]:.1f} x {K[1, 1]:.1f} px, "
          f"centre ({K[0, 2]:.1f}, {K[1, 2]:.1f}) px; distortion moves the frame's edge by up to "
          f"{profile.max_shift_px():.1f} px")
    print(f"\n  wrote {args.out}; measure with --lens {args.out}")
    return 0


def _demo(args: argparse.Namespace) -> int:
    from ..inputs.photo.renders.samples import sample_names, sample_settings

    names = sample_names()
    if args.list:
        for n in names:
            print(n)
        return 0
    name = args.sample or names[0]
    if name not in names:
        from ..errors import InputError

        raise InputError(f"--sample {name!r} is not a bundled sample; use one of {', '.join(names)}")
    path, settings = sample_settings(name)
    print(f"  demo: {path.name} is a synthetic photo of an invented member; settings from its sidecar: "
          + " ".join(f"--{k.replace('_', '-')} {v}" for k, v in settings.items()))
    ns = _parser().parse_args(["measure", str(path), "--overlay", args.overlay]
                              + (["--report", args.report] if args.report else [])
                              + [x for k, v in settings.items() for x in (f"--{k.replace('_', '-')}", str(v))])
    ns.debug = args.debug
    ns.name = f"{name} (synthetic photo of an invented member)"
    return _measure(ns)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
