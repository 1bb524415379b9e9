"""Anderson–Darling test of normality (mean and SD estimated), computed in log space."""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .._results import Result
from .._validation import check_sample
from ..errors import DataError
from ._kernels import _deviations, _log_phi_pair_sorted, _vdot

def anderson_darling_a2(log_cdf_sorted: np.ndarray, log_sf_sorted: np.ndarray) -> float:
    r"""Anderson–Darling A² from log F(x_(i)) and log(1 − F(x_(i))) of the SORTED sample.

    Two-dimensional input holds one sorted sample per row and gives an array of A²,
    one per row (used to score many candidate fits at once).

    Notes
    -----
    A² = −n − (1/n) Σ_{i=1}^{n} (2i − 1) [ln F(x_(i)) + ln(1 − F(x_(n+1−i)))]
    (D'Agostino & Stephens 1986, eq. 4.2). Working with logs keeps it finite where
    F rounds to 0 or 1 in double precision.
    """
    lc = np.asarray(log_cdf_sorted, dtype=np.float64)
    ls = np.asarray(log_sf_sorted, dtype=np.float64)
    n = lc.shape[-1]
    if lc.ndim == 1:
        return float(-n - _vdot(lc + ls[::-1], _ad_weights(n)) / n)
    return -n - np.einsum("...i,i->...", lc + ls[..., ::-1], _ad_weights(n)) / n


@lru_cache(maxsize=8)
def _ad_weights(n: int) -> np.ndarray:
    """The weights 2i − 1, i = 1…n, of the A² sum (cached, read-only: the same n is
    scored many times, e.g. every transform candidate and every Johnson z)."""
    w = np.arange(1.0, 2.0 * n, 2.0)
    w.setflags(write=False)
    return w


# Anderson–Darling
#: Smallest sample for which the Anderson–Darling p-value is given. The Table 4.9
#: approximations of D'Agostino & Stephens (1986) are stated for the modified
#: statistic A* and hold well from about n = 8 (common practice).
AD_MIN_N = 8


_AD_METHOD = (
    "Anderson-Darling, normal with mean and standard deviation (n-1) estimated "
    "(case 3); p-value from D'Agostino & Stephens (1986) Table 4.9"
)


# Beyond this A* the last Table 4.9 quadratic turns upwards (its vertex,
# 5.709 / (2 * 0.0186)); the p-value there is below 1e-189 and is reported as 0.
_AD_P_VERTEX = 5.709 / (2.0 * 0.0186)


@dataclass(frozen=True, slots=True)
class ADResult(Result):
    """Anderson–Darling test of normality (mean and sd estimated).

    Attributes
    ----------
    statistic : float
        A², the Anderson–Darling statistic.
    statistic_star : float
        A* = A²(1 + 0.75/n + 2.25/n²), the small-sample modified statistic.
    p_value : float
        Approximate p-value from A* (D'Agostino & Stephens 1986, Table 4.9), in [0, 1].
    n : int
        Sample size.
    method : str
        What was computed, in words.
    note : str
        Plain-words remark ('' when there is nothing to add).
    """

    statistic: float
    statistic_star: float
    p_value: float
    n: int
    method: str = _AD_METHOD
    note: str = ""


def ad_p_value(a_star: float) -> float:
    r"""p-value of the modified Anderson–Darling statistic A* (normal, case 3).

    Notes
    -----
    D'Agostino & Stephens (1986), Table 4.9:

    - A* < 0.2:   p = 1 − exp(−13.436 + 101.14 A* − 223.73 A*²)
    - A* < 0.34:  p = 1 − exp(−8.318 + 42.796 A* − 59.938 A*²)
    - A* < 0.6:   p = exp(0.9177 − 4.279 A* − 1.38 A*²)
    - otherwise:  p = exp(1.2937 − 5.709 A* + 0.0186 A*²)

    The result is clipped to [0, 1]. Past the vertex of the last quadratic
    (A* ≈ 153.5) the formula would rise again; the p-value there is below 1e-189
    and 0 is returned.

    References
    ----------
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker.
    """
    a = float(a_star)
    if not np.isfinite(a):
        return float("nan") if np.isnan(a) else 0.0
    if a < 0.2:
        p = 1.0 - np.exp(-13.436 + 101.14 * a - 223.73 * a * a)
    elif a < 0.34:
        p = 1.0 - np.exp(-8.318 + 42.796 * a - 59.938 * a * a)
    elif a < 0.6:
        p = np.exp(0.9177 - 4.279 * a - 1.38 * a * a)
    elif a < _AD_P_VERTEX:
        p = np.exp(1.2937 - 5.709 * a + 0.0186 * a * a)
    else:
        p = 0.0
    return float(min(1.0, max(0.0, p)))


def _ad_from_sorted(xs: np.ndarray, dev: np.ndarray | None = None) -> ADResult:
    """Anderson–Darling on an already validated, sorted, non-constant sample."""
    n = xs.size
    d = _deviations(xs) if dev is None else dev
    sd = np.sqrt(_vdot(d, d) / (n - 1))
    z = d / sd
    # log Φ(z) and log(1 − Φ(z)) = log Φ(−z), both accurate far into the tails:
    # the smaller tail from Φ(−|z|) directly, the larger one as log1p(−tail)
    # (exact to rounding because that tail probability is at most 1/2).
    a2 = anderson_darling_a2(*_log_phi_pair_sorted(z))
    a_star = a2 * (1.0 + 0.75 / n + 2.25 / n**2)
    p = ad_p_value(a_star)
    note = ""
    if p == 0.0:
        note = ("The Anderson-Darling statistic is far beyond the published table: "
                "its p-value is effectively 0 and is reported as 0.")
    return ADResult(statistic=a2, statistic_star=a_star, p_value=p, n=n, note=note)


def anderson_darling(x, *, presorted: bool = False) -> ADResult:
    r"""Anderson–Darling test that ``x`` comes from a normal distribution.

    Mean and standard deviation are estimated from the data (case 3 of
    D'Agostino & Stephens 1986).

    Parameters
    ----------
    x : array_like
        Measurements (at least :data:`AD_MIN_N` finite values, not all equal).
    presorted : bool, default False
        Set True when ``x`` is already in ascending order to skip the sort.

    Returns
    -------
    ADResult

    Raises
    ------
    DataError
        Non-finite values, fewer than 8 values, or constant data.

    Notes
    -----
    With z_(i) = (x_(i) − x̄)/s (s with n − 1),

    A² = −n − (1/n) Σ (2i − 1)[ln Φ(z_(i)) + ln(1 − Φ(z_(n+1−i)))],

    evaluated with ``scipy.special.log_ndtr`` (ln(1 − Φ(z)) = ln Φ(−z)) so that it
    stays finite when Φ rounds to 0 or 1 (very large skewed samples).
    A* = A²(1 + 0.75/n + 2.25/n²); the p-value comes from :func:`ad_p_value`.

    References
    ----------
    Anderson, T.W. & Darling, D.A. (1954). A test of goodness of fit. JASA 49, 765–769.
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker,
    eq. 4.2 and Tables 4.7, 4.9.
    """
    arr = check_sample(x, "x", "anderson_darling", min_n=AD_MIN_N)
    if presorted:
        if np.any(arr[1:] < arr[:-1]):
            raise DataError(
                "The 'x' parameter of anderson_darling was passed with presorted=True "
                "but is not in ascending order. Sort it first or leave presorted=False."
            )
        xs = arr
    else:
        xs = np.sort(arr)
    return _ad_from_sorted(xs)
