"""What the commands share: the photo and assessment option groups, reading INPUT into a
Measurement, writing and printing what a command made, and the argument type functions."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any, Collection

__all__ = ["PHOTO_KEYS", "add_photo_options", "add_assess_options", "add_debug_option", "command_parser",
           "read_measurement", "draw_options", "emit", "check_folder", "positive_int", "worker_count",
           "whole_number"]

#: The photo options the command line passes on (measure_photo keywords).
PHOTO_KEYS = ("target", "scale", "dpi", "known", "seed", "outside", "box", "max_tilt", "texture", "lens", "ruler",
              "pitch", "ruler_class", "under_bark", "accept_trace")


def add_photo_options(parser: argparse.ArgumentParser, title: str = "photo options", *,
                      only: Collection[str] | None = None) -> argparse._ArgumentGroup:
    """Add the options of a photo INPUT as one group, declared here once for every command.

    Parameters
    ----------
    parser : argparse.ArgumentParser
        The command's parser.
    title : str
        The group's heading in the help.
    only : collection of str, optional
        Add only the options with these destinations (e.g. the sidecar's ``PHOTO_OPTIONS``);
        default all of them, in the same order either way.

    Returns
    -------
    argparse._ArgumentGroup
        The group.
    """
    photo = parser.add_argument_group(title)
    for flag, kwargs in _PHOTO_OPTION_SPECS:
        if only is None or flag[2:].replace("-", "_") in only:
            photo.add_argument(flag, **kwargs)
    return photo


#: The photo options in the order of the help: (flag, add_argument keywords).
_PHOTO_OPTION_SPECS: tuple[tuple[str, dict[str, Any]], ...] = (
    ("--target", dict(metavar="CxR:SIZE",
                      help="a printed checkerboard in the plane of the cut face: inner corners across x down, "
                           "and the square size, e.g. 6x4:10mm")),
    ("--scale", dict(metavar="X1,Y1,X2,Y2=LENGTH",
                     help="two image points (pixels, x right, y down) a known distance apart, e.g. 120,80,1620,95=100mm")),
    ("--dpi", dict(type=float, metavar="N", help="the resolution of a flatbed scan")),
    ("--known", dict(metavar="depth=LENGTH|width=LENGTH",
                     help="one caliper reading of the member: the scale alone, or a cross-check with a target")),
    ("--seed", dict(metavar="X,Y", action="append",
                    help="a point on the member (pixels, x right, y down); repeatable")),
    ("--outside", dict(metavar="X,Y", action="append",
                       help="a point on the ground, or on anything that is not the member; repeatable")),
    ("--box", dict(metavar="X0,Y0,X1,Y1", help="a rough box round the cut face (pixels)")),
    ("--under-bark", dict(action="store_true", default=None,
                          help="trace the wood inside the bark (round timber is taken under bark); by default the "
                               "whole face is traced and the table says where bark was included")),
    ("--accept-trace", dict(action="store_true", default=None,
                            help="measure even where the trace check asks for review; the JSON and the table then say "
                                 "the trace was accepted unchecked")),
    ("--max-tilt", dict(type=float, default=None, metavar="DEG",
                        help="assumed bound of the camera's tilt to the face without a target (default 5)")),
    ("--texture", dict(metavar="LENGTH",
                       help="cracks and specks narrower than this are texture (default 2mm)")),
    ("--ruler", dict(metavar="auto|X1,Y1,X2,Y2",
                     help="a ruler in view as the scale: auto finds it; or a rough line along it (pixels)")),
    ("--pitch", dict(metavar="LENGTH", help="the ruler's graduation: 1mm (default), 1/16in, 1/32in")),
    ("--ruler-class", dict(choices=("I", "II", "III"), default=None,
                           help="the rule's accuracy class (default II, common for folding rules and tapes)")),
    ("--lens", dict(metavar="FILE", help="the camera's lens profile (tracer calibrate): distortion removed")),
)


def add_debug_option(parser: argparse.ArgumentParser) -> None:
    """Add ``--debug`` (show the traceback of an error), which every command takes, to `parser`."""
    parser.add_argument("--debug", action="store_true", help="show the traceback of an error")


def command_parser(sub: argparse._SubParsersAction, name: str, *, help: str, description: str,
                   epilog: str | None = None) -> argparse.ArgumentParser:
    """Add a command's parser to `sub`, the top parser's subcommands; its description and examples
    (`epilog`) are printed as written.

    Parameters
    ----------
    sub : argparse._SubParsersAction
        The top parser's subcommands.
    name, help, description, epilog : str
        The command's name, one-line help, description and examples.

    Returns
    -------
    argparse.ArgumentParser
        The command's parser.
    """
    return sub.add_parser(name, help=help, description=description, epilog=epilog,
                          formatter_class=argparse.RawDescriptionHelpFormatter)


def add_assess_options(parser: argparse.ArgumentParser) -> None:
    """Add --json, the Monte Carlo settings, the photo options and --debug of compare, fit and check.

    Parameters
    ----------
    parser : argparse.ArgumentParser
        The command's parser.
    """
    parser.add_argument("--json", metavar="PATH", help="write the JSON to PATH, or to standard output with -")
    parser.add_argument("--draws", type=positive_int, metavar="N",
                        help="Monte Carlo draws of the measured section")
    parser.add_argument("--random-seed", type=int, default=None, metavar="N", help="seed of the Monte Carlo draws")
    add_photo_options(parser)
    add_debug_option(parser)


def read_measurement(input_path: str, args: argparse.Namespace, *, name: str | None = None) -> tuple[Any, Any]:
    """Read INPUT (a sheet, or a photo with the photo options in `args` over those of its sidecar).

    Parameters
    ----------
    input_path : str
        A section sheet (.toml) or a photo.
    args : argparse.Namespace
        The parsed command line; its photo options (and ``overlay``) are read where present.
    name : str, optional
        The member's name, over the sidecar's.

    Returns
    -------
    tuple
        (Measurement, PhotoMeasurement or None for a sheet).

    Raises
    ------
    InputError
        A photo option given with a sheet, or a file that does not exist.
    """
    from ..errors import InputError
    from ..inputs.sheet import read_sheet

    path = Path(input_path)
    given = {k: getattr(args, k) for k in PHOTO_KEYS + ("overlay",) if getattr(args, k, None) is not None}
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


def draw_options(args: argparse.Namespace, default: int) -> dict[str, int]:
    """The Monte Carlo keywords of an assessment: ``draws`` (`default` unless given) and ``seed``.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line (``draws``, ``random_seed``).
    default : int
        The number of draws when --draws is not given.

    Returns
    -------
    dict
        ``{"draws": ..., "seed": ...}``.
    """
    from ..uncertainty import DEFAULT_SEED

    return {"draws": args.draws or default,
            "seed": DEFAULT_SEED if args.random_seed is None else args.random_seed}


def emit(args: argparse.Namespace, doc: dict, table: str, files: list[tuple[str, bytes]] = ()) -> int:
    """Write the JSON and any other files (all computed already), then print the table or the JSON.

    Parameters
    ----------
    args : argparse.Namespace
        The parsed command line (``json``: a path, ``-`` for standard output, or None).
    doc : dict
        The JSON document.
    table : str
        The plain-text table, printed unless the JSON goes to standard output.
    files : list of (str, bytes)
        Other files to write: path and content.

    Returns
    -------
    int
        The exit status, 0.

    Raises
    ------
    InputError
        The folder of a file to write does not exist (checked before anything is written).
    """
    from ..files import write_atomic_bytes

    doc_text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
    outputs = list(files)
    if args.json not in (None, "-"):
        outputs.insert(0, (args.json, doc_text.encode("utf-8")))
    for target, _ in outputs:
        check_folder(target)
    for target, data in outputs:
        write_atomic_bytes(target, data)
    if args.json == "-":
        sys.stdout.write(doc_text)
    else:
        print(table)
        for target, _ in outputs:
            print(f"\n  wrote {target}")
    return 0


def check_folder(target: str) -> None:
    """Refuse a file to write whose folder does not exist.

    Parameters
    ----------
    target : str
        The path of the file to write.

    Raises
    ------
    InputError
        Its folder does not exist.
    """
    from ..errors import InputError

    if not Path(target).parent.is_dir():
        raise InputError(f"{target}: its folder does not exist; create it or choose another path")


def positive_int(text: str) -> int:
    """The argument type of --draws: a whole number, at least 2 (else an argparse error)."""
    return whole_number(text, 2, "at least 2 draws are needed")


def worker_count(text: str) -> int:
    """The argument type of --jobs: a whole number, at least 1 (else an argparse error)."""
    return whole_number(text, 1, "give at least 1 worker")


def whole_number(text: str, least: int, why: str) -> int:
    """A whole number of at least `least`; else an argparse error that says `why`.

    Parameters
    ----------
    text : str
        The argument as given.
    least : int
        The smallest number taken.
    why : str
        Why a smaller one is refused, for the message.

    Returns
    -------
    int
        The number.

    Raises
    ------
    argparse.ArgumentTypeError
        Not a whole number, or less than `least`.
    """
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if n < least:
        raise argparse.ArgumentTypeError(f"{n}: {why}")
    return n
