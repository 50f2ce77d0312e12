"""The ``tracer`` command: the top parser built from the command modules, and the dispatch.

Exit status (DESIGN.md): 0 done; 1 the input was readable but the job could not be done;
2 bad usage or unreadable input. Errors are one or two plain lines; ``--debug`` shows the
traceback.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path
from typing import Sequence

from .._version import __version__
from . import batch, check, checkerboard, compare, demo, export, fit, measure, review

__all__ = ["main", "build_parser"]

#: The command modules, in the order the help lists their commands (checkerboard: target, calibrate).
_COMMANDS = (measure, review, demo, checkerboard, export, batch, check, compare, fit)

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


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status.

    Parameters
    ----------
    argv : sequence of str, optional
        The arguments (default: ``sys.argv[1:]``).

    Returns
    -------
    int
        0 done; 1 the input was readable but the job could not be done; 2 bad usage or
        unreadable input; 130 stopped.
    """
    parser = build_parser()
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


def build_parser() -> argparse.ArgumentParser:
    """The top parser, with every command's subparser added by its module.

    Returns
    -------
    argparse.ArgumentParser
        The parser; each command sets ``command`` and ``run`` (its handler).
    """
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
    for command in _COMMANDS:
        command.add_parser(sub)
    return parser


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
