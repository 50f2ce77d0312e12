"""The batch's index page ``index.html``: the cautions first, then a sortable table of the members
with their pictures; self-contained (its CSS, script and pictures inline), it opens offline.
"""

from __future__ import annotations

import base64
import html
from pathlib import Path
from typing import Any

from .._version import __version__
from .plan import INVENTORY_FILE, README_FILE, THUMBS
from .records import scale_method

__all__ = ["index_html"]

_INDEX_KEYS = ("A", "Ix", "Iy", "I1", "I2", "Sx_top", "Zx", "Zy")

_INDEX_CSS = """
body{font:14px/1.4 system-ui,sans-serif;margin:1.5em;color:#1d2b38}
h1{font-size:1.4em;margin:0 0 .3em}
section.cautions{border-left:4px solid #b03a2e;padding:.2em .8em;background:#fbf1ef;max-width:60em}
section.cautions p{margin:.4em 0}
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


def index_html(rows: list[dict[str, Any]], out: Path, plan: dict) -> str:
    """The index page of the inventory `rows` (see :func:`~tracer.batch.inventory.rebuild`) of the
    output folder `out`, whose plan (``batch.json``) is `plan`."""
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
        thumb = out / THUMBS / f"{row['name']}.jpg"
        pic = ""
        if doc and thumb.is_file():
            data = base64.b64encode(thumb.read_bytes()).decode("ascii")
            pic = f'<img alt="{e(row["name"])}" src="data:image/jpeg;base64,{data}">'
            pic = f'<a href="{e(link)}">{pic}</a>' if link else pic
        name = f'<a href="{e(link)}">{e(row["name"])}</a>' if link else e(row["name"])
        cells = [f"<td>{pic}</td>", f'<td>{name}<br><small>{e(row["path"])}</small></td>',
                 f"<td>{e(row['status'])}</td>", f"<td>{e(scale_method(doc))}</td>"]
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
    # The cautions first, above the table, in one marked block: every one of them, worded as the reports word them.
    cautions = (f"<p><strong>Screening only.</strong> {e(CAUTIONS[0])}</p>\n"
                + "".join(f"<p>{e(c)}</p>\n" for c in CAUTIONS[1:]))
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>inventory · {len(rows)} members</title>\n<style>{_INDEX_CSS}</style>\n</head>\n<body>\n"
            f"<h1>Inventory of {len(rows)} members</h1>\n"
            f"<p>{n['done']} measured, {n['failed']} failed, {n['not run']} not run; tracer {e(__version__)}, "
            f"from {e(str(plan.get('source', '')))}. Values are value ± U, U = 2u (k = 2, about 95 % coverage); "
            "lengths in mm. Click a heading to sort; a picture or name opens the member's report. "
            f'The same values with their u (k = 1) are in <a href="{INVENTORY_FILE}">{INVENTORY_FILE}</a>; '
            f'<a href="{README_FILE}">{README_FILE}</a> says what each file here is.</p>\n'
            f'<section class="cautions" aria-label="cautions">\n{cautions}</section>\n'
            '<table class="inventory"><thead><tr>' + "".join(f"<th>{e(h)}</th>" for h in heads)
            + "</tr></thead>\n<tbody>\n" + "\n".join(body) + "\n</tbody></table>\n"
            f"<script>{_INDEX_JS}</script>\n</body>\n</html>\n")
