"""The fleet table for people: the report's fleet page from the one fleet builder.

:func:`torqlog.fleet.compare.fleet_table` builds the fleet (one row per machine, SI keys);
``fleet.html`` and the xlsx sheet render that result as it is, and :func:`people_table`
renders the same rows for the report (HTML and PDF): labelled columns with their units in
the report's unit system, numbers to their meaningful digits, and each cell's exact value
kept so the page sorts on numbers, not on their text (:data:`SORT_SCRIPT`).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from torqlog.fleet.compare import FLEET_CAUTION, SORT_SCRIPT
from torqlog.present.labels import label, show

#: Columns of the fleet page, in order (keys of a fleet row). ``logs``, ``cycles`` and
#: ``flagged_share`` stay in fleet.html and the xlsx sheet.
PAGE_COLUMNS: tuple[str, ...] = (
    "rank", "machine", "last_log", "cs_median", "cs_p90", "target_cs", "cs_p90_over_target",
    "status", "added_inertia_kgm2", "motor_rms_load", "anomaly_rate", "drift")


def people_table(fleet: Mapping[str, Any], units: str = "si"
                 ) -> tuple[tuple[str, ...], list[list[tuple[str, str, Any]]]]:
    """The fleet's rows as people read them.

    Parameters
    ----------
    fleet : mapping
        A fleet result's JSON (:meth:`torqlog.fleet.compare.FleetResult.to_dict`):
        ``machines`` in rank order, SI keys.
    units : str
        ``"si"`` or ``"us"`` (the added inertia in kg·m² or lb·ft²).

    Returns
    -------
    header : tuple of str
        Column labels with their units (:func:`torqlog.present.labels.label`).
    rows : list of list of (text, key, value)
        Per machine and column: the text shown, the row key, and the value behind it
        (SI; None for text and empty cells).

    Examples
    --------
    >>> head, rows = people_table({"machines": [{"rank": 1, "machine": "Press 2",
    ...     "cs_median": 0.1612, "added_inertia_kgm2": 42.0}]}, "us")
    >>> head[8], rows[0][8][0], rows[0][3][0]
    ('Added inertia at the logged shaft, lb·ft²', '997', '0.161')
    """
    header = tuple(label(k, units) for k in PAGE_COLUMNS)
    rows = []
    for r in fleet.get("machines", []):
        cells = []
        for k in PAGE_COLUMNS:
            v = r.get(k)
            number = isinstance(v, int | float) and not isinstance(v, bool)
            cells.append((show(k, v, unit=False, system=units) if v is not None else "–",
                          k, v if number else None))
        rows.append(cells)
    return header, rows


__all__ = ["FLEET_CAUTION", "PAGE_COLUMNS", "SORT_SCRIPT", "people_table"]
