"""Result objects of the readers: Measurements, CharacteristicInfo, RawTable."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from .._results import Result
from .hints import hint_text
from ._common import _DELIMITER_NAMES
from .ingest import CensoredValue, IngestReport

@dataclass(frozen=True, slots=True)
class Measurements(Result):
    """One characteristic's measurements, read from a file, in file order.

    Attributes
    ----------
    values : ndarray of float
        The numbers used (finite), in the order of the file.
    rows : ndarray of int
        For each value, the 1-based row number as the user sees it in the file or
        sheet (header included).
    subgroups : ndarray of str or None
        Subgroup label of each value, when ``subgroup=`` was given.
    order : ndarray of str or None
        The time/order column as given (text), when ``order=`` was given.
    column, characteristic, units, source_name : str or None
        What was read, from where; ``units`` from the header ("Ra [µm]").
    censored : tuple of CensoredValue
        Every censored cell of the column, used or not.
    report : IngestReport
        Exclusions, format choices, notes and warnings.
    settings : mapping
        The options used (for reproducing the read).
    """

    values: np.ndarray
    rows: np.ndarray
    subgroups: np.ndarray | None
    order: np.ndarray | None
    column: str
    characteristic: str | None
    units: str | None
    source_name: str
    censored: tuple[CensoredValue, ...]
    report: IngestReport
    settings: Mapping[str, Any] = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Number of values used."""
        return int(self.values.size)

    def excluded_rows(self) -> pd.DataFrame:
        """Table of the excluded values: row, column, text, reason."""
        return pd.DataFrame(
            [(e.row, e.column, e.text, e.reason) for e in self.report.excluded],
            columns=["row", "column", "text", "reason"],
        )

    def to_frame(self) -> pd.DataFrame:
        """The cleaned data: row, value and (when given) subgroup and order."""
        data: dict[str, Any] = {"row": self.rows, "value": self.values}
        if self.subgroups is not None:
            data["subgroup"] = self.subgroups
        if self.order is not None:
            data["order"] = self.order
        return pd.DataFrame(data)

    def summary_text(self) -> str:
        """A plain-words account of what was read and what was left out."""
        rep = self.report
        what = f"'{self.column}'" + (f" [{self.units}]" if self.units else "")
        if self.characteristic is not None:
            what = f"characteristic '{self.characteristic}' (column {what})"
        where = f"'{self.source_name}'" + (f", sheet '{rep.sheet}'" if rep.sheet else "")
        lines = [f"Read {self.n} value(s) of {what} from {where} ({rep.layout} layout)."]
        fmt = []
        if rep.encoding:
            fmt.append(f"encoding {rep.encoding}")
        if rep.delimiter:
            fmt.append(f"delimiter {_DELIMITER_NAMES.get(rep.delimiter, repr(rep.delimiter))}")
        fmt.append(f"decimal {'comma' if rep.decimal == ',' else 'point'}")
        if rep.thousands:
            fmt.append(f"thousands separator {rep.thousands!r}")
        if rep.header_row:
            fmt.append(f"header in row {rep.header_row}")
        lines.append("Format: " + ", ".join(fmt) + ".")
        if rep.excluded:
            lines.append(f"Excluded {len(rep.excluded)} value(s):")
            for e in rep.excluded[:20]:
                lines.append(f"  row {e.row}: {e.reason}")
            if len(rep.excluded) > 20:
                lines.append(f"  … and {len(rep.excluded) - 20} more {hint_text('excluded.more')}.")
        else:
            lines.append("No values were excluded.")
        lines.extend(f"Note: {t}" for t in rep.notes)
        lines.extend(f"Warning: {t}" for t in rep.warnings)
        return "\n".join(lines)


@dataclass(frozen=True, slots=True)
class CharacteristicInfo(Result):
    """One characteristic found in a file: its name, units and counts.

    ``n_excluded`` counts non-blank-row cells that would be left out by default
    (not numbers, blank, censored); ``layout`` is "wide", "long" or "single".
    """

    name: str
    units: str | None
    n_numeric: int
    n_excluded: int
    layout: str


@dataclass(frozen=True, slots=True)
class RawTable(Result):
    """The parsed table (all cells as text) and how it was read.

    ``frame`` has one column per header name and the user-visible row numbers as
    its index (named "row").
    """

    _skip_in_dict: ClassVar[tuple[str, ...]] = ("frame",)

    frame: pd.DataFrame
    delimiter: str | None
    encoding: str | None
    sheet: str | None
    sheets: tuple[str, ...]
    header_row: int | None
    layout: str
    columns: tuple[str, ...]
