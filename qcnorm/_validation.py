"""Validation helpers used once, at the boundary of each public function.

Messages follow one shape: "The 'x' parameter of f must be ... Got ... instead."
followed, where useful, by what to do next.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import numpy as np

from .errors import ConfigError, DataError

__all__ = ["check_sample", "check_choice", "check_optional_float", "as_float_array"]


def as_float_array(x: Any, name: str = "values", func: str = "qcnorm") -> np.ndarray:
    """Return ``x`` as a 1-D float64 array or raise DataError in plain words."""
    try:
        arr = np.asarray(x, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise DataError(
            f"The '{name}' parameter of {func} must be a sequence of numbers. "
            f"Got {type(x).__name__} that cannot be read as numbers instead ({exc})."
        ) from None
    if arr.ndim == 0:
        arr = arr.reshape(1)
    if arr.ndim != 1:
        raise DataError(
            f"The '{name}' parameter of {func} must be one-dimensional. "
            f"Got an array of shape {arr.shape} instead."
        )
    return arr


def check_sample(
    x: Any,
    name: str = "values",
    func: str = "qcnorm",
    *,
    min_n: int = 2,
    allow_constant: bool = False,
) -> np.ndarray:
    """Validate a sample of measurements.

    Returns a 1-D float64 array. Raises :class:`DataError` when values are not
    finite (naming how many and the first positions), when there are fewer than
    ``min_n`` values, or (unless ``allow_constant``) when all values are equal.
    """
    arr = as_float_array(x, name, func)
    bad = ~np.isfinite(arr)
    if bad.any():
        idx = np.flatnonzero(bad)
        where = ", ".join(str(i + 1) for i in idx[:5]) + (" …" if idx.size > 5 else "")
        raise DataError(
            f"The '{name}' parameter of {func} must hold finite numbers. "
            f"Got {idx.size} missing or infinite value(s) instead (positions {where}). "
            "Remove them or fix them in the source file."
        )
    if arr.size < min_n:
        raise DataError(
            f"The '{name}' parameter of {func} needs at least {min_n} values. "
            f"Got {arr.size} instead. Collect more measurements before analysing."
        )
    if not allow_constant and arr.size and np.ptp(arr) == 0:
        raise DataError(
            f"All {arr.size} values of '{name}' are equal ({arr[0]:g}): there is no spread to analyse. "
            "Check the gauge resolution or the column chosen."
        )
    return arr


def check_choice(value: str, choices: Iterable[str], name: str, func: str = "qcnorm") -> str:
    """Return ``value`` if it is one of ``choices``; else a ConfigError listing them."""
    options = list(choices)
    if value not in options:
        raise ConfigError(
            f"The '{name}' parameter of {func} must be one of {', '.join(repr(o) for o in options)}. "
            f"Got {value!r} instead."
        )
    return value


def check_optional_float(value: Any, name: str, func: str = "qcnorm") -> float | None:
    """None stays None; anything else must be a finite number."""
    if value is None:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ConfigError(
            f"The '{name}' parameter of {func} must be a number or left blank. Got {value!r} instead."
        ) from None
    if not np.isfinite(v):
        raise ConfigError(f"The '{name}' parameter of {func} must be finite. Got {value!r} instead.")
    return v
