"""What every part of the report shares: the header fields (:class:`ReportMeta`), the
section titles and names printed, and the one number format (:func:`fmt`)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..caution import CAUTION
from ..errors import ConfigError


#: Page formats accepted by ``page=``, with their size in mm (portrait).
PAGE_SIZES: dict[str, tuple[float, float]] = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}


#: Section headings, in order (tests look for each one in the text).
SECTION_TITLES: dict[str, str] = {
    "verdict": "Verdict and release checklist",
    "data": "Data used",
    "transform": "Transform and why it was chosen",
    "normality": "Normality before and after the transform",
    "chart": "Control chart in measurement units",
    "capability": "Capability and expected ppm",
    "review": "Review decision",
    "methods": "Methods and references",
}


#: The caution printed on the first page and in the verdict section.
CAUTION_TEXT = CAUTION

#: How the chart types are named in the report.
CHART_NAMES = {"individuals": "individuals and moving range", "xbar_r": "X̄ and R", "xbar_s": "X̄ and S"}


#: How the run-rule sets are named in the report.
RULE_NAMES = {"beyond_limits": "beyond-the-limits", "western_electric": "Western Electric", "nelson": "Nelson"}


_DASH = "—"


@dataclass(frozen=True, slots=True)
class ReportMeta:
    """What the report header says about where the data came from.

    Attributes
    ----------
    plant, line, characteristic, units, lot, shift, operator : str or None
        Free text; ``characteristic`` and ``units`` default to the Analysis's own.
    date : str or None
        ISO date (or date-time) of the shift or report. None leaves the date out (the
        report never uses the current time, so the same input gives the same file).
    data_sha256 : str or None
        SHA-256 of the measurements. None computes it with
        :func:`qcnorm.store.data_sha256` (one line per value, ``repr(float(v))``, plus a
        TAB and the JSON-quoted subgroup label when there are subgroups; lines joined by
        newline; UTF-8), the same fingerprint the history store keeps.
    """

    plant: str | None = None
    line: str | None = None
    characteristic: str | None = None
    units: str | None = None
    lot: str | None = None
    shift: str | None = None
    operator: str | None = None
    date: str | None = None
    data_sha256: str | None = None


def fmt(v: Any, kind: str = "value") -> str:
    """Format one number for the report (the single formatting rule of the PDF).

    Parameters
    ----------
    v : number, bool or None
        None and non-finite numbers print as an em dash.
    kind : {"value", "index", "p", "ppm", "int", "stat"}
        ``value``: 4 significant digits (measurements, limits); ``index``: capability
        indices, 2 decimals (the trade's convention); ``p``: p-values, 3 significant digits and
        "< 0.0001" below 1e-4; ``ppm``: whole numbers from 100 up with thousands
        separators, "< 0.01" below 0.01, else 3 significant digits; ``int``: integers; ``stat``: test
        statistics, 4 significant digits.
    """
    if v is None:
        return _DASH
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    try:
        x = float(v)
    except (TypeError, ValueError):
        return str(v)
    if not math.isfinite(x):
        return _DASH
    if kind == "int":
        return str(int(round(x)))
    if kind == "index":
        return f"{x:.2f}"
    if kind == "p":
        return "< 0.0001" if x < 1e-4 else f"{x:.3g}"
    if kind == "ppm":
        if x == 0:
            return "0"
        if abs(x) < 0.01:
            return "< 0.01"
        return f"{x:,.0f}" if abs(x) >= 100 else f"{x:.3g}"
    if kind in ("value", "stat"):
        return f"{x:.4g}"
    raise ConfigError(f"Unknown number format {kind!r}; use one of value, index, p, ppm, int, stat.")


def _get(obj: Any, *names: str, default: Any = None) -> Any:
    """First attribute (or mapping key) of ``obj`` that exists and is not None."""
    for n in names:
        if obj is None:
            return default
        v = obj.get(n) if isinstance(obj, Mapping) else getattr(obj, n, None)
        if v is not None:
            return v
    return default


def _text(v: Any) -> str:
    if v is None:
        return _DASH
    if isinstance(v, Mapping):
        return ", ".join(f"{k} = {fmt(x) if isinstance(x, (int, float)) else x}" for k, x in v.items()) or _DASH
    return str(v)
