"""The worker processes of a batch: the pool, each worker's start, and measuring one item and writing
its files (the review picture, the report, the thumbnail, then the result JSON; or its failure record).
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import sys
from dataclasses import replace
from pathlib import Path
from typing import Any, Callable, Iterator

from ..errors import InputError, TracerError
from ..files import write_atomic, write_atomic_bytes
from .plan import THUMBS, BatchItem
from .records import batch_record, failure_record, remove_stale

__all__ = ["THUMB_SIDE", "WorkerDied", "measure_all", "measure_item"]

THUMB_SIDE = 160                                    # px, longest side of a thumbnail


class WorkerDied(Exception):
    """A worker process died (killed, out of memory): the pool is broken."""


def measure_all(todo: list[BatchItem], out: Path, report: str, jobs: int,
                on_stop: Callable[[], None]) -> Iterator[dict]:
    """Each item's outcome (``name``, ``status``, ``reason``), as its worker finishes it.

    Raises
    ------
    WorkerDied
        A worker process died; the items not finished are left for a rerun.
    """
    if not todo:
        return
    import concurrent.futures as cf
    import multiprocessing

    # Each worker computes on one thread: two workers on two cores, not two times many threads.
    # The variables must be set before a worker imports numpy (spawned workers start afresh).
    threads = {v: "1" for v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")}
    saved = {v: os.environ.get(v) for v in threads}
    os.environ.update(threads)
    pool = cf.ProcessPoolExecutor(max_workers=min(jobs, len(todo)), mp_context=multiprocessing.get_context("spawn"),
                                  initializer=_worker_start, initargs=(os.getpid(),))
    try:
        futures = [pool.submit(measure_item, it, out, report) for it in todo]
        for future in cf.as_completed(futures):
            try:
                yield future.result()
            except cf.process.BrokenProcessPool as e:
                raise WorkerDied(str(e) or "broken process pool") from None
    except KeyboardInterrupt:
        on_stop()
        # The items in hand are finished (their files are whole); the rest wait for a rerun.
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
        for v, old in saved.items():
            if old is None:
                os.environ.pop(v, None)
            else:
                os.environ[v] = old


def _worker_start(parent: int) -> None:
    """Set up a worker: one thread for OpenCV, Ctrl-C left to the parent, gone with the parent, and
    gone at once when the pool is done with it."""
    import atexit
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    with contextlib.suppress(Exception):               # Linux: die with the parent (a killed batch)
        import ctypes

        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGKILL)     # PR_SET_PDEATHSIG
    if os.getppid() != parent:                         # the parent died before the line above
        os._exit(1)
    import cv2

    cv2.setNumThreads(1)
    # The interpreter exits only after the pool's last call: every item's files are whole and its
    # answer sent. Tearing down numpy, OpenCV and matplotlib took about 0.1 s that the whole batch
    # waited for at its end; a worker ends without it.
    atexit.register(_end_now)


def _end_now() -> None:
    for stream in (sys.stdout, sys.stderr):
        with contextlib.suppress(Exception):
            stream.flush()
    os._exit(0)


def measure_item(item: BatchItem, out: Path, report: str) -> dict:
    """Measure one item and write its files; a fault becomes its failure record. Runs in a worker.

    Returns
    -------
    dict
        ``name``, ``status`` ("done" or "failed") and, for a failure, its one-line ``reason``.
    """
    try:
        written = _write_result(item, out, report)
        remove_stale(out, item.name, keep=written)
        return {"name": item.name, "status": "done"}
    except TracerError as e:
        reason, retry = str(e), False
    except Exception as e:  # noqa: BLE001 - one bad item must not stop the batch
        reason, retry = f"internal error: {type(e).__name__}: {e}", True
    reason = " ".join(reason.split())                  # one line
    failed = f"{item.name}.failed.json"
    write_atomic(out / failed, json.dumps(failure_record(item, reason, retry), indent=2, ensure_ascii=False) + "\n")
    remove_stale(out, item.name, keep=[failed])
    return {"name": item.name, "status": "failed", "reason": reason}


def _write_result(item: BatchItem, out: Path, report: str) -> list[str]:
    """Measure `item`, write its picture, report and thumbnail, then its result JSON; the names."""
    from ..result import measure, result_json

    if item.error is not None:
        raise InputError(item.error)
    pm = None
    if item.kind == "sheet":
        from ..inputs.sheet import read_sheet

        measurement = read_sheet(item.path)
        if item.label:
            measurement = replace(measurement, name=item.label)
    else:
        from ..inputs.photo.pipeline import measure_photo

        pm = measure_photo(item.path, name=item.label, **item.settings)
        measurement = pm.measurement
    result = measure(measurement)
    files: list[tuple[str, bytes]] = []
    if pm is not None:
        from ..outputs.overlay import overlay_bytes

        files.append((f"{item.name}.png", overlay_bytes(pm, result.properties, result.u)))
        thumb = overlay_bytes(pm, result.properties, result.u, ext=".jpg", max_side=THUMB_SIDE)
    else:
        thumb = _section_thumbnail(result.measurement.section)
    files.append((f"{THUMBS}/{item.name}.jpg", thumb))
    if report != "none":
        from ..outputs.report import report_bytes

        name = f"{item.name}.{report}"
        files.append((name, report_bytes(name, result, photo=pm)))
    doc = result_json(result)
    doc["batch"] = batch_record(item, [n for n, _ in files])
    # The result JSON goes last: where it holds the key, every file it lists is whole.
    files.append((f"{item.name}.json", (json.dumps(doc, indent=2, ensure_ascii=False) + "\n").encode("utf-8")))
    for name, data in files:
        write_atomic_bytes(out / name, data)
    return [n for n, _ in files]


def _section_thumbnail(section: Any) -> bytes:
    """A small JPEG of the section's shape (material grey, outline dark, y up)."""
    import cv2
    import numpy as np

    x0, y0, x1, y1 = section.bounds
    s = (THUMB_SIDE - 12) / max(x1 - x0, y1 - y0)
    w, h = int(math.ceil((x1 - x0) * s)) + 12, int(math.ceil((y1 - y0) * s)) + 12
    img = np.full((h, w, 3), 255, np.uint8)
    for ring, hole in section.rings():
        px = np.column_stack([(ring[:, 0] - x0) * s + 6, (y1 - ring[:, 1]) * s + 6])
        pts = np.round(px * 16).astype(np.int32).reshape(-1, 1, 2)
        cv2.fillPoly(img, [pts], (255, 255, 255) if hole else (218, 209, 200), cv2.LINE_AA, shift=4)
        cv2.polylines(img, [pts], True, (56, 43, 29), 1, cv2.LINE_AA, shift=4)
    ok, buf = cv2.imencode(".jpg", img, [cv2.IMWRITE_JPEG_QUALITY, 85])
    if not ok:
        raise OSError("the section thumbnail could not be encoded")
    return buf.tobytes()
