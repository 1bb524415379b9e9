"""Step 4b of analyze(), the distribution fits, as a second lane that may run in a thread
beside the transform, normality, chart and capability steps.

The six families fall in two groups. Four (3-parameter lognormal, Weibull, gamma,
exponential) need nothing from the other steps and start at once. The normal and
lognormal fits reuse the Anderson–Darling results of x and ln x that the transform
step computed (case 3 of the normal test), so they are queued once that step is done.
Both groups are merged into one ranking exactly as :func:`qcnorm.distributions.fit_distributions`
ranks them, so the answer is the same whether one thread or two did the work.

Why threads: at large n every fit is a few passes of numpy/scipy ufuncs over the whole
sample, which release the GIL; the two lanes are about equally long, so on two cores the
wall time of analyze() nearly halves (benchmarks/README.md). Below ``PARALLEL_MIN_N``
values, or with ``QCNORM_THREADS=1``, everything runs in the calling thread, in order.
"""

from __future__ import annotations

import os
from concurrent.futures import Future
from typing import Any

import numpy as np

from ..distributions import DistributionRanking, percentile_capability
from ..distributions.fitting import _fit_each, _prepare, _ranking
from ..distributions.registry import _FAMILIES
from ..errors import QcnormError
from ..selection import gauge_zero_step
from .board import TaskBoard

__all__ = ["PARALLEL_MIN_N", "DistributionLane", "threads_allowed"]

#: Smallest sample for which analyze() uses a second thread (transform candidates and
#: distribution families shared between two threads). Measured on the project's 2-core
#: machine (wall time, 1 thread / 2 threads): n = 5,000 1.00×, 20,000 1.23×, 50,000 1.45×,
#: 200,000 1.64×. Below it a thread saves nothing, and a batch already keeps every core
#: busy with one characteristic per process.
PARALLEL_MIN_N = 20_000

#: Families whose Anderson–Darling result comes from the transform step.
_SHARED_AD = ("normal", "lognormal")
#: The others, posted longest first (a scheduling order only: the ranking follows the
#: family table). Gamma's A² needs the incomplete gamma function over every value, the
#: slowest single pass; ending on short tasks keeps both threads busy to the end
#: (measured at 10^6: about 50 ms less wall time than the table's order).
_OWN_AD = ("gamma", "weibull", "lognormal3", "exponential")  # tests/test_fitlane.py: every family once


def threads_allowed(n: int) -> bool:
    """Whether analyze() of ``n`` values may use a second thread: n ≥ PARALLEL_MIN_N, more
    than one CPU available to this process, and QCNORM_THREADS not set to 1 (or 0)."""
    if n < PARALLEL_MIN_N:
        return False
    env = os.environ.get("QCNORM_THREADS", "").strip()
    if env:
        try:
            return int(env) > 1
        except ValueError:
            return False
    try:
        cpus = len(os.sched_getaffinity(0))
    except (AttributeError, OSError):  # not on Linux
        cpus = os.cpu_count() or 1
    return cpus > 1


def _fit_group(xs: np.ndarray, names: tuple[str, ...], case3: dict | None, zstep: float | None,
               prepared: tuple | None = None):
    """(fits, skipped) of some families, or the QcnormError that stopped them."""
    try:
        return _fit_each(xs, names, case3, zstep, prepared)
    except QcnormError as exc:
        return exc


class DistributionLane:
    """The distribution fits of one analyze() call, posted on a :class:`TaskBoard`:
    :meth:`start` before the transform step, :meth:`add_shared` after it, :meth:`finish`
    when the capability is known."""

    def __init__(self, xs: np.ndarray, zeros: str, board: TaskBoard):
        self._xs = xs
        # readings of 0 that the gauge rule (selection.gauge_zero_step) calls rounded small
        # values: the positive families take them at h/4 (distributions._fit_each), unless the
        # user asked to keep zeros as zeros
        self._zstep = gauge_zero_step(xs) if zeros == "censor" else None
        self._board = board
        self._parts: list[Future] = []
        self._prepared = _prepare(xs, self._zstep)  # ln x etc. once for every family's task

    def start(self) -> None:
        """Post the families that need nothing from the other steps, one task each."""
        for nm in _OWN_AD:
            self._parts.append(self._board.post(_fit_group, self._xs, (nm,), None, self._zstep,
                                               self._prepared))

    def add_shared(self, ads: dict) -> None:
        """Post the normal and lognormal fits with the transform step's A² of x and ln x."""
        ad_x = ads["none"][1] if "none" in ads else None
        log_c = ads.get("log")  # its A² is that of ln x only without a shift
        ad_ln = log_c[1] if log_c is not None and log_c[0].params_.get("shift") == 0.0 else None
        case3 = {"normal": ad_x, "lognormal": ad_ln}
        self._parts.append(self._board.post(_fit_group, self._xs, _SHARED_AD, case3, self._zstep, self._prepared))

    def finish(self, cap, lsl, usl, warnings: list[str]) -> tuple[DistributionRanking | None, Any]:
        """The ranking and the percentile cross-check of the best fit; a failure becomes a
        warning, as in the one-thread route."""
        parts = [f.result() for f in self._board.wait(self._parts)]
        dists: DistributionRanking | None = None
        perc = None
        try:
            fits: list = []
            skipped: list = []
            for part in parts:
                if isinstance(part, QcnormError):
                    raise part
                fits += part[0]
                skipped += part[1]
            dists = _ranking(fits, skipped, tuple(_FAMILIES))
            if cap is not None and dists.best is not None:
                perc = percentile_capability(dists.best, lsl=lsl, usl=usl)
        except QcnormError as exc:
            warnings.append(f"No distribution could be fitted for the percentile cross-check: {exc}")
        return dists, perc
