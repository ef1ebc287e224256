"""Stated resource limits checked before the work starts, each with the flag that overrides it.

* The line table (one solved line geometry per row, :mod:`strainline.optimizer.search.linetable`)
  is counted from the study's option counts before anything is allocated, and refused above
  :data:`LINE_TABLE_MAX_ROWS` unless ``--force``.
* The exhaustive search projects its time from a measured rate and refuses a run projected past
  a day unless ``--force`` (:func:`strainline.optimizer.search.engine.search`); the evolutionary
  search is bounded by its budget.
"""
from __future__ import annotations

from typing import Any

from strainline.optimizer.errors import StudyError

#: Rows of the line table built without ``--force`` (about 3 GB at the peak and up to ~17 min).
LINE_TABLE_MAX_ROWS = 1_000_000
#: Peak memory per line-table row while it is built, bytes (measured with tracemalloc on the shipped
#: studies: 1,100-2,900 bytes a row at the peak; the table kept afterwards is 370-2,300 bytes a row).
LINE_TABLE_BYTES_PER_ROW = 3000
#: Build time per row, seconds, with the field-accurate table (measured on wearable-patch-feed:
#: ~0.95 ms a row on one core; the closed-form table takes ~0.1 ms a row).
LINE_TABLE_SECONDS_PER_ROW = 1e-3


def _bytes(n: float) -> str:
    for unit, size in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6)):
        if n >= size:
            return f"{n / size:.1f} {unit}"
    return f"{n / 1e3:.0f} kB"


def _duration(seconds: float) -> str:
    if seconds < 5400:
        return f"{seconds / 60:,.0f} min"
    if seconds < 2 * 86400:
        return f"{seconds / 3600:,.0f} h"
    return f"{seconds / 86400:,.0f} days"


def check_line_table(space: Any, force: bool = False, limit: int | None = None) -> int:
    """Count the line table's rows before it is built; refuse over ``limit`` unless ``force``.

    Returns the row count. The count is the sum over signal coppers of the product of the option
    counts of the choices that shape the line (copper weight, dielectric and adhesive next to the
    trace, cover, pair gap): :func:`strainline.optimizer.search.linetable.table_rows`.
    """
    from strainline.optimizer.search.linetable import table_rows

    limit = LINE_TABLE_MAX_ROWS if limit is None else limit
    rows = table_rows(space)
    if rows > limit and not force:
        raise StudyError(
            f"the line table would hold {rows:,} line geometries (about {_bytes(rows * LINE_TABLE_BYTES_PER_ROW)} "
            f"and up to {_duration(rows * LINE_TABLE_SECONDS_PER_ROW)} to build), over the limit of {limit:,}; "
            "offer fewer options next to the signal layer (copper weights, dielectric and adhesive builds, "
            "covers, pair gaps) or give --force to build it anyway", "stack")
    return rows
