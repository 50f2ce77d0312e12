"""``tracer review``: a local page to check and correct photo traces, and save what reproduces them."""

from __future__ import annotations

import argparse
from pathlib import Path

from .common import PHOTO_KEYS, add_debug_option, add_photo_options, command_parser

__all__ = ["add_parser", "review_command"]

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


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer review`` to `sub`, the top parser's subcommands; returns its parser."""
    r = command_parser(
        sub, "review",
        help="check and correct photo traces on a local page, and save what reproduces them",
        description="Open a local page (127.0.0.1 only) showing each PHOTO with its trace, scale reference, trace "
                    "check and A, I1, I2 with U. Click on the member, on the ground, drag a box, place two scale "
                    "points, move the boundary's vertices; each change measures again. Save writes the photo's "
                    "sidecar STEM.toml (so that tracer measure and tracer batch reproduce the trace), its result "
                    "JSON and its report. Given a batch output folder, it walks the members that failed or need "
                    "review, and saving one reruns its record and the inventory.",
        epilog=_REVIEW_EPILOG,
    )
    r.add_argument("inputs", metavar="PHOTO", nargs="+", help="photos of cut ends, or one batch output folder")
    r.add_argument("--no-browser", action="store_true", help="print the address only; do not open a browser")
    r.add_argument("--out", metavar="DIR", help="save sidecars, result JSON and reports here (default: beside each photo)")
    r.add_argument("--port", type=int, default=0, metavar="N", help="listen on this port (default: a free one)")
    r.add_argument("--idle", type=float, default=30.0, metavar="MINUTES",
                   help="stop after this long without a request from the page (default 30)")
    from ..inputs.photo.sidecar import PHOTO_OPTIONS

    add_photo_options(r, "photo options (over each photo's sidecar; the page can change them)", only=PHOTO_OPTIONS)
    add_debug_option(r)
    r.set_defaults(command="review", run=review_command)
    return r


def review_command(args: argparse.Namespace) -> int:
    """Run ``tracer review``: serve the page, print its address, wait until stopped; returns the exit status."""
    from ..errors import InputError
    from ..inputs.photo.sidecar import layer_options
    from ..review.launch import review_sessions
    from ..review.server import start_server

    given = {k: getattr(args, k) for k in PHOTO_KEYS if getattr(args, k, None) is not None}
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
