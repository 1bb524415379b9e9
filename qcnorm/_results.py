"""Shared base for frozen result dataclasses: one JSON-safe ``to_dict``.

Every result type is ``@dataclass(frozen=True, slots=True)`` and inherits
:class:`Result`. Fields whose name starts with ``_`` and fields listed in the class
attribute ``_skip_in_dict`` are left out of ``to_dict`` (use it for fitted objects and
large arrays the JSON does not need).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from typing import Any, ClassVar

import numpy as np

__all__ = ["Result", "to_jsonable"]


def to_jsonable(obj: Any) -> Any:
    """Convert numbers, arrays, dataclasses, mappings and sequences to JSON-safe values.

    Non-finite floats become ``None`` (JSON has no NaN); numpy scalars become Python
    scalars; arrays and tuples become lists.
    """
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, (np.bool_,)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        v = float(obj)
        return v if math.isfinite(v) else None
    if isinstance(obj, Result):
        return obj.to_dict()
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, np.ndarray):
        return [to_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, Mapping):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple, set, frozenset)):
        return [to_jsonable(v) for v in obj]
    if hasattr(obj, "to_dict"):
        return to_jsonable(obj.to_dict())
    return str(obj)


class Result:
    """Mixin for frozen result dataclasses."""

    __slots__ = ()
    _skip_in_dict: ClassVar[tuple[str, ...]] = ()

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for f in dataclasses.fields(self):  # type: ignore[arg-type]
            if f.name.startswith("_") or f.name in self._skip_in_dict:
                continue
            out[f.name] = to_jsonable(getattr(self, f.name))
        return out
