"""Normality diagnostics (owner: normality work; this header is the shared primitive).

Anderson–Darling is computed from log-probabilities so it stays finite for very large
skewed samples.
"""

from __future__ import annotations

import numpy as np

__all__ = ["anderson_darling_a2"]


def anderson_darling_a2(log_cdf_sorted: np.ndarray, log_sf_sorted: np.ndarray) -> float:
    r"""Anderson–Darling A² from log F(x_(i)) and log(1 − F(x_(i))) of the SORTED sample.

    Notes
    -----
    A² = −n − (1/n) Σ_{i=1}^{n} (2i − 1) [ln F(x_(i)) + ln(1 − F(x_(n+1−i)))]
    (D'Agostino & Stephens 1986, eq. 4.2). Working with logs keeps it finite where
    F rounds to 0 or 1 in double precision.
    """
    lc = np.asarray(log_cdf_sorted, dtype=np.float64)
    ls = np.asarray(log_sf_sorted, dtype=np.float64)
    n = lc.size
    i = np.arange(1, n + 1, dtype=np.float64)
    s = np.dot(2.0 * i - 1.0, lc + ls[::-1])
    return float(-n - s / n)
