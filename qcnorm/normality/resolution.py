"""Gauge resolution check: is the measurement step small against the spread?"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._results import Result
from ._kernels import _sorted_sample

# Gauge resolution
#: Coarse when the measurement step exceeds this fraction of the standard deviation
#: (common practice: fewer than about 12 steps across ±3 sd makes ties dominate) ...
RESOLUTION_STEP_TO_SD = 0.5


#: ... or exceeds RESOLUTION_SQRT_N / sqrt(n) standard deviations: the larger the
#: sample, the finer the step at which ties alone make the tests reject. Our own
#: calibration by simulation (normal samples rounded to a step, Anderson–Darling at 5 %):
#: at step/sd = 3/sqrt(n) about half of the samples are rejected, for n = 50 … 5000.
RESOLUTION_SQRT_N = 3.0


#: ... or when a sample of at least RESOLUTION_MIN_N_FOR_COUNT values holds fewer than
#: this many distinct values (common practice).
RESOLUTION_MIN_DISTINCT = 10


RESOLUTION_MIN_N_FOR_COUNT = 20


def resolution_step_limit(n: int) -> float:
    """Largest step/sd ratio not called coarse: min(0.5, 3/sqrt(n))."""
    return min(RESOLUTION_STEP_TO_SD, RESOLUTION_SQRT_N / np.sqrt(n))


@dataclass(frozen=True, slots=True)
class ResolutionResult(Result):
    """Whether the measurement resolution is too coarse for normality tests.

    Attributes
    ----------
    n_distinct : int
        Number of distinct values.
    step : float
        Smallest gap between distinct values; for rounded data, the measurement step.
    sd : float
        Sample standard deviation (n − 1).
    step_to_sd : float
        step / sd.
    coarse : bool
        True when step/sd > min(0.5, 3/√n), or when n ≥ 20 and fewer than 10 distinct
        values (see ``rule``).
    message : str
        Plain words: what was found and what to do.
    rule : str
        The rule applied.
    """

    n_distinct: int
    step: float
    sd: float
    step_to_sd: float
    coarse: bool
    message: str
    rule: str = (
        f"coarse if step/sd > {RESOLUTION_STEP_TO_SD} (common practice), or step/sd > "
        f"{RESOLUTION_SQRT_N:g}/sqrt(n) (qcnorm's calibration by simulation), or, with "
        f"n >= {RESOLUTION_MIN_N_FOR_COUNT}, fewer than {RESOLUTION_MIN_DISTINCT} distinct "
        "values (common practice)"
    )


def _resolution_from_sorted(xs: np.ndarray) -> ResolutionResult:
    n = xs.size
    gaps = np.diff(xs)
    # Gaps below 1e-9 of the range are floating-point noise of the same reading.
    tol = 1e-9 * (xs[-1] - xs[0])
    above = gaps > tol
    n_real = int(np.count_nonzero(above))
    # speed: with no ties (continuous data) every gap is real: no masked copy (same minimum)
    step = float(gaps.min() if n_real == gaps.size else gaps[above].min())
    n_distinct = n_real + 1
    sd = float(xs.std(ddof=1))
    ratio = step / sd
    few = n >= RESOLUTION_MIN_N_FOR_COUNT and n_distinct < RESOLUTION_MIN_DISTINCT
    coarse = bool(ratio > resolution_step_limit(n) or few)
    if coarse:
        message = (
            f"Coarse measurement resolution: {n_distinct} distinct values in {n}, step "
            f"{step:.4g} is {ratio:.2g} standard deviations. With this many values, ties "
            "like these can make normality tests reject even for a normal process; use a "
            "finer gauge or record more decimals, and judge the shape from the probability plot."
        )
    else:
        message = (
            f"Resolution adequate: {n_distinct} distinct values in {n}, step {step:.4g} "
            f"is {ratio:.2g} standard deviations."
        )
    return ResolutionResult(n_distinct=n_distinct, step=step, sd=sd, step_to_sd=float(ratio),
                            coarse=coarse, message=message)


def resolution_check(x) -> ResolutionResult:
    """Detect measurement resolution too coarse for normality tests.

    Parameters
    ----------
    x : array_like
        At least 2 finite measurements, not all equal.

    Returns
    -------
    ResolutionResult

    Notes
    -----
    step = smallest positive gap between sorted distinct values (gaps below 1e-9 of the
    range count as ties). Coarse when

    - step/sd > 0.5 (common practice: fewer than about 12 steps across ±3 sd), or
    - step/sd > 3/√n (qcnorm's own calibration: simulated normal samples rounded to a
      step of 3/√n standard deviations are rejected by Anderson–Darling at 5 % about half
      the time, for n from 50 to 5000), or
    - n ≥ 20 and fewer than 10 distinct values (common practice).

    Rounding piles the data on a grid, and the empirical distribution function then moves
    in jumps that goodness-of-fit tests detect, the more surely the larger n is.
    """
    return _resolution_from_sorted(_sorted_sample(x, "resolution_check", 2))
