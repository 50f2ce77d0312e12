"""Many members at once: a folder of photos and sheets, or a manifest, to one inventory.

A batch is planned, run and summed up:

1. :func:`plan_batch` lists the items (photos and sheets in a folder, or the rows of a manifest
   CSV), gives each a unique, filesystem-safe name and its effective settings (the lot's
   defaults, then the photo's sidecar TOML, then the manifest's cells), and a key: the SHA-256 of
   the input file, the settings and the tool's version.
2. :func:`run_batch` measures every item whose result is not already in the output folder under
   the same key, in worker processes, and writes each item's files atomically: the review picture
   ``NAME.png`` (photos), the report ``NAME.html`` (or ``.pdf``), a thumbnail, and last the result
   JSON ``NAME.json`` (schema ``tracer/result/1`` with a ``batch`` record holding the key). A bad
   item leaves a failure record ``NAME.failed.json`` with its reason and the batch goes on.
3. :func:`rebuild_inventory` writes ``inventory.csv`` and ``index.html`` from those per-item
   records and the plan (``batch.json``); it runs at the end of every run and can run at any
   time, so a batch stopped at any moment loses no row and doubles none after a rerun.

Nothing here prints: progress goes to a callback the caller gives.
"""

from __future__ import annotations

import base64
import contextlib
import csv
import html
import io
import json
import math
import os
import re
import time
import unicodedata
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Callable, Iterator

from .._version import __version__
from ..errors import InputError, MeasurementError, TracerError
from ..files import write_atomic, write_atomic_bytes
from ..inputs.photo.sidecar import PHOTO_OPTIONS, PhotoOption
from ..inputs.photo.sidecar import layer_options as _layer
from ..inputs.photo.sidecar import merge_options as _merge
from ..inputs.photo.sidecar import read_sidecar as _sidecar

__all__ = ["PhotoOption", "PHOTO_OPTIONS", "MANIFEST_COLUMNS", "REPORT_CHOICES", "INVENTORY_KEYS", "BatchItem",
           "BatchProgress", "BatchSummary", "plan_batch", "run_batch", "rebuild_inventory", "safe_name", "read_plan",
           "to_review", "rerun"]


#: The manifest's columns: ``path`` (required), ``name``, and any photo option.
MANIFEST_COLUMNS: tuple[str, ...] = ("path", "name", *PHOTO_OPTIONS)

#: ``--report`` choices: a report per item as HTML or PDF, or none (faster).
REPORT_CHOICES: tuple[str, ...] = ("html", "pdf", "none")

#: The properties in the inventory, each with its u, in this order.
INVENTORY_KEYS: tuple[str, ...] = ("A", "cx", "cy", "Ix", "Iy", "Ixy", "I1", "I2", "theta", "Sx_top", "Sx_bot",
                                   "Sy_left", "Sy_right", "Zx", "Zy")

PLAN_SCHEMA = "tracer/batch/1"
FAILURE_SCHEMA = "tracer/batch-failure/1"
_PLAN = "batch.json"
_THUMBS = "thumbs"
_RESERVED = frozenset({"batch", "index", "inventory", _THUMBS})
_THUMB_SIDE = 160                                    # px, longest side of a thumbnail
_SHEET_SUFFIX = ".toml"


@dataclass(frozen=True)
class BatchItem:
    """One member of a batch.

    Attributes
    ----------
    name : str
        Unique and filesystem-safe: the item's files are ``NAME.json``, ``NAME.png`` ...
    path : Path
        The input file.
    shown : str
        The path as the inventory shows it: relative to the folder, or as the manifest wrote it.
    kind : {"photo", "sheet"}
    label : str or None
        The member's name in its result (manifest or sidecar ``name``); None: the file's own.
    settings : dict
        The effective photo options (``measure_photo`` keywords); empty for sheets.
    error : str or None
        A fault found while planning (a bad sidecar, an unreadable file): the item fails with it.
    sha256 : str
        SHA-256 of the input file ("" where it cannot be read).
    key : str
        SHA-256 of the input's hash, the settings (file options by their contents), the label,
        the kind and the tool's version: the same key means the same result.
    """

    name: str
    path: Path
    shown: str
    kind: str
    label: str | None = None
    settings: dict[str, Any] = field(default_factory=dict)
    error: str | None = None
    sha256: str = ""
    key: str = ""


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


def plan_batch(source: str | Path, *, defaults: dict[str, Any] | None = None,
               out: str | Path | None = None) -> list[BatchItem]:
    """The items of a batch, named, with their settings and keys.

    Parameters
    ----------
    source : str or Path
        A folder (its photos and sheets, subfolders included; hidden files and the output folder
        left out) or a manifest ``.csv`` whose header names ``path`` and any of ``name`` and the
        photo options (:data:`PHOTO_OPTIONS`), e.g. ``path,name,target,scale,known,dpi,seed``.
    defaults : dict, optional
        Photo options for the whole lot (``measure_photo`` keywords); a sidecar or a manifest cell
        overrides them, and an item's own scale reference replaces the lot's.
    out : str or Path, optional
        The output folder, left out of a folder's items.

    Raises
    ------
    InputError
        The source is neither a folder nor a readable manifest, a manifest column is unknown, a
        default is malformed, or there is nothing to measure.
    """
    src = Path(source)
    lot = _layer(defaults or {}, "the command line", Path.cwd())
    if src.is_dir():
        found = _folder_items(src, Path(out) if out is not None else None)
        where = f"{src}: no photos ({' '.join(_photo_suffixes())}) or sheets (.toml) in this folder"
    elif src.suffix.lower() == ".csv":
        found = _manifest_items(src)
        where = f"{src}: the manifest lists no items"
    elif not src.exists():
        raise InputError(f"{src}: no such folder or manifest")
    else:
        raise InputError(f"{src}: give a folder of photos and sheets, or a manifest .csv")
    if not found:
        raise InputError(where)
    items, taken = [], set(_RESERVED)
    for path, shown, label, cells, error in found:
        name = _unique(safe_name(label or path.stem), taken)
        kind = "sheet" if path.suffix.lower() == _SHEET_SUFFIX else "photo"
        settings, side_label = {}, None
        if kind == "photo" and error is None:
            try:
                side, side_label = _sidecar(path)
                settings = _merge(_merge(lot, side), cells)
            except InputError as e:
                error = str(e)
        elif kind == "sheet" and cells and error is None:
            opt = next(iter(cells))
            error = f"{opt} is a photo option; {shown} is a sheet"
        item = BatchItem(name=name, path=path, shown=shown, kind=kind, label=label or side_label,
                         settings=settings, error=error)
        items.append(_keyed(item))
    return items


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
        (out / _THUMBS).mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise InputError(f"--out {out}: cannot be made ({e.strerror})") from None
    t0 = time.perf_counter()
    with _lock(out):
        _remove_temporaries(out)
        write_atomic(out / _PLAN, json.dumps(_plan_json(source, defaults, report, items), indent=2,
                                             ensure_ascii=False) + "\n")
        todo = [it for it in items if not _is_current(it, out, report)]
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
            for record in _measure_all(todo, out, report, jobs, lambda: tell(stopping=True)):
                counts[record["status"]] += 1
                tell(item=record["name"], status=record["status"], reason=record.get("reason"))
        except KeyboardInterrupt:
            interrupted = True
        except _WorkerDied as e:
            broken = e
        finally:
            inventory, index, rows = _rebuild(out)
    if broken is not None:
        raise MeasurementError(f"a worker process died ({broken}); the items measured so far are kept: rerun the "
                               "same command to go on (fewer --jobs if memory is short)")
    # Counted from the records: after a stop, the items in hand were finished all the same.
    ran = {it.name for it in todo}
    status = [r["status"] for r in rows if r["name"] in ran]
    return BatchSummary(total=len(items), done=status.count("done"), skipped=skipped, failed=status.count("failed"),
                        not_run=status.count("not run"), elapsed=time.perf_counter() - t0, interrupted=interrupted,
                        out=out, inventory=inventory, index=index)


def read_plan(out: str | Path) -> tuple[Path, dict[str, Any], list[BatchItem]]:
    """The batch that wrote `out`: its source (found again), the lot's defaults, and its items
    planned afresh (sidecars as they are now).

    Raises
    ------
    InputError
        `out` holds no ``batch.json``, or its source is no longer found.
    """
    out = Path(out)
    plan = _read_json(out / _PLAN)
    if plan is None or plan.get("schema") != PLAN_SCHEMA:
        raise InputError(f"{out}: not a tracer batch output folder (no readable {_PLAN})")
    given = Path(plan["source"])
    # Relative to where the batch ran: here, or beside the output folder.
    tries = [given] if given.is_absolute() else [given, out.resolve().parent / given, out.resolve().parent.parent / given]
    source = next((t for t in tries if t.exists()), None)
    if source is None:
        raise InputError(f"{out}: the batch's source {given} is not found from here; run tracer review from the "
                         "folder the batch ran in")
    defaults = dict(plan.get("defaults") or {})
    return source, {"defaults": defaults, "report": plan.get("report", "html")}, plan_batch(source, defaults=defaults,
                                                                                             out=out)


def to_review(out: str | Path) -> list[tuple[BatchItem, str]]:
    """The photos of the batch in `out` that a person should look at, each with why: those that
    failed (their reason) and those measured with a trace the check flagged and accepted unchecked."""
    out = Path(out)
    _, _, items = read_plan(out)
    found = []
    for it in items:
        if it.kind != "photo":
            continue
        fail = _read_json(out / f"{it.name}.failed.json")
        doc = _read_json(out / f"{it.name}.json")
        if fail is not None:
            found.append((it, f"failed: {fail.get('reason', '')}"))
        elif doc is not None and (doc.get("source", {}).get("trace") or {}).get("needs_review"):
            found.append((it, "measured with the trace accepted unchecked: the trace check asked for review"))
    return found


def rerun(out: str | Path) -> BatchSummary:
    """Run the batch of `out` again as it was run (its source, defaults and report), one worker:
    the members whose file or settings changed are measured again, and the inventory rebuilt."""
    source, plan, _ = read_plan(out)
    return run_batch(source, out, defaults=plan["defaults"], jobs=1, report=plan["report"])


def rebuild_inventory(out: str | Path) -> tuple[Path, Path]:
    """Write ``inventory.csv`` and ``index.html`` in `out` from its plan and per-item records.

    Each item of the plan (``batch.json``) gets one row: its result where ``NAME.json`` holds the
    plan's key, its failure where ``NAME.failed.json`` does, else status ``not run``.

    Returns
    -------
    (Path, Path)
        The inventory and the index written.
    """
    inventory, index, _ = _rebuild(Path(out))
    return inventory, index


def safe_name(text: str) -> str:
    """A filesystem-safe name: ASCII letters, digits, ``-`` and ``_`` only, at most 80 characters.

    >>> safe_name("joist J-14 (bay 3/north)")
    'joist-J-14-bay-3-north'
    """
    ascii_text = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode("ascii")
    name = re.sub(r"[^A-Za-z0-9_-]+", "-", ascii_text).strip("-_")[:80].strip("-_")
    return name or "item"


# -- planning ---------------------------------------------------------------------------------------
def _photo_suffixes() -> tuple[str, ...]:
    from ..inputs.photo.pipeline import PHOTO_SUFFIXES

    return PHOTO_SUFFIXES


def _folder_items(folder: Path, out: Path | None) -> list[tuple]:
    """(path, shown, label, cells, error) of each photo and sheet under `folder`, sorted."""
    photos = set(_photo_suffixes())
    skip = out.resolve() if out is not None else None
    files = []
    for p in sorted(folder.rglob("*")):
        rel = p.relative_to(folder)
        if any(part.startswith(".") for part in rel.parts) or not p.is_file():
            continue
        if skip is not None and (p.resolve() == skip or skip in p.resolve().parents):
            continue
        if p.suffix.lower() in photos or p.suffix.lower() == _SHEET_SUFFIX:
            files.append((p, rel))
    stems = {(p.parent, p.stem) for p, _ in files if p.suffix.lower() in photos}
    # A .toml beside a photo of the same stem is that photo's settings, not a sheet.
    return [(p, rel.as_posix(), None, {}, None) for p, rel in files
            if p.suffix.lower() in photos or (p.parent, p.stem) not in stems]


def _manifest_items(manifest: Path) -> list[tuple]:
    try:
        text = manifest.read_text(encoding="utf-8-sig")
    except OSError as e:
        raise InputError(f"{manifest}: cannot be read ({e.strerror})") from None
    except UnicodeDecodeError:
        raise InputError(f"{manifest}: not a UTF-8 text file; save the manifest as CSV (UTF-8)") from None
    reader = csv.reader(io.StringIO(text))
    header = next(reader, None)
    if not header:
        raise InputError(f"{manifest}: empty; the first line names the columns, e.g. "
                         "path,name,target,scale,known,dpi,seed")
    columns = [h.strip().replace("-", "_") for h in header]
    for c in columns:
        if c not in MANIFEST_COLUMNS:
            raise InputError(f"{manifest}: unknown column {c!r}; the columns are {', '.join(MANIFEST_COLUMNS)}")
    if "path" not in columns:
        raise InputError(f"{manifest}: no path column; the first line names the columns, e.g. "
                         "path,name,target,scale,known,dpi,seed")
    if len(set(columns)) != len(columns):
        raise InputError(f"{manifest}: a column is named twice in {', '.join(columns)}")
    base = manifest.parent
    found = []
    for line, cells in enumerate(reader, start=2):
        if not any(c.strip() for c in cells):
            continue
        if len(cells) > len(columns):
            raise InputError(f"{manifest}, line {line}: {len(cells)} cells for {len(columns)} columns; quote a "
                             'value that holds commas, e.g. "120,80,1620,95=100mm"')
        row = {c: v.strip() for c, v in zip(columns, cells) if v.strip()}
        if "path" not in row:
            raise InputError(f"{manifest}, line {line}: the path cell is empty")
        shown = row.pop("path")
        label = row.pop("name", None)
        path = Path(shown) if Path(shown).is_absolute() else base / shown
        error, cells_ = None, {}
        try:
            cells_ = _layer(row, f"{manifest.name}, line {line}", base)
        except InputError as e:
            error = str(e)
        if error is None and path.suffix.lower() not in (*_photo_suffixes(), _SHEET_SUFFIX):
            error = f"{shown}: neither a photo ({' '.join(_photo_suffixes())}) nor a sheet (.toml)"
        found.append((path, shown, label, cells_, error))
    return found


def _unique(name: str, taken: set[str]) -> str:
    """`name`, or `name-2`, `name-3` ..., not yet in `taken` (compared ignoring case)."""
    candidate, n = name, 1
    while candidate.lower() in taken:
        n += 1
        candidate = f"{name}-{n}"
    taken.add(candidate.lower())
    return candidate


def _keyed(item: BatchItem) -> BatchItem:
    from ..files import sha256_of

    try:
        digest = sha256_of(item.path.read_bytes())
    except OSError as e:
        if item.error is not None:
            return item
        reason = "no such file" if isinstance(e, FileNotFoundError) else f"cannot be read ({e.strerror})"
        return replace(item, error=f"{item.shown}: {reason}")
    settings = {k: (_file_digest(v) if PHOTO_OPTIONS[k].file else v) for k, v in sorted(item.settings.items())}
    record = {"tool": __version__, "kind": item.kind, "input": digest, "label": item.label, "settings": settings,
              "error": item.error}
    key = sha256_of(json.dumps(record, sort_keys=True).encode("utf-8"))
    return replace(item, sha256=digest, key=key)


def _file_digest(path: str) -> str:
    from ..files import sha256_of

    try:
        return sha256_of(Path(path).read_bytes())
    except OSError:
        return "unreadable"


def _plan_json(source: str | Path, defaults: dict[str, Any] | None, report: str, items: list[BatchItem]) -> dict:
    return {"schema": PLAN_SCHEMA, "tool": {"name": "tracer", "version": __version__}, "source": str(source),
            "defaults": dict(defaults or {}), "report": report,
            "items": [{"name": it.name, "path": it.shown, "kind": it.kind, "sha256": it.sha256, "key": it.key}
                      for it in items]}


# -- running ------------------------------------------------------------------------------------------
class _WorkerDied(Exception):
    pass


def _measure_all(todo: list[BatchItem], out: Path, report: str, jobs: int,
                 on_stop: Callable[[], None]) -> Iterator[dict]:
    """Each item's record, as its worker finishes it."""
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
        futures = [pool.submit(_measure_item, it, out, report) for it in todo]
        for future in cf.as_completed(futures):
            try:
                yield future.result()
            except cf.process.BrokenProcessPool as e:
                raise _WorkerDied(str(e) or "broken process pool") from None
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
    """Set up a worker: one thread for OpenCV, Ctrl-C left to the parent, gone with the parent."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    with contextlib.suppress(Exception):               # Linux: die with the parent (a killed batch)
        import ctypes

        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGKILL)     # PR_SET_PDEATHSIG
    if os.getppid() != parent:                         # the parent died before the line above
        os._exit(1)
    import cv2

    cv2.setNumThreads(1)


def _measure_item(item: BatchItem, out: Path, report: str) -> dict:
    """Measure one item and write its files; a fault becomes its failure record."""
    try:
        written = _write_result(item, out, report)
        _remove(out, item.name, keep=written)
        return {"name": item.name, "status": "done"}
    except TracerError as e:
        reason, retry = str(e), False
    except Exception as e:  # noqa: BLE001 - one bad item must not stop the batch
        reason, retry = f"internal error: {type(e).__name__}: {e}", True
    reason = " ".join(reason.split())                  # one line
    record = {"schema": FAILURE_SCHEMA, "tool": {"name": "tracer", "version": __version__}, "name": item.name,
              "path": item.shown, "kind": item.kind, "status": "failed", "reason": reason, "retry": retry,
              "batch": _batch_record(item, [])}
    failed = f"{item.name}.failed.json"
    write_atomic(out / failed, json.dumps(record, indent=2, ensure_ascii=False) + "\n")
    _remove(out, item.name, keep=[failed])
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
        thumb = overlay_bytes(pm, result.properties, result.u, ext=".jpg", max_side=_THUMB_SIDE)
    else:
        thumb = _section_thumbnail(result.measurement.section)
    files.append((f"{_THUMBS}/{item.name}.jpg", thumb))
    if report != "none":
        from ..outputs.report import report_bytes

        name = f"{item.name}.{report}"
        files.append((name, report_bytes(name, result, photo=pm)))
    doc = result_json(result)
    doc["batch"] = _batch_record(item, [n for n, _ in files])
    # The result JSON goes last: where it holds the key, every file it lists is whole.
    files.append((f"{item.name}.json", (json.dumps(doc, indent=2, ensure_ascii=False) + "\n").encode("utf-8")))
    for name, data in files:
        write_atomic_bytes(out / name, data)
    return [n for n, _ in files]


def _batch_record(item: BatchItem, outputs: list[str]) -> dict:
    return {"key": item.key, "input": item.shown, "input_sha256": item.sha256, "kind": item.kind,
            "settings": dict(item.settings), "outputs": outputs}


def _remove(out: Path, name: str, keep: list[str]) -> None:
    """Remove `name`'s files of an earlier run that this run did not write (they are out of date)."""
    for f in (f"{name}.json", f"{name}.failed.json", f"{name}.png", f"{name}.html", f"{name}.pdf",
              f"{_THUMBS}/{name}.jpg"):
        if f not in keep:
            with contextlib.suppress(FileNotFoundError):
                (out / f).unlink()


def _is_current(item: BatchItem, out: Path, report: str) -> bool:
    """Whether `out` holds `item`'s result (or its lasting failure) under the same key."""
    if not item.key:
        return False
    doc = _read_json(out / f"{item.name}.json")
    if doc is not None and doc.get("batch", {}).get("key") == item.key:
        outputs = doc["batch"].get("outputs", [])
        wanted = [] if report == "none" else [f"{item.name}.{report}"]
        return all((out / f).is_file() for f in [*outputs, *wanted])
    fail = _read_json(out / f"{item.name}.failed.json")
    return fail is not None and fail.get("batch", {}).get("key") == item.key and not fail.get("retry", True)


def _read_json(path: Path) -> dict | None:
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return doc if isinstance(doc, dict) else None


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
    for folder in (out, out / _THUMBS):
        for p in folder.glob(".*.tmp"):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()


def _section_thumbnail(section: Any) -> bytes:
    """A small JPEG of the section's shape (material grey, outline dark, y up)."""
    import cv2
    import numpy as np

    x0, y0, x1, y1 = section.bounds
    s = (_THUMB_SIDE - 12) / max(x1 - x0, y1 - y0)
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


# -- the inventory -----------------------------------------------------------------------------------
def _rebuild(out: Path) -> tuple[Path, Path, list[dict[str, Any]]]:
    try:
        plan = json.loads((out / _PLAN).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        raise InputError(f"{out}: no batch plan ({_PLAN}) here; run tracer batch into this folder first") from None
    rows = [_row(out, entry) for entry in plan["items"]]
    inventory, index = out / "inventory.csv", out / "index.html"
    write_atomic(inventory, _inventory_csv(rows))
    write_atomic(index, _index_html(rows, out, plan))
    return inventory, index, rows


def _row(out: Path, entry: dict) -> dict[str, Any]:
    """One inventory row of a plan entry, from its records in `out`."""
    name, key = entry["name"], entry["key"]
    row: dict[str, Any] = {"name": name, "path": entry["path"], "kind": entry["kind"], "sha256": entry["sha256"],
                           "status": "not run", "reason": "", "doc": None}
    doc = _read_json(out / f"{name}.json")
    if key and doc is not None and doc.get("batch", {}).get("key") == key:
        row.update(status="done", doc=doc, member=doc.get("name", name))
        return row
    fail = _read_json(out / f"{name}.failed.json")
    if fail is not None and fail.get("batch", {}).get("key") == key:
        row.update(status="failed", reason=fail.get("reason", ""))
    return row


def _unit_suffix(key: str) -> str:
    from ..units import property_unit

    return property_unit(key, "mm").replace("^", "")


def _inventory_columns() -> list[str]:
    cols = ["name", "member", "path", "kind", "status", "reason", "scale_method", "warnings"]
    for k in INVENTORY_KEYS:
        cols += [f"{k}_{_unit_suffix(k)}", f"u_{k}_{_unit_suffix(k)}"]
    return cols + ["input_sha256"]


def _inventory_values(row: dict[str, Any]) -> list[str]:
    doc = row["doc"] or {}
    vals = [row["name"], row.get("member", ""), row["path"], row["kind"], row["status"], row["reason"],
            _scale_method(doc),
            str(len(doc["warnings"])) if doc else ""]
    props = doc.get("properties", {})
    for k in INVENTORY_KEYS:
        p = props.get(k, {})
        vals += [_num(p.get("value")), _num(p.get("u"))]
    return vals + [row["sha256"]]


def _scale_method(doc: dict) -> str:
    """How a result's scale was set: the photo's method, "readings" for a sheet, "" without a result."""
    src = doc.get("source", {})
    if src.get("kind") == "photo":
        return src.get("scale", {}).get("method", "")
    return "readings" if doc else ""


def _num(v: Any) -> str:
    return "" if v is None else repr(float(v))


def _inventory_csv(rows: list[dict[str, Any]]) -> str:
    from ..outputs.report import CAUTIONS

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(_inventory_columns())
    for row in rows:
        w.writerow(_inventory_values(row))
    buf.write("".join(f"# {c}\n" for c in CAUTIONS))
    buf.write("# u is the standard uncertainty (k = 1); lengths in mm, theta in degrees; "
              "the columns' units are in their names (A_mm2 = mm^2).\n")
    return buf.getvalue()


_INDEX_KEYS = ("A", "Ix", "Iy", "I1", "I2", "Sx_top", "Zx", "Zy")

_INDEX_CSS = """
body{font:14px/1.4 system-ui,sans-serif;margin:1.5em;color:#1d2b38}
h1{font-size:1.4em;margin:0 0 .3em}
p.caution{border-left:4px solid #b03a2e;padding:.4em .8em;background:#fbf1ef;max-width:60em}
table{border-collapse:collapse;margin-top:1em}
th,td{border-bottom:1px solid #dde3e8;padding:4px 8px;vertical-align:middle;text-align:left}
th{background:#eef2f5;cursor:pointer;user-select:none;position:sticky;top:0}
th[aria-sort=ascending]::after{content:" \\25B2"}th[aria-sort=descending]::after{content:" \\25BC"}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
tr.failed td{background:#fdf3f1}tr.not-run td{color:#777}
td.reason{max-width:28em;font-size:.9em}td.reason ul{margin:.2em 0;padding-left:1.2em}
img{display:block;max-width:160px;max-height:120px}
"""

# Sorts the table by a clicked header: numbers by their value (data-v), text alphabetically.
_INDEX_JS = """
document.querySelectorAll("table.inventory th").forEach(function (th, col) {
  th.addEventListener("click", function () {
    var body = th.closest("table").tBodies[0];
    var up = th.getAttribute("aria-sort") !== "ascending";
    th.parentNode.querySelectorAll("th").forEach(function (h) { h.removeAttribute("aria-sort"); });
    th.setAttribute("aria-sort", up ? "ascending" : "descending");
    var rows = Array.prototype.slice.call(body.rows);
    function val(r) { var c = r.cells[col]; var v = c.getAttribute("data-v");
      return v === null ? c.textContent.trim().toLowerCase() : (v === "" ? NaN : parseFloat(v)); }
    rows.sort(function (a, b) {
      var x = val(a), y = val(b);
      if (typeof x === "number" || typeof y === "number") {
        if (isNaN(x)) return 1; if (isNaN(y)) return -1; return up ? x - y : y - x; }
      return up ? (x < y ? -1 : x > y ? 1 : 0) : (x < y ? 1 : x > y ? -1 : 0);
    });
    rows.forEach(function (r) { body.appendChild(r); });
  });
});
"""


def _index_html(rows: list[dict[str, Any]], out: Path, plan: dict) -> str:
    from ..outputs.report import CAUTIONS
    from ..outputs.table import format_measured, format_value
    from ..units import property_unit

    e = html.escape
    heads = ["picture", "name", "status", "scale", *[f"{k} [{property_unit(k, 'mm')}]" for k in _INDEX_KEYS],
             "reason or warnings"]
    body = []
    for row in rows:
        doc = row["doc"] or {}
        link = next((f"{row['name']}.{s}" for s in ("html", "pdf") if (out / f"{row['name']}.{s}").is_file()),
                    f"{row['name']}.json" if doc else None)
        thumb = out / _THUMBS / f"{row['name']}.jpg"
        pic = ""
        if doc and thumb.is_file():
            data = base64.b64encode(thumb.read_bytes()).decode("ascii")
            pic = f'<img alt="{e(row["name"])}" src="data:image/jpeg;base64,{data}">'
            pic = f'<a href="{e(link)}">{pic}</a>' if link else pic
        name = f'<a href="{e(link)}">{e(row["name"])}</a>' if link else e(row["name"])
        cells = [f"<td>{pic}</td>", f'<td>{name}<br><small>{e(row["path"])}</small></td>',
                 f"<td>{e(row['status'])}</td>", f"<td>{e(_scale_method(doc))}</td>"]
        props = doc.get("properties", {})
        for k in _INDEX_KEYS:
            p = props.get(k)
            if p is None or p.get("value") is None:
                cells.append('<td class="num" data-v=""></td>')
                continue
            text = format_measured(p["value"], 2 * p["u"]) if p.get("u") is not None else format_value(p["value"])
            cells.append(f'<td class="num" data-v="{p["value"]!r}">{e(text)}</td>')
        warnings = doc.get("warnings", [])
        if row["status"] != "done":
            note = e(row["reason"])
        elif warnings:
            note = (f"<details><summary>{len(warnings)} warning{'s' if len(warnings) > 1 else ''}</summary><ul>"
                    + "".join(f"<li>{e(w)}</li>" for w in warnings) + "</ul></details>")
        else:
            note = ""
        cells.append(f'<td class="reason">{note}</td>')
        cls = row["status"].replace(" ", "-")
        body.append(f'<tr class="{cls}">' + "".join(cells) + "</tr>")
    n = {s: sum(r["status"] == s for r in rows) for s in ("done", "failed", "not run")}
    caution = "".join(f"<p>{e(c)}</p>" for c in CAUTIONS[1:])
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>inventory · {len(rows)} members</title>\n<style>{_INDEX_CSS}</style>\n</head>\n<body>\n"
            f"<h1>Inventory of {len(rows)} members</h1>\n"
            f"<p>{n['done']} measured, {n['failed']} failed, {n['not run']} not run; tracer {e(__version__)}, "
            f"from {e(str(plan.get('source', '')))}. Values are value ± U, U = 2u (k = 2, about 95 % coverage); "
            "lengths in mm. Click a heading to sort; a picture or name opens the member's report.</p>\n"
            f'<p class="caution"><strong>Screening only.</strong> {e(CAUTIONS[0])}</p>\n'
            '<table class="inventory"><thead><tr>' + "".join(f"<th>{e(h)}</th>" for h in heads)
            + "</tr></thead>\n<tbody>\n" + "\n".join(body) + "\n</tbody></table>\n"
            f'<section class="cautions">{caution}</section>\n'
            f"<script>{_INDEX_JS}</script>\n</body>\n</html>\n")
