"""Results as readable HTML tables in Jupyter (``_repr_html_``).

Every result class takes ``_repr_html_ = result_html``: the scalar figures with their
units (read from the key suffixes), the first rows of its table when it has one, and the
options that made it, folded away. Plain HTML, no scripts, no styling beyond a few rules.
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    import pandas as pd

#: Rows of a result's table shown in the notebook.
HEAD_ROWS = 10
_STYLE = ("<style>.torqlog{font-family:sans-serif}.torqlog td,.torqlog th{padding:2px 8px;"
          "text-align:left;white-space:nowrap}"
          ".torqlog td.n{text-align:right;font-variant-numeric:tabular-nums}</style>")


def _fmt(value: Any) -> tuple[str, bool]:
    if isinstance(value, bool) or value is None:
        return ("" if value is None else str(value)), False
    if isinstance(value, int):
        return str(value), True
    if isinstance(value, float):
        if not math.isfinite(value):
            return "", True
        return f"{value:.6g}", True
    return str(value), False


def _rows_html(rows: Sequence[tuple[str, Any, str]]) -> str:
    out = ["<table><tr><th>figure</th><th>value</th><th>unit</th></tr>"]
    for key, value, unit in rows:
        text, num = _fmt(value)
        out.append(f"<tr><td>{html.escape(key)}</td><td{' class=n' if num else ''}>"
                   f"{html.escape(text)}</td><td>{html.escape(unit)}</td></tr>")
    out.append("</table>")
    return "".join(out)


def _table_html(frame: pd.DataFrame, rows: int = HEAD_ROWS) -> str:
    from torqlog.io.units import key_unit

    head = frame.head(rows)
    cols = [str(c) for c in head.columns]
    out = ["<table><tr>"]
    out += [f"<th>{html.escape(c)}"
            + (f"<br><small>[{html.escape(key_unit(c))}]</small>" if key_unit(c) else "")
            + "</th>" for c in cols]
    out.append("</tr>")
    for rec in head.itertuples(index=False):
        out.append("<tr>")
        for v in rec:
            text, num = _fmt(v.item() if hasattr(v, "item") and not isinstance(v, str)
                             else v)
            out.append(f"<td{' class=n' if num else ''}>{html.escape(text)}</td>")
        out.append("</tr>")
    out.append("</table>")
    if len(frame) > rows:
        out.append(f"<p><small>first {rows} of {len(frame)} rows; "
                   "<code>.to_pandas()</code> has them all</small></p>")
    return "".join(out)


def _options_html(options: Mapping[str, Any]) -> str:
    from torqlog.present.exporting import flat_items

    items = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(_fmt(v)[0])}</td></tr>"
                    for k, v in flat_items(options))
    return f"<details><summary>options</summary><table>{items}</table></details>"


def frame_html(title: str, frame: pd.DataFrame | None, options: Mapping[str, Any] | None,
               notes: Sequence[str] = (), summary: Sequence[tuple[str, Any, str]] = ()
               ) -> str:
    """HTML of a titled result: summary rows, a table head, notes and folded options."""
    parts = [_STYLE, f"<div class='torqlog'><b>{html.escape(title)}</b>"]
    if summary:
        parts.append(_rows_html(summary))
    if frame is not None and len(frame.columns):
        parts.append(_table_html(frame))
    parts += [f"<p><small>note: {html.escape(str(n))}</small></p>" for n in notes]
    if options:
        parts.append(_options_html(options))
    parts.append("</div>")
    return "".join(parts)


def result_html(result: Any) -> str:
    """The notebook view of any torqlog result with ``to_dict()`` (and ``to_pandas()``).

    Scalars of the JSON contract are listed with their units; lists of numbers are left
    to the table; the table shows its first :data:`HEAD_ROWS` rows.
    """
    from torqlog.io.units import key_unit
    from torqlog.present.exporting import flat_items

    data = result.to_dict()
    options = data.get("options") if isinstance(data.get("options"), Mapping) else None
    summary = []
    for key, value in flat_items({k: v for k, v in data.items()
                                  if k not in ("options", "notes", "cautions")}):
        if isinstance(value, str) and len(value) > 200:
            continue
        summary.append((key, value, key_unit(key.rsplit(".", 1)[-1])))
        if len(summary) >= 60:
            break
    frame = None
    to_pandas = getattr(result, "to_pandas", None)
    if callable(to_pandas):
        try:
            frame = to_pandas()
        except Exception:  # noqa: BLE001 - a result without its table still shows
            frame = None
    notes = [*data.get("notes", []), *data.get("cautions", [])] \
        if isinstance(data.get("notes", []), list) else []
    return frame_html(type(result).__name__, frame, options, notes, summary)
