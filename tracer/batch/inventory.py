"""The batch's inventory: ``inventory.csv`` (one row per item of the plan, from the per-item
records), written with the index page and the folder's ``README.txt``.
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
from .plan import PLAN_FILE
from .records import item_row, scale_method

__all__ = ["INVENTORY_KEYS", "rebuild_inventory", "rebuild"]

#: The properties in the inventory, each with its u, in this order.
INVENTORY_KEYS: tuple[str, ...] = ("A", "cx", "cy", "Ix", "Iy", "Ixy", "I1", "I2", "theta", "Sx_top", "Sx_bot",
                                   "Sy_left", "Sy_right", "Zx", "Zy")


def rebuild_inventory(out: str | Path) -> tuple[Path, Path]:
    """Write ``inventory.csv`` and ``index.html`` in `out` from its plan and per-item records.

    Each item of the plan (``batch.json``) gets one row: its result where ``NAME.json`` holds the
    plan's key, its failure where ``NAME.failed.json`` does, else status ``not run``.

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
    inventory, index = out / "inventory.csv", out / "index.html"
    write_atomic(inventory, _inventory_csv(rows))
    write_atomic(index, index_html(rows, out, plan))
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
