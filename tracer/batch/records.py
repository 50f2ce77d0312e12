"""The per-item records in a batch's output folder: the result JSON with its ``batch`` record, or
the failure record ``NAME.failed.json``; reading them back, and whether they are current.

An item's result JSON is written last, after every file it lists: where it holds the item's key,
the item is whole.
"""

from __future__ import annotations

import contextlib
from pathlib import Path
from typing import Any

from .._version import __version__
from .plan import THUMBS, BatchItem, read_json, read_plan

__all__ = ["FAILURE_SCHEMA", "batch_record", "failure_record", "remove_stale", "is_current", "item_row",
           "scale_method", "to_review"]

#: The schema of a failure record ``NAME.failed.json``.
FAILURE_SCHEMA = "tracer/batch-failure/1"


def batch_record(item: BatchItem, outputs: list[str]) -> dict:
    """The ``batch`` record of `item`'s result JSON and failure record: its key, input, settings and the
    files written (`outputs`, names relative to the output folder)."""
    return {"key": item.key, "input": item.shown, "input_sha256": item.sha256, "kind": item.kind,
            "settings": dict(item.settings), "outputs": outputs}


def failure_record(item: BatchItem, reason: str, retry: bool) -> dict:
    """The failure record of `item` (``NAME.failed.json``): its one-line `reason`; `retry`: a rerun tries it
    again though nothing changed (internal errors)."""
    return {"schema": FAILURE_SCHEMA, "tool": {"name": "tracer", "version": __version__}, "name": item.name,
            "path": item.shown, "kind": item.kind, "status": "failed", "reason": reason, "retry": retry,
            "batch": batch_record(item, [])}


def is_current(item: BatchItem, out: Path, report: str) -> bool:
    """Whether `out` holds `item`'s result (or its lasting failure) under the same key."""
    if not item.key:
        return False
    doc = read_json(out / f"{item.name}.json")
    if doc is not None and doc.get("batch", {}).get("key") == item.key:
        outputs = doc["batch"].get("outputs", [])
        wanted = [] if report == "none" else [f"{item.name}.{report}"]
        return all((out / f).is_file() for f in [*outputs, *wanted])
    fail = read_json(out / f"{item.name}.failed.json")
    return fail is not None and fail.get("batch", {}).get("key") == item.key and not fail.get("retry", True)


def item_row(out: Path, entry: dict) -> dict[str, Any]:
    """One inventory row of a plan entry, from its records in `out`."""
    name, key = entry["name"], entry["key"]
    row: dict[str, Any] = {"name": name, "path": entry["path"], "kind": entry["kind"], "sha256": entry["sha256"],
                           "status": "not run", "reason": "", "doc": None}
    doc = read_json(out / f"{name}.json")
    if key and doc is not None and doc.get("batch", {}).get("key") == key:
        row.update(status="done", doc=doc, member=doc.get("name", name))
        return row
    fail = read_json(out / f"{name}.failed.json")
    if fail is not None and fail.get("batch", {}).get("key") == key:
        row.update(status="failed", reason=fail.get("reason", ""))
    return row


def scale_method(doc: dict) -> str:
    """How a result's scale was set: the photo's method, "readings" for a sheet, "" without a result."""
    src = doc.get("source", {})
    if src.get("kind") == "photo":
        return src.get("scale", {}).get("method", "")
    return "readings" if doc else ""


def to_review(out: str | Path) -> list[tuple[BatchItem, str]]:
    """The photos of the batch in `out` that a person should look at, each with why: those that
    failed (their reason) and those measured with a trace the check flagged and accepted unchecked."""
    out = Path(out)
    _, _, items = read_plan(out)
    found = []
    for it in items:
        if it.kind != "photo":
            continue
        fail = read_json(out / f"{it.name}.failed.json")
        doc = read_json(out / f"{it.name}.json")
        if fail is not None:
            found.append((it, f"failed: {fail.get('reason', '')}"))
        elif doc is not None and (doc.get("source", {}).get("trace") or {}).get("needs_review"):
            found.append((it, "measured with the trace accepted unchecked: the trace check asked for review"))
    return found


def remove_stale(out: Path, name: str, keep: list[str]) -> None:
    """Remove `name`'s files of an earlier run that this run did not write (they are out of date)."""
    for f in (f"{name}.json", f"{name}.failed.json", f"{name}.png", f"{name}.html", f"{name}.pdf",
              f"{THUMBS}/{name}.jpg"):
        if f not in keep:
            with contextlib.suppress(FileNotFoundError):
                (out / f).unlink()
