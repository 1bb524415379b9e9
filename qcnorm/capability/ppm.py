"""Parts per million outside the limits: expected (normal model, log space) and observed."""

from __future__ import annotations

import math

import numpy as np
from scipy.special import log_ndtr

_LN_1E6 = math.log(1e6)


def _ppm_sides(
    lo: float | None, hi: float | None, mu: float, sigma: float
) -> tuple[float | None, float | None, float | None]:
    """Expected ppm below, above and total, computed in log space.

    ppm_below = 10^6 Φ((L − μ)/σ), ppm_above = 10^6 Φ(−(U − μ)/σ); log Φ from
    ``log_ndtr`` keeps values far in the tail from rounding to 0 before scaling.
    """
    logs = []
    below = above = None
    if lo is not None:
        lb = float(log_ndtr((lo - mu) / sigma)) + _LN_1E6
        below = math.exp(lb)
        logs.append(lb)
    if hi is not None:
        la = float(log_ndtr(-(hi - mu) / sigma)) + _LN_1E6
        above = math.exp(la)
        logs.append(la)
    if not logs:
        return None, None, None
    total = math.exp(float(np.logaddexp.reduce(np.asarray(logs))))
    return below, above, total


def _observed_ppm(
    xr: np.ndarray, lsl: float | None, usl: float | None
) -> tuple[float | None, float | None, float | None]:
    """Observed ppm of the raw values below the LSL, above the USL and in total."""
    n = int(xr.size)
    obs_b = obs_a = obs_t = None
    if lsl is not None or usl is not None:
        cnt_b = int(np.count_nonzero(xr < lsl)) if lsl is not None else 0
        cnt_a = int(np.count_nonzero(xr > usl)) if usl is not None else 0
        obs_b = cnt_b * 1e6 / n if lsl is not None else None
        obs_a = cnt_a * 1e6 / n if usl is not None else None
        obs_t = (cnt_b + cnt_a) * 1e6 / n
    return obs_b, obs_a, obs_t
