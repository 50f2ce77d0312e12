"""``tracer demo``: measure a bundled sample photo, as tracer measure would, with its sidecar's settings."""

from __future__ import annotations

import argparse

from .common import add_debug_option, command_parser
from .measure import measure_command

__all__ = ["add_parser", "demo_command"]


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer demo`` to `sub`, the top parser's subcommands; returns its parser."""
    d = command_parser(
        sub, "demo",
        help="measure a bundled sample photo (synthetic) and write its review picture",
        description="Measure one of the bundled sample photos (synthetic renders of invented members) with "
                    "the settings of its sidecar file, print the table and write the review picture.",
    )
    d.add_argument("--sample", default=None, metavar="NAME", help="which sample (default: the first); --list shows them")
    d.add_argument("--list", action="store_true", help="list the samples")
    d.add_argument("--overlay", default="tracer-demo-overlay.png", metavar="PATH.png",
                   help="where to write the review picture (default tracer-demo-overlay.png)")
    d.add_argument("--report", metavar="FILE.html|FILE.pdf", help="also write the report for the assessment file")
    add_debug_option(d)
    d.set_defaults(command="demo", run=demo_command)
    return d


def demo_command(args: argparse.Namespace) -> int:
    """Run ``tracer demo``: list the samples, or measure one through ``tracer measure``'s own parser;
    returns the exit status."""
    from ..inputs.photo.renders.samples import sample_names, sample_settings
    from .main import build_parser             # here, not above: main imports this module

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
    ns = build_parser().parse_args(["measure", str(path), "--overlay", args.overlay]
                                   + (["--report", args.report] if args.report else [])
                                   + [x for k, v in settings.items() for x in (f"--{k.replace('_', '-')}", str(v))])
    ns.debug = args.debug
    ns.name = f"{name} (synthetic photo of an invented member)"
    return measure_command(ns)
