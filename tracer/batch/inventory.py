"""The batch's inventory: ``inventory.csv``, a plain CSV with one row per item of the plan, from the
per-item records; written with the index page and the folder's ``README.txt`` (what the files are,
and the cautions).
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from typing import Any

from ..errors import InputError
from ..files import write_atomic
from .index_page import index_html
from .plan import INDEX_FILE, INVENTORY_FILE, PLAN_FILE, README_FILE
from .records import item_row, scale_method

__all__ = ["INVENTORY_KEYS", "rebuild_inventory", "rebuild"]

#: The properties in the inventory, each with its u, in this order.
INVENTORY_KEYS: tuple[str, ...] = ("A", "cx", "cy", "Ix", "Iy", "Ixy", "I1", "I2", "theta", "Sx_top", "Sx_bot",
                                   "Sy_left", "Sy_right", "Zx", "Zy")


def rebuild_inventory(out: str | Path) -> tuple[Path, Path]:
    """Write ``inventory.csv``, ``index.html`` and ``README.txt`` in `out` from its plan and per-item records.

    Each item of the plan (``batch.json``) gets one row: its result where ``NAME.json`` holds the
    plan's key, its failure where ``NAME.failed.json`` does, else status ``not run``. The inventory
    is a plain CSV (its first line the header, then one line per item); the cautions that go with
    its values are on the index page and in ``README.txt``.

    Returns
    -------
    (Path, Path)
        The inventory and the index written.
    """
    inventory, index, _ = rebuild(Path(out))
    return inventory, index


def rebuild(out: Path) -> tuple[Path, Path, list[dict[str, Any]]]:
    """:func:`rebuild_inventory`, also giving the rows (``name``, ``status`` ... per item of the plan)."""
    try:
        plan = json.loads((out / PLAN_FILE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        raise InputError(f"{out}: no batch plan ({PLAN_FILE}) here; run tracer batch into this folder first") from None
    rows = [item_row(out, entry) for entry in plan["items"]]
    inventory, index = out / INVENTORY_FILE, out / INDEX_FILE
    write_atomic(inventory, _inventory_csv(rows))
    write_atomic(out / README_FILE, _readme_text(plan))
    write_atomic(index, index_html(rows, out, plan))           # last: it links to the other two
    return inventory, index, rows


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
            scale_method(doc),
            str(len(doc["warnings"])) if doc else ""]
    props = doc.get("properties", {})
    for k in INVENTORY_KEYS:
        p = props.get(k, {})
        vals += [_num(p.get("value")), _num(p.get("u"))]
    return vals + [row["sha256"]]


def _num(v: Any) -> str:
    return "" if v is None else repr(float(v))


def _inventory_csv(rows: list[dict[str, Any]]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(_inventory_columns())
    for row in rows:
        w.writerow(_inventory_values(row))
    return buf.getvalue()


def _readme_text(plan: dict) -> str:
    """The folder's ``README.txt``: what its files are, and the cautions, worded as the reports word them."""
    from .._version import __version__
    from ..outputs.report import CAUTIONS

    return (f"Written by tracer batch (tracer {__version__}) from {plan.get('source', '')}.\n\n"
            "CAUTIONS\n\n" + "".join(f"- {c}\n" for c in CAUTIONS) + "\n"
            "FILES\n\n" + _FILES)


_FILES = """\
inventory.csv     One row per member: name, member, path, kind, status (done, failed or not run),
                  reason, scale_method, warnings (how many), then each property and its standard
                  uncertainty u (k = 1), the unit in the column's name (A_mm2 and u_A_mm2 in mm^2,
                  cx_mm in mm, Ix_mm4 in mm^4, theta_deg in degrees); last the input file's
                  SHA-256. A plain CSV: the first line is the header.
index.html        The same members on a page to sort, with a picture of each and the cautions
                  above; there the values are value +/- U, U = 2u (k = 2, about 95 % coverage).
NAME.json         A member's result (schema tracer/result/1) with a "batch" record: its key, its
                  settings and the files written for it.
NAME.png          The review picture of a photo: the trace drawn over it.
NAME.html         A member's report (NAME.pdf with --report pdf; none with --report none).
NAME.failed.json  Why a member could not be measured.
thumbs/           The pictures of index.html.
batch.json        The batch's plan: its source, settings and members. A rerun of the same command
                  measures only what changed; tracer batch --out DIR --rebuild rewrites
                  inventory.csv, index.html and this file from the records.
"""
