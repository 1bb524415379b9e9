"""The one table of transform families by name, and the two factories that use it.

``make_transform(name, **options)`` builds an unfitted transform; ``transform_from_params(name,
params)`` rebuilds a fitted one from stored parameters (a frozen baseline) by asking the
family class (``param_keys``, ``fitted_names``, ``_from_params``). Adding a family is one
file with its ``Transform`` subclass and one entry in ``TRANSFORMS``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from ..errors import ConfigError
from .base import Transform
from .identity import Identity
from .johnson import Johnson
from .log import Log
from .power import BoxCox, YeoJohnson

#: The one table of transform names (request names -> class).
TRANSFORMS: dict[str, type[Transform]] = {
    "none": Identity,
    "log": Log,
    "boxcox": BoxCox,
    "yeojohnson": YeoJohnson,
    "johnson": Johnson,
}


def make_transform(name: str, **options: Any) -> Transform:
    """An unfitted transform by name ("none", "log", "boxcox", "yeojohnson", "johnson")."""
    cls = TRANSFORMS.get(name) if isinstance(name, str) else None
    if cls is None:
        raise ConfigError(
            f"Unknown transform {name!r}. Valid names: {', '.join(TRANSFORMS)}."
        )
    try:
        return cls(**options)
    except TypeError as exc:
        raise ConfigError(f"Invalid option for the {name!r} transform: {exc}.") from None


def _fitted_classes() -> dict[str, type[Transform]]:
    """Fitted name -> class, in registry order ("none", "log", …, "johnson_su", "johnson_sb", "johnson_sl")."""
    return {fitted: cls for cls in TRANSFORMS.values() for fitted in cls.fitted_names()}


def transform_from_params(name: str, params: Mapping[str, Any]) -> Transform:
    """A fitted transform rebuilt from its ``name`` and ``params_`` (no refitting).

    ``name`` is a fitted name (``"none"``, ``"log"``, ``"boxcox"``, ``"yeojohnson"``,
    ``"johnson_su"``, ``"johnson_sb"``, ``"johnson_sl"``). Used to freeze a baseline
    transform and apply it to new data. The stored values named by the family's
    ``param_keys`` must be finite numbers; the family's ``_from_params`` does the rest.
    """
    by_name = _fitted_classes()
    if not isinstance(name, str) or name not in by_name:
        raise ConfigError(f"Unknown transform name {name!r}. Valid names: {', '.join(by_name)}.")
    cls = by_name[name]
    keys = cls.param_keys
    missing = [k for k in keys if k not in params or params[k] is None]
    if missing:
        raise ConfigError(f"Stored parameters of the {name!r} transform lack {', '.join(missing)}; "
                          "re-run the analysis to store a complete transform.")
    try:
        vals = {k: float(params[k]) for k in keys}
    except (TypeError, ValueError):
        raise ConfigError(f"Stored parameters of the {name!r} transform are not numbers: {dict(params)!r}.") from None
    if not all(map(math.isfinite, vals.values())):
        raise ConfigError(f"Stored parameters of the {name!r} transform are not finite: {vals!r}.")
    t = cls._from_params(name, vals, params)
    t._fitted = True
    return t
