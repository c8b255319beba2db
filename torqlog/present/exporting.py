"""Result tables in the files engineers keep beside the logger: xlsx, CSV, Parquet.

The unit of every column is read from its name (``energy_swing_J`` is in J, see
:data:`torqlog.io.units.KEY_UNITS`) and written where each format keeps it: a units row under
the header in xlsx and (on request) in CSV, column metadata in Parquet. Values are written
as numbers; CSV rounds them to the significant digits the data supports unless asked to
keep full precision.

Six significant digits is the default: a 16-bit logger channel resolves about 1 part in
65 000 (4.8 digits), and derived figures (ΔE, Cs, inertia) are no better than the
channels they come from; six keeps a guard digit. This is common practice, not a standard.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from pathlib import Path
from typing import TYPE_CHECKING, Any

from torqlog.errors import UsageError
from torqlog.io.outputs import atomic_path
from torqlog.io.units import key_unit

if TYPE_CHECKING:
    import pandas as pd

DEFAULT_DIGITS = 6
BINARY_FORMATS = ("xlsx", "parquet")


def flat_items(data: Mapping[str, Any], prefix: str = "") -> list[tuple[str, Any]]:
    """Flatten a nested result dict to ``(dotted.key, value)`` pairs; lists become text."""
    out: list[tuple[str, Any]] = []
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, Mapping):
            out.extend(flat_items(value, name + "."))
        elif isinstance(value, list | tuple):
            if value and all(isinstance(v, Mapping) for v in value):
                for i, item in enumerate(value):
                    out.extend(flat_items(item, f"{name}[{i}]."))
            else:
                out.append((name, "; ".join(str(v) for v in value)))
        else:
            out.append((name, _plain(value)))
    return out


def _plain(value: Any) -> Any:
    if hasattr(value, "item") and not isinstance(value, str | bytes):
        try:
            value = value.item()
        except (ValueError, AttributeError):
            return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if value is None or isinstance(value, bool | int | float | str):
        return value
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


def summary_frame(data: Mapping[str, Any], system: str = "si") -> pd.DataFrame:
    """A result dict as a key / value / unit table (options left out: they get a sheet)."""
    import pandas as pd

    rows = [(k, v, key_unit(k.rsplit(".", 1)[-1], system))
            for k, v in flat_items({k: v for k, v in data.items() if k != "options"})]
    return pd.DataFrame(rows, columns=["key", "value", "unit"])


def options_frame(options: Mapping[str, Any]) -> pd.DataFrame:
    """The options that made a result, one row each (``option``, ``value``)."""
    import pandas as pd

    return pd.DataFrame([(k, "" if v is None else str(v)) for k, v in flat_items(options)],
                        columns=["option", "value"])


def column_units(columns: list[str], system: str = "si") -> list[str]:
    """The unit of each column, read from its name (``""`` when dimensionless)."""
    return [key_unit(str(c), system) for c in columns]


def to_csv_text(table: pd.DataFrame, *, digits: int | None = DEFAULT_DIGITS,
                units_row: bool = False, system: str = "si", header: bool = True) -> str:
    """A table as CSV text, floats rounded to ``digits`` significant digits.

    Parameters
    ----------
    table : DataFrame
        Columns named with their unit suffix.
    digits : int or None
        Significant digits of float columns; None keeps full precision (shortest text
        that reads back to the same double).
    units_row : bool
        Write a second line with each column's unit under the header.
    system : str
        ``"si"`` or ``"us"``: how to read unit suffixes for the units row.
    header : bool
        Write the header (and units row); False gives the rows alone, for a table
        written in parts.

    Examples
    --------
    >>> import pandas as pd
    >>> print(to_csv_text(pd.DataFrame({"cs": [0.045478331839988744]}), units_row=True))
    cs
    <BLANKLINE>
    0.0454783
    <BLANKLINE>
    """
    if digits is not None and not 1 <= int(digits) <= 17:
        raise UsageError(f"--digits must be 1 to 17, got {digits}")
    fmt = None if digits is None else f"%.{int(digits)}g"
    body = table.to_csv(index=False, float_format=fmt, lineterminator="\n", header=False)
    if not header:
        return body
    return csv_header(list(table.columns), units_row=units_row, system=system) + body


def csv_header(columns: list[str], *, units_row: bool = False, system: str = "si") -> str:
    """The header line of a CSV table (and its units row under it), as
    :func:`to_csv_text` writes them."""
    import csv
    import io

    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerow([str(c) for c in columns])  # as pandas
    head = out.getvalue()
    if not units_row:
        return head
    return head + ",".join(_csv_cell(u) for u in column_units(columns, system)) + "\n"


def _csv_cell(text: str) -> str:
    return f'"{text}"' if any(c in text for c in ',"\n') else text


def _number_format(values: Any) -> str:
    """An Excel number format that shows a column's magnitude sensibly."""
    import numpy as np

    v = np.asarray(values, dtype=float)
    v = np.abs(v[np.isfinite(v) & (v != 0)])
    if v.size == 0:
        return "0.000"
    mid = float(np.median(v))
    if mid >= 1e6 or mid < 1e-3:
        return "0.000E+00"
    if mid >= 100:
        return "#,##0.0"
    if mid >= 1:
        return "0.000"
    return "0.0000"


def write_xlsx(path: str | Path, sheets: Mapping[str, pd.DataFrame],
               options: Mapping[str, Any] | None = None, system: str = "si") -> Path:
    """Write tables to an xlsx workbook: one sheet each, header and units rows, frozen.

    Parameters
    ----------
    path : str or Path
        The ``.xlsx`` file to write.
    sheets : mapping of str to DataFrame
        Sheet name -> table (columns named with unit suffixes).
    options : mapping, optional
        The options that made the result: written to a last sheet ``options``.
    system : str
        ``"si"`` or ``"us"``, to read the unit suffixes.

    Returns
    -------
    Path
    """
    import numpy as np
    from openpyxl import Workbook
    from openpyxl.styles import Font

    wb = Workbook()
    wb.remove(wb.active)
    all_sheets = dict(sheets)
    if options is not None:
        all_sheets["options"] = options_frame(options)
    bold, grey = Font(bold=True), Font(italic=True, color="666666")
    for name, table in all_sheets.items():
        ws = wb.create_sheet(title=str(name)[:31])
        cols = [str(c) for c in table.columns]
        ws.append(cols)
        ws.append([u or "-" for u in column_units(cols, system)])  # "-": dimensionless
        for cell in ws[1]:
            cell.font = bold
        for cell in ws[2]:
            cell.font = grey
        formats = []
        arrays = []
        for c in table.columns:
            col = table[c]
            kind = col.dtype.kind
            if kind == "f":
                formats.append(_number_format(col.to_numpy()))
                arr = col.to_numpy(dtype=float)
                arrays.append([None if not math.isfinite(x) else x for x in arr.tolist()])
            elif kind in "iu":
                formats.append("0")
                arrays.append(col.to_numpy().tolist())
            elif kind == "b":
                formats.append(None)
                arrays.append(col.to_numpy().tolist())
            elif kind == "M":
                formats.append("yyyy-mm-dd hh:mm:ss")
                arrays.append([None if x is None or x != x else x.to_pydatetime()
                               .replace(tzinfo=None) for x in col])
            else:
                formats.append(None)
                arrays.append([_plain(x) for x in col.tolist()])
        for row in zip(*arrays, strict=True) if arrays else ():
            ws.append(list(row))
        for j, fmt in enumerate(formats, start=1):
            if fmt is None:
                continue
            for (cell,) in ws.iter_rows(min_row=3, min_col=j, max_col=j):
                cell.number_format = fmt
        ws.freeze_panes = "A3"
        for j, c in enumerate(cols, start=1):
            width = max([len(c), *(len(str(x)) for x in
                                   (np.asarray(arrays[j - 1][:50], dtype=object)))]) \
                if arrays else len(c)
            ws.column_dimensions[ws.cell(row=1, column=j).column_letter].width = \
                min(max(10, width + 2), 60)
    p = Path(path)
    with atomic_path(p) as tmp:
        wb.save(tmp)
    return p


def write_parquet(path: str | Path, table: pd.DataFrame,
                  options: Mapping[str, Any] | None = None, system: str = "si") -> Path:
    """Write a table to Parquet, each column's unit in its field metadata (``unit``).

    The options that made the result go in the file metadata as JSON
    (``torqlog.options``).
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    t = pa.Table.from_pandas(table, preserve_index=False)
    t = t.cast(parquet_schema(t.schema, options, system))
    p = Path(path)
    with atomic_path(p) as tmp:
        pq.write_table(t, tmp)
    return p


def parquet_schema(schema: Any, options: Mapping[str, Any] | None = None,
                   system: str = "si", extra: Mapping[bytes, bytes] | None = None) -> Any:
    """A Parquet schema with each column's unit in its field metadata (``unit``).

    The unit system goes in the schema metadata under ``torqlog.io.units``, the options
    that made the result as flat JSON under ``torqlog.options``, and ``extra`` beside
    them. :func:`write_parquet` and the per-cycle table written in row groups
    (:mod:`torqlog.cli.cycle_output`) share it.

    Parameters
    ----------
    schema : pyarrow.Schema
    options : mapping, optional
    system : str
        ``"si"`` or ``"us"``, to read the unit suffixes.
    extra : mapping of bytes to bytes, optional

    Returns
    -------
    pyarrow.Schema
    """
    import pyarrow as pa

    units = column_units([f.name for f in schema], system)
    fields = [f.with_metadata({**(f.metadata or {}), b"unit": u.encode()})
              for f, u in zip(schema, units, strict=True)]
    meta = dict(schema.metadata or {})
    meta[b"torqlog.io.units"] = system.encode()
    if options is not None:
        meta[b"torqlog.options"] = json.dumps(dict(flat_items(options))).encode()
    meta.update(extra or {})
    return pa.schema(fields, metadata=meta)


def write_binary(fmt: str, path: str | None, data: Mapping[str, Any],
                 table: pd.DataFrame | None, system: str = "si",
                 sheets: Mapping[str, pd.DataFrame] | None = None) -> Path:
    """Write a result as xlsx or Parquet (both need a file: ``-o FILE``).

    xlsx gets the table (sheet ``table``), any extra ``sheets``, the scalar results
    (sheet ``summary``) and the options; Parquet the table, or the summary when there is
    no table.
    """
    if fmt not in BINARY_FORMATS:
        raise UsageError(f"unknown binary format {fmt!r}")
    if not path:
        raise UsageError(f"--format {fmt} writes a file: give -o FILE")
    options = data.get("options") if isinstance(data.get("options"), Mapping) else {}
    summary = summary_frame(data, system)
    if fmt == "xlsx":
        all_sheets: dict[str, pd.DataFrame] = {"summary": summary}
        if table is not None:
            all_sheets["table"] = table
        all_sheets.update(sheets or {})
        return write_xlsx(path, all_sheets, options, system)
    if table is None:
        table = summary.assign(value=summary["value"].astype(str))
    return write_parquet(path, table, options, system)
