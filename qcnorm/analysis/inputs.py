"""The inputs of analyze(): its choices and limits, and the checks at the boundary.

A :class:`qcnorm.data.Measurements` is unpacked here, the values checked (enough of them,
finite, of a magnitude and spread double precision can hold) and the settings validated,
so the steps of :mod:`.pipeline` can trust what they get.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from .._validation import check_choice, check_optional_float, check_sample
from ..control import RULE_SETS
from ..errors import ConfigError, DataError
from ..selection import ZERO_CHOICES
from .results import Baseline

TRANSFORM_CHOICES = ("auto", "none", "log", "boxcox", "yeojohnson", "johnson")
CHART_CHOICES = ("auto", "individuals", "xbar_r", "xbar_s")
RULE_CHOICES = tuple(RULE_SETS)  # "beyond_limits" (default), "western_electric", "nelson"
MAX_MAGNITUDE = 1e50  # beyond this, fourth moments overflow double precision; no real measurement is here
MIN_N = 8  # the Anderson–Darling p-value (D'Agostino & Stephens 1986) is given from n = 8
MIN_SPREAD = 1e-60  # below this, fourth moments underflow double precision
SMALL_N = 30  # below this, capability intervals are wide (common practice: ≥ 30, better ≥ 100)


_FUNC = "analyze"


def _unpack_measurements(values: Any, subgroups: Any, rows: Any, characteristic: Any, units: Any):
    """A Measurements object brings its values, subgroups, row numbers, characteristic,
    units and the rows excluded at reading; explicit arguments win. Plain values pass
    through. Returns (values, subgroups, rows, characteristic, units, excluded, warnings)."""
    ingest_excluded: tuple = ()
    ingest_warnings: tuple[str, ...] = ()
    if hasattr(values, "values") and hasattr(values, "report") and not isinstance(values, np.ndarray):
        m = values
        if subgroups is None:
            subgroups = m.subgroups
        if rows is None:
            rows = m.rows
        if not characteristic:
            from ..data import split_units

            characteristic = getattr(m, "characteristic", None) or (
                split_units(str(m.column))[0] if getattr(m, "column", None) else None
            )
        units = units or getattr(m, "units", None)
        ingest_excluded = tuple(
            {"row": int(e.row), "reason": str(e.reason)} for e in m.report.excluded
        )
        ingest_warnings = tuple(m.report.warnings)
        values = m.values
    return values, subgroups, rows, characteristic, units, ingest_excluded, ingest_warnings


def _checked_values(values: Any, ingest_excluded: tuple) -> np.ndarray:
    """The values as a float array: at least MIN_N finite ones, of a magnitude and spread
    double precision can compute with; otherwise a DataError saying what to do."""
    func = _FUNC
    x = check_sample(values, "values", func, min_n=1, allow_constant=True)
    n = x.size
    if n < MIN_N:
        dropped = ""
        if ingest_excluded:
            shown = "; ".join(f"row {e['row']}: {e['reason'].split(';')[0]}" for e in ingest_excluded[:4])
            more = " …" if len(ingest_excluded) > 4 else ""
            dropped = f" ({len(ingest_excluded)} row(s) were left out when reading — {shown}{more})"
        raise DataError(
            f"Only {n} usable value(s){dropped}: qcnorm needs at least {MIN_N} to choose a transform and "
            "test normality (the Anderson–Darling test needs 8), and 30 or more for a capability study. "
            "Collect more measurements, or check the column chosen."
        )
    x = check_sample(x, "values", func, min_n=MIN_N)
    big = np.abs(x) > MAX_MAGNITUDE
    if big.any():
        idx = np.flatnonzero(big)
        raise DataError(
            f"{idx.size} value(s) have a magnitude above {MAX_MAGNITUDE:g} (first at position {idx[0] + 1}: "
            f"{x[idx[0]]:g}). No measurement in any unit is that large: check the column chosen and the "
            "decimal/thousands separators of the file."
        )
    spread = float(np.ptp(x))
    scale = float(np.max(np.abs(x)))
    if spread < MIN_SPREAD or spread < 1e-10 * scale:
        raise DataError(
            f"The values differ by only {spread:.3g} (largest magnitude {scale:.3g}): the spread is too small "
            "to compute with (it is lost in the precision of the numbers). Express the data in smaller units "
            "(e.g. µm instead of m) or subtract a nominal value."
        )
    return x


def _checked_limits(lsl: Any, usl: Any, target: Any, required_index: Any, confidence: Any):
    """(lsl, usl, target, required_index, confidence) as floats, checked."""
    func = _FUNC
    lsl = check_optional_float(lsl, "lsl", func)
    usl = check_optional_float(usl, "usl", func)
    target = check_optional_float(target, "target", func)
    required_index = check_optional_float(required_index, "required_index", func)
    if required_index is None or required_index <= 0:
        raise ConfigError("The required capability index must be a positive number such as 1.33.")
    conf = check_optional_float(confidence, "confidence", func)
    if conf is None or not 0.0 < conf < 1.0:
        raise ConfigError(
            f"The confidence level must be a fraction between 0 and 1, such as 0.95 for 95 %. "
            f"Got {confidence!r}: give 0.95 (or 0.90, 0.99) rather than a percentage."
        )
    if lsl is not None and usl is not None and lsl >= usl:
        raise ConfigError(f"The lower spec limit ({lsl:g}) must be below the upper spec limit ({usl:g}).")
    return lsl, usl, target, required_index, conf


def _checked_layout(n: int, transform: str, zeros: str, chart: str, rules: str, baseline: Any,
                    subgroups: Any, rows: Any, exclude: Any):
    """The choices checked against their lists; (baseline, subgroups, row numbers, exclusions)
    with a baseline dict read back, one subgroup label and one row number per value."""
    func = _FUNC
    check_choice(transform, TRANSFORM_CHOICES, "transform", func)
    check_choice(zeros, ZERO_CHOICES, "zeros", func)
    check_choice(chart, CHART_CHOICES, "chart", func)
    check_choice(rules, RULE_CHOICES, "rules", func)
    if isinstance(baseline, Mapping):
        baseline = Baseline.from_dict(baseline)
    if subgroups is not None:
        subgroups = np.asarray(subgroups, dtype=object).astype(str)
        if subgroups.size != n:
            raise DataError(
                f"There are {n} values but {subgroups.size} subgroup labels: each value needs one label."
            )
    row_numbers = np.arange(1, n + 1) if rows is None else np.asarray(rows, dtype=np.int64)
    if row_numbers.size != n:
        raise DataError(f"There are {n} values but {row_numbers.size} row numbers.")
    excl = _normalise_exclude(exclude)
    return baseline, subgroups, row_numbers, excl


def _normalise_exclude(exclude: Any) -> tuple[tuple[int, str], ...]:
    if exclude is None:
        return ()
    if isinstance(exclude, Mapping):
        items = list(exclude.items())
    else:
        items = []
        for e in exclude:
            if isinstance(e, (tuple, list)) and len(e) == 2:
                items.append((e[0], e[1]))
            else:
                items.append((e, "assignable cause"))
    out = []
    for idx, reason in items:
        try:
            i = int(idx)
        except (TypeError, ValueError):
            raise ConfigError(
                f"Excluded point {idx!r} is not a point number: list the chart points to exclude as "
                "whole numbers counted from 0 (the first point is 0)."
            ) from None
        out.append((i, str(reason or "assignable cause")))
    return tuple(out)
