"""The rows a handoff sheet is made of, and the precision derived numbers are written at."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

#: Derived numbers (not copied from front.json) are rounded to these decimals before they are written:
#: lengths in um to 0.01 um, percentages to 0.01 %, lengths in mm to 0.001 mm, ratios to 4 decimals.
DECIMALS = {"um": 2, "%": 2, "mm": 3, "": 4, "fraction": 4, "GHz": 6}

#: How the sheet states that precision.
PRECISION_NOTE = ("Figures copied from front.json are exact in the CSV (its key column names the field) and shown "
                  "to 4 significant figures here; derived figures are rounded to 0.01 um, 0.01 % and 0.001 mm.")


def derived(value: float | None, unit: str) -> float | None:
    """A derived number rounded to the sheet's precision for ``unit`` (None stays None)."""
    if value is None:
        return None
    return round(float(value), DECIMALS.get(unit, 4))


@dataclass
class Row:
    """One quantity of a sheet: ``value`` exact, ``key`` the front.json field it came from ('' if derived)."""

    section: str
    item: str
    quantity: str
    value: Any
    unit: str = ""
    key: str = ""
    note: str = ""


@dataclass
class Sheet:
    """Everything one handoff sheet shows, as rows grouped by section."""

    candidate_id: str
    study: str
    version: str
    rows: list[Row] = field(default_factory=list)
    stackup: list[dict[str, Row]] = field(default_factory=list)
    notes: list[tuple[str, str, str]] = field(default_factory=list)   # (severity, text, source)
    cautions: list[str] = field(default_factory=list)
    unbonded: bool = False
    bonded_build: list[dict[str, str]] = field(default_factory=list)  # unbonded: the build outside the bend
    first_line: str = ""     # the first line's name when the candidate carries several lines (else empty)
    bend_zone: str = ""      # the name of the zone front.json's bend holds when there are several zones

    def add(self, *args: Any, **kwargs: Any) -> Row:
        row = Row(*args, **kwargs)
        self.rows.append(row)
        return row

    def section(self, name: str) -> list[Row]:
        return [r for r in self.rows if r.section == name]


__all__ = ["Row", "Sheet", "derived", "DECIMALS", "PRECISION_NOTE"]
