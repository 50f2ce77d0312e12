"""A batch's plan: its items (a folder's photos and sheets, or a manifest's rows), their unique,
filesystem-safe names, their effective settings and keys, and the plan file ``batch.json``.
"""

from __future__ import annotations

import csv
import io
import json
import re
import unicodedata
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import InputError
from ..inputs.photo.sidecar import PHOTO_OPTIONS, PhotoOption
from ..inputs.photo.sidecar import layer_options as _layer
from ..inputs.photo.sidecar import merge_options as _merge
from ..inputs.photo.sidecar import read_sidecar as _sidecar

__all__ = ["PhotoOption", "PHOTO_OPTIONS", "MANIFEST_COLUMNS", "REPORT_CHOICES", "PLAN_SCHEMA", "PLAN_FILE",
           "INVENTORY_FILE", "INDEX_FILE", "README_FILE", "THUMBS",
           "BatchItem", "plan_batch", "read_plan", "plan_json", "read_json", "safe_name"]


#: The manifest's columns: ``path`` (required), ``name``, and any photo option.
MANIFEST_COLUMNS: tuple[str, ...] = ("path", "name", *PHOTO_OPTIONS)

#: ``--report`` choices: a report per item as HTML or PDF, or none (faster).
REPORT_CHOICES: tuple[str, ...] = ("html", "pdf", "none")

PLAN_SCHEMA = "tracer/batch/1"
PLAN_FILE = "batch.json"                             # the plan, in the output folder
INVENTORY_FILE = "inventory.csv"                     # the folder's own files, rebuilt from the records
INDEX_FILE = "index.html"
README_FILE = "README.txt"
THUMBS = "thumbs"                                    # the folder of the index page's pictures
_RESERVED = frozenset({"batch", "index", "inventory", THUMBS})
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


def read_plan(out: str | Path) -> tuple[Path, dict[str, Any], list[BatchItem]]:
    """The batch that wrote `out`: its source (found again), the lot's defaults, and its items
    planned afresh (sidecars as they are now).

    Raises
    ------
    InputError
        `out` holds no ``batch.json``, or its source is no longer found.
    """
    out = Path(out)
    plan = read_json(out / PLAN_FILE)
    if plan is None or plan.get("schema") != PLAN_SCHEMA:
        raise InputError(f"{out}: not a tracer batch output folder (no readable {PLAN_FILE})")
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


def safe_name(text: str) -> str:
    """A filesystem-safe name: ASCII letters, digits, ``-`` and ``_`` only, at most 80 characters.

    >>> safe_name("joist J-14 (bay 3/north)")
    'joist-J-14-bay-3-north'
    """
    ascii_text = unicodedata.normalize("NFKD", text).encode("ascii", "ignore").decode("ascii")
    name = re.sub(r"[^A-Za-z0-9_-]+", "-", ascii_text).strip("-_")[:80].strip("-_")
    return name or "item"


def plan_json(source: str | Path, defaults: dict[str, Any] | None, report: str, items: list[BatchItem]) -> dict:
    """The plan file ``batch.json`` of a run: the source, the lot's defaults, the report choice and, per
    item, its name, path, kind, hash and key (what the inventory is rebuilt from)."""
    return {"schema": PLAN_SCHEMA, "tool": {"name": "tracer", "version": __version__}, "source": str(source),
            "defaults": dict(defaults or {}), "report": report,
            "items": [{"name": it.name, "path": it.shown, "kind": it.kind, "sha256": it.sha256, "key": it.key}
                      for it in items]}


def read_json(path: Path) -> dict | None:
    """The JSON object in `path`, or None where it is missing, unreadable or not an object."""
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return doc if isinstance(doc, dict) else None


def _photo_suffixes() -> tuple[str, ...]:
    from ..inputs.photo.load import PHOTO_SUFFIXES        # not from the pipeline: the parent never measures

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
