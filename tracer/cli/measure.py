"""``tracer measure``: the section properties of a sheet or a photo, as a table, JSON, sheet, report."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from .common import add_debug_option, add_photo_options, check_folder, command_parser, positive_int, read_measurement

__all__ = ["add_parser", "measure_command"]

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


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer measure`` to `sub`, the top parser's subcommands; returns its parser."""
    m = command_parser(
        sub, "measure",
        help="section properties of a section sheet or a photo of the cut end",
        description="Compute area, centroid, second moments, principal axes, elastic and plastic "
                    "moduli of the section in INPUT and print them as a table.",
        epilog=_MEASURE_EPILOG,
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
    m.add_argument("--draws", type=positive_int, metavar="N",
                   help="a fixed number of Monte Carlo draws (default: adaptive, JCGM 101 7.9; "
                        "200 for the torsion properties)")
    m.add_argument("--random-seed", type=int, default=None, metavar="N",
                   help="seed of the Monte Carlo draws (default fixed, so reruns print the same numbers)")
    add_photo_options(m)
    m.add_argument("--overlay", metavar="PATH.png", help="write the review picture of the trace")
    add_debug_option(m)
    m.set_defaults(command="measure", run=measure_command)
    return m


def measure_command(args: argparse.Namespace) -> int:
    """Run ``tracer measure``: measure INPUT, write the files asked for, print the table or JSON; returns
    the exit status."""
    from ..files import write_atomic, write_atomic_bytes
    from ..result import measure, result_json
    from ..inputs.sheet import sheet_text
    from ..outputs.table import format_table
    from ..uncertainty import DEFAULT_SEED

    if args.report:
        from ..outputs.report import report_format

        report_format(args.report)                     # a bad suffix is refused before any work
    try:
        measurement, pm = read_measurement(args.input, args, name=getattr(args, "name", None))
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
        check_folder(target)
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
