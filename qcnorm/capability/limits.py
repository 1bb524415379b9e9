"""Specification limits mapped to the transformed scale (the transform route).

A limit outside the transform's domain on the side the data can never reach is left out
of the indices with a note (the shared one-sided rule, :func:`.support.side_status`); a
limit on the impossible side is refused.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import ConfigError
from .support import side_status, transform_support


def _fmt(v: float) -> str:
    """Numbers in messages: a few significant digits."""
    return f"{v:.4g}"


def _transform_one(transform: Any, v: float) -> float:
    out = np.asarray(transform.transform(np.asarray([v], dtype=np.float64)), dtype=np.float64)
    return float(out.reshape(-1)[0])


def _in_domain(transform: Any, v: float) -> bool:
    return bool(np.asarray(transform.in_domain(np.asarray([v], dtype=np.float64))).all())


def _domain_text(domain: Any) -> str:
    lo = "(" if getattr(domain, "low_open", True) else "["
    hi = ")" if getattr(domain, "high_open", True) else "]"
    return f"{lo}{_fmt(domain.low)}, {_fmt(domain.high)}{hi}"


def _map_limit(
    transform: Any, value: float, which: str, other_given: bool
) -> tuple[float | None, str | None]:
    """Map one limit to the transformed scale.

    Returns (transformed value or None, note). None with a note means "this side
    cannot fail"; a limit on the impossible side raises ConfigError.
    """
    name = getattr(transform, "name", "the transform")
    domain = transform.domain
    label = "LSL" if which == "lower" else "USL"
    if _in_domain(transform, value):
        t = _transform_one(transform, value)
        if math.isfinite(t):
            return t, None
        # A finite value mapped to ±inf sits on the domain's edge.
        side = "below" if t < 0 else "above"
    elif value <= domain.low:
        side = "below"
    elif value >= domain.high:
        side = "above"
    else:  # pragma: no cover - a domain with a hole is not a transform we build
        raise ConfigError(
            f"The {label} {_fmt(value)} cannot be mapped through the {name} transform "
            f"(domain {_domain_text(domain)}). Choose another transform or check the limit."
        )
    if (which == "lower" and side == "below") or (which == "upper" and side == "above"):
        # the shared one-sided rule decides what the side means (same as the percentile route)
        status = side_status(transform_support(transform), value, which)
        lowest = which == "lower"
        end = _fmt(domain.low if lowest else domain.high)
        if status == "cannot_fail":
            return None, (
                f"{label} {_fmt(value)} lies at or {'below the lowest' if lowest else 'above the highest'} "
                f"value the {name} transform allows ({end}): no product can "
                f"{'fall below' if lowest else 'rise above'} it, so "
                + (f"only the {'upper' if lowest else 'lower'} side is assessed." if other_given
                   else "that side cannot fail.")
            )
        return None, (
            f"{label} {_fmt(value)} lies beyond the {'lower' if lowest else 'upper'} bound that the {name} "
            f"transform fitted to the data ({end}): this model shows no risk on that side, but a bound "
            "fitted to the data is not a physical limit, so the side is NOT shown as 'cannot fail' — "
            "compare the range of figures across the adequate models."
        )
    if which == "upper":
        raise ConfigError(
            f"The USL {_fmt(value)} lies at or below the lowest value the {name} transform allows "
            f"({_fmt(domain.low)}): every part would be out of specification. Check the limit "
            "(units, sign, a decimal point) or choose a transform whose domain includes it."
        )
    raise ConfigError(
        f"The LSL {_fmt(value)} lies at or above the highest value the {name} transform allows "
        f"({_fmt(domain.high)}): every part would be out of specification. Check the limit "
        "(units, sign, a decimal point) or choose a transform whose domain includes it."
    )
