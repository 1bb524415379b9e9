"""Control limits back in measurement units (:func:`limits_in_units`).

Centre, limits and points are mapped with a fitted transform's ``inverse_transform``; a
limit outside what the transform can reach is reported as missing with a note, never as a
made-up number.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import ConfigError
from .results import ControlChart, UnitsLimits


def limits_in_units(chart: ControlChart, transform: Any) -> UnitsLimits:
    """Back-transform a chart's centre, limits and points to measurement units.

    Parameters
    ----------
    chart : ControlChart
        A chart computed on the transformed scale.
    transform : fitted transform
        Object with ``inverse_transform(y)``, ``image`` -> (low, high) on the
        transformed scale, and ``name``.

    Returns
    -------
    UnitsLimits
        Centre, limits per point and points in measurement units. Limits become
        asymmetric about the centre. A limit at or beyond the edge of the transform's
        image has no counterpart in measurement units: it is NaN and the note says so.

    Notes
    -----
    For an individuals chart the points are the original values. For X̄ charts the
    points are inverse_transform(mean of transformed values), and the limits in units
    bound that back-transformed mean, not the arithmetic mean of the raw values.
    Because the transform is monotone increasing, a point is outside its limits in
    units exactly when it is outside them on the transformed scale.
    """
    if not isinstance(chart, ControlChart):
        raise ConfigError(
            f"The 'chart' parameter of limits_in_units must be a ControlChart. Got {type(chart).__name__} instead."
        )
    for attr in ("inverse_transform", "image"):
        if not hasattr(transform, attr):
            raise ConfigError(
                f"The 'transform' parameter of limits_in_units must be a fitted transform with "
                f"inverse_transform and image. Got {type(transform).__name__} without {attr!r}."
            )
    image = transform.image() if callable(transform.image) else transform.image
    low, high = float(image[0]), float(image[1])
    name = str(getattr(transform, "name", type(transform).__name__))

    def back(v: np.ndarray) -> np.ndarray:
        v = np.asarray(v, dtype=np.float64)
        if v.size > 1 and v[0] == v[-1] and np.all(v == v[0]):
            # one limit for every point (equal subgroup sizes): map it once (same numbers)
            return np.full(v.shape, back(v[:1])[0])
        if v.size > 1 and low < v.min() and v.max() < high:  # all inside (NaN fails the tests)
            return np.asarray(transform.inverse_transform(v), dtype=np.float64)  # speed: no masks
        out = np.full(v.shape, np.nan)
        inside = (v > low) & (v < high)
        if inside.any():
            out[inside] = np.asarray(transform.inverse_transform(v[inside]), dtype=np.float64)
        return out

    def note(v: np.ndarray, side: str) -> str | None:
        if v.size and low < v.min() and v.max() < high:  # speed: no mask when all inside
            return None
        outside = ~((v > low) & (v < high))
        if not outside.any():
            return None
        where = "" if outside.all() else f" for {int(outside.sum())} of {outside.size} points"
        return (
            f"no {side} limit in measurement units{where}: the {side} limit falls outside what the "
            f"transform ({name}) can reach"
        )

    center = back(np.array([chart.center]))[0]
    return UnitsLimits(
        center=float(center),
        ucl=back(chart.ucl),
        lcl=back(chart.lcl),
        points=back(chart.points),
        ucl_note=note(chart.ucl, "upper"),
        lcl_note=note(chart.lcl, "lower"),
        transform=name,
    )
