"""``tracer target`` and ``tracer calibrate``: the printed checkerboard, and a lens profile from photos of it."""

from __future__ import annotations

import argparse
from pathlib import Path

from .common import add_debug_option, check_folder, command_parser

__all__ = ["add_parser", "target_command", "calibrate_command"]


def add_parser(sub: argparse._SubParsersAction) -> None:
    """Add ``tracer target`` and ``tracer calibrate``, in that order, to `sub`, the top parser's subcommands."""
    t = command_parser(
        sub, "target",
        help="write a printable, true-scale checkerboard target with a 100 mm check bar",
        description="Write a checkerboard target to print at 100 %, as SVG or PDF by the file's suffix. "
                    "Measure the printed check bar: it must be 100 mm.",
        epilog="examples:\n  tracer target --out target.pdf\n  tracer target --board 6x4:15mm --out small.svg",
    )
    t.add_argument("--out", required=True, metavar="FILE.svg|FILE.pdf", help="where to write the target")
    t.add_argument("--board", default="9x6:20mm", metavar="CxR:SIZE",
                   help="inner corners across x down and the square size (default 9x6:20mm)")
    t.add_argument("--paper", default="a4", choices=("a4", "letter"), help="paper, landscape (default a4)")
    add_debug_option(t)
    t.set_defaults(command="target", run=target_command)

    c = command_parser(
        sub, "calibrate",
        help="build a lens profile from photos of a checkerboard",
        description="Find the checkerboard in each photo and fit the camera's focal length, centre and lens "
                    "distortion; write them as a lens profile for tracer measure --lens. Take 6 to 15 photos "
                    "with the same camera and zoom, the board flat and tilted 20 to 40 degrees a different way "
                    "in each, reaching into the corners of the frame.",
        epilog="example:\n  tracer calibrate cal/*.jpg --board 9x6:20mm --out calib/phone.json\n"
               "  tracer measure beam.jpg --target 6x4:10mm --lens calib/phone.json",
    )
    c.add_argument("photos", nargs="+", metavar="PHOTO", help="photos of the board")
    c.add_argument("--board", required=True, metavar="CxR:SIZE",
                   help="the board's inner corners across x down and square size, e.g. 9x6:20mm")
    c.add_argument("--out", required=True, metavar="FILE.json", help="where to write the lens profile")
    add_debug_option(c)
    c.set_defaults(command="calibrate", run=calibrate_command)


def target_command(args: argparse.Namespace) -> int:
    """Run ``tracer target``: write the checkerboard of --board to --out; returns the exit status."""
    from ..inputs.photo.scale import parse_target
    from ..inputs.photo.target import write_target

    cols, rows, square = parse_target(args.board)
    check_folder(args.out)
    write_target(args.out, cols, rows, square, paper=args.paper)
    print(f"  wrote {args.out}: {cols} x {rows} inner corners of {square:g} mm; print at 100 % and check that the "
          f"bar measures 100 mm; measure with --target {args.board}")
    return 0


def calibrate_command(args: argparse.Namespace) -> int:
    """Run ``tracer calibrate``: fit the lens profile to the photos and write it to --out; returns the exit
    status."""
    from ..errors import InputError
    from ..files import write_atomic
    from ..inputs.photo.lens import calibrate, profile_json
    from ..inputs.photo.scale import parse_target

    cols, rows, square = parse_target(args.board)
    if not args.out.lower().endswith(".json"):
        raise InputError(f"--out {args.out}: a lens profile is a .json file")
    check_folder(args.out)
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
