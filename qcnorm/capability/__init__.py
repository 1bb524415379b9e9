"""Capability and performance indices on the transformed scale.

The control chart supplies the centre and the two sigmas on the transformed scale;
this package maps the specification limits through the same transform and computes
Cp, Cpk, Pp, Ppk, Cpm, the one-sided indices, their confidence intervals, expected
and observed ppm, and a verdict against a required index.

A specification limit outside the transform's domain on the side the data can never
reach (LSL = 0 under a log transform: ln 0 = −∞) means that side cannot fail. It is
kept as the user gave it but left out of the indices, and a note says so in plain
words. A limit on the wrong side (an USL below every value the transform allows)
is refused.

Capability of a process that is not in statistical control is not meaningful; the
verdict text says so first whenever ``stable=False``.

The package, one module per responsibility:

- :mod:`.results` — the :class:`Capability` and :class:`Interval` result classes;
- :mod:`.support` — the one-sided rule shared with the percentile route and the model
  range (:class:`Support`, :func:`side_status`, :func:`transform_support`,
  :func:`distribution_support`);
- :mod:`.limits` — specification limits mapped to the transformed scale;
- :mod:`.indices` — Cp/Cpk/Pp/Ppk and their chi-square and Bissell intervals;
- :mod:`.ppm` — expected and observed parts per million;
- :mod:`.verdict` — :data:`VERDICTS` and the verdict sentence;
- :mod:`.compute` — :func:`capability`, the steps in order.
"""

from __future__ import annotations

from .compute import capability
from .ppm import _ppm_sides
from .results import Capability, Interval
from .support import SIDE_STATUSES, Support, distribution_support, side_status, transform_support
from .verdict import VERDICTS

__all__ = [
    "Interval",
    "Capability",
    "capability",
    "VERDICTS",
    "Support",
    "SIDE_STATUSES",
    "side_status",
    "transform_support",
    "distribution_support",
]
