"""Many members at once: a folder of photos and sheets, or a manifest, to one inventory.

A batch is planned, run and summed up:

1. :func:`~tracer.batch.plan.plan_batch` lists the items (photos and sheets in a folder, or the rows of
   a manifest CSV), gives each a unique, filesystem-safe name and its effective settings (the lot's
   defaults, then the photo's sidecar TOML, then the manifest's cells), and a key: the SHA-256 of
   the input file, the settings and the tool's version.
2. :func:`run_batch` measures every item whose result is not already in the output folder under
   the same key, in worker processes (:mod:`~tracer.batch.workers`), and each item's files are
   written atomically: the review picture ``NAME.png`` (photos), the report ``NAME.html`` (or
   ``.pdf``), a thumbnail, and last the result JSON ``NAME.json`` (schema ``tracer/result/1`` with a
   ``batch`` record holding the key). A bad item leaves a failure record ``NAME.failed.json`` with
   its reason and the batch goes on (:mod:`~tracer.batch.records`).
3. :func:`~tracer.batch.inventory.rebuild_inventory` writes ``inventory.csv``, ``index.html`` and
   ``README.txt`` from those per-item records and the plan (``batch.json``); it runs at the end of
   every run and can run at any time, so a batch stopped at any moment loses no row and doubles
   none after a rerun.

Nothing here prints: progress goes to a callback the caller gives.
"""

from __future__ import annotations

import contextlib
import json
import os
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterator

from ..errors import InputError, MeasurementError
from ..files import write_atomic
from .inventory import rebuild
from .plan import PLAN_FILE, REPORT_CHOICES, THUMBS, plan_batch, plan_json, read_plan
from .records import is_current
from .workers import WorkerDied, measure_all

__all__ = ["BatchProgress", "BatchSummary", "run_batch", "rerun"]


@dataclass(frozen=True)
class BatchProgress:
    """Where a running batch stands, given to the progress callback after each item.

    ``rate`` is items measured (done or failed) per second of this run; ``remaining`` the
    seconds left at that rate (None before the first item). ``item``, ``status`` and
    ``reason`` describe the item just finished; ``stopping`` is set once a stop was asked for.
    """

    total: int
    done: int
    skipped: int
    failed: int
    elapsed: float
    rate: float | None = None
    remaining: float | None = None
    item: str | None = None
    status: str | None = None
    reason: str | None = None
    stopping: bool = False


@dataclass(frozen=True)
class BatchSummary:
    """What a run did: items measured (done), skipped (already there), failed, not run."""

    total: int
    done: int
    skipped: int
    failed: int
    not_run: int
    elapsed: float
    interrupted: bool
    out: Path
    inventory: Path
    index: Path


def run_batch(source: str | Path, out: str | Path, *, defaults: dict[str, Any] | None = None,
              jobs: int | None = None, report: str = "html",
              progress: Callable[[BatchProgress], None] | None = None) -> BatchSummary:
    """Measure every item of `source` not yet measured into `out`; rebuild the inventory.

    Parameters
    ----------
    source : str or Path
        A folder or a manifest (see :func:`plan_batch`).
    out : str or Path
        The output folder (made if missing). One batch at a time may write into it.
    defaults : dict, optional
        Photo options for the whole lot.
    jobs : int, optional
        Worker processes (default: the number of cores).
    report : {"html", "pdf", "none"}
        The report written per item.
    progress : callable, optional
        Called with a :class:`BatchProgress` after each item and when a stop is asked for.

    Returns
    -------
    BatchSummary
        ``interrupted`` is set when a KeyboardInterrupt stopped the run: the items running then
        were finished, the others left for a rerun, and the inventory rebuilt all the same.

    Raises
    ------
    InputError
        Bad source, defaults, report choice or output folder; another batch writing into `out`.
    MeasurementError
        A worker process died (the items not finished are left for a rerun).
    """
    if report not in REPORT_CHOICES:
        raise InputError(f"--report {report!r}: use one of {', '.join(REPORT_CHOICES)}")
    jobs = (os.cpu_count() or 1) if jobs is None else jobs
    if jobs < 1:
        raise InputError(f"--jobs {jobs}: give at least 1")
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out {out}: is a file; give a folder")
    items = plan_batch(source, defaults=defaults, out=out)
    try:
        (out / THUMBS).mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise InputError(f"--out {out}: cannot be made ({e.strerror})") from None
    t0 = time.perf_counter()
    with _lock(out):
        _remove_temporaries(out)
        write_atomic(out / PLAN_FILE, json.dumps(plan_json(source, defaults, report, items), indent=2,
                                                 ensure_ascii=False) + "\n")
        todo = [it for it in items if not is_current(it, out, report)]
        counts = {"done": 0, "failed": 0}
        skipped = len(items) - len(todo)
        interrupted = False
        broken = None

        def tell(**kw: Any) -> None:
            if progress is None:
                return
            elapsed = time.perf_counter() - t0
            finished = counts["done"] + counts["failed"]
            rate = finished / elapsed if finished and elapsed > 0 else None
            left = len(todo) - finished
            progress(BatchProgress(total=len(items), done=counts["done"], skipped=skipped, failed=counts["failed"],
                                   elapsed=elapsed, rate=rate, remaining=left / rate if rate else None, **kw))

        tell()
        try:
            for record in measure_all(todo, out, report, jobs, lambda: tell(stopping=True)):
                counts[record["status"]] += 1
                tell(item=record["name"], status=record["status"], reason=record.get("reason"))
        except KeyboardInterrupt:
            interrupted = True
        except WorkerDied as e:
            broken = e
        finally:
            inventory, index, rows = rebuild(out)
    if broken is not None:
        raise MeasurementError(f"a worker process died ({broken}); the items measured so far are kept: rerun the "
                               "same command to go on (fewer --jobs if memory is short)")
    # Counted from the records: after a stop, the items in hand were finished all the same.
    ran = {it.name for it in todo}
    status = [r["status"] for r in rows if r["name"] in ran]
    return BatchSummary(total=len(items), done=status.count("done"), skipped=skipped, failed=status.count("failed"),
                        not_run=status.count("not run"), elapsed=time.perf_counter() - t0, interrupted=interrupted,
                        out=out, inventory=inventory, index=index)


def rerun(out: str | Path) -> BatchSummary:
    """Run the batch of `out` again as it was run (its source, defaults and report), one worker:
    the members whose file or settings changed are measured again, and the inventory rebuilt."""
    source, plan, _ = read_plan(out)
    return run_batch(source, out, defaults=plan["defaults"], jobs=1, report=plan["report"])


@contextlib.contextmanager
def _lock(out: Path) -> Iterator[None]:
    """Hold ``out/.lock``: one batch at a time writes into a folder (released when a process dies)."""
    try:
        import fcntl
    except ImportError:                                # no advisory locks here (Windows): go on
        yield
        return
    with open(out / ".lock", "a+") as f:
        try:
            fcntl.flock(f.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            raise InputError(f"--out {out}: another tracer batch is writing into this folder; wait for it or "
                             "choose another folder") from None
        yield


def _remove_temporaries(out: Path) -> None:
    """Temporary files a killed run left (see :func:`tracer.files.write_atomic_bytes`)."""
    for folder in (out, out / THUMBS):
        for p in folder.glob(".*.tmp"):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()
