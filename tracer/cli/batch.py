"""``tracer batch``: a folder of photos and sheets (or a manifest) into one inventory; its progress line."""

from __future__ import annotations

import argparse
import os
import sys
from typing import Any, TextIO

from .common import add_debug_option, add_photo_options, command_parser, worker_count

__all__ = ["add_parser", "batch_command"]

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


def add_parser(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``tracer batch`` to `sub`, the top parser's subcommands; returns its parser."""
    from ..batch import PHOTO_OPTIONS, REPORT_CHOICES

    b = command_parser(
        sub, "batch",
        help="measure a folder of photos and sheets (or a manifest) into one inventory",
        description="Measure every photo and sheet in FOLDER (or every row of MANIFEST.csv) with parallel "
                    "workers, and write into DIR one result JSON, review picture and report per member, "
                    "inventory.csv and index.html. A rerun skips members already measured with the same file "
                    "and settings; a stopped batch goes on where it stopped.",
        epilog=_BATCH_EPILOG,
    )
    b.add_argument("input", metavar="FOLDER|MANIFEST.csv", nargs="?",
                   help="a folder of photos and sheets (a photo's settings in a sidecar STEM.toml beside it), "
                        "or a manifest CSV with the columns path,name,target,scale,known,dpi,seed")
    b.add_argument("--out", required=True, metavar="DIR", help="the output folder (made if missing)")
    b.add_argument("--jobs", type=worker_count, default=None, metavar="N",
                   help=f"worker processes (default: the number of cores, {os.cpu_count() or 1})")
    b.add_argument("--report", choices=REPORT_CHOICES, default="html",
                   help="a report per member as HTML (default) or PDF, or none (faster)")
    b.add_argument("--rebuild", action="store_true",
                   help="only rewrite inventory.csv and index.html in DIR from the records there")
    add_photo_options(b, "photo options for the whole lot (a sidecar or manifest cell overrides them)",
                      only=PHOTO_OPTIONS)
    add_debug_option(b)
    b.set_defaults(command="batch", run=batch_command)
    return b


def batch_command(args: argparse.Namespace) -> int:
    """Run ``tracer batch``: measure the lot (or only rebuild the inventory), drawing the progress line;
    returns the exit status."""
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

    def __init__(self, stream: TextIO) -> None:
        self.stream = stream
        self.tty = stream.isatty()
        self.last = None
        self.width = 0

    def __call__(self, p: Any) -> None:
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
