"""Shared numerical kernels: single-threaded long dot products, log Φ pairs, validation of sorted samples."""

from __future__ import annotations

import numpy as np
from scipy.special import log_ndtr, ndtr

from .._validation import check_sample

#: Largest vector handed to BLAS for a dot product. OpenBLAS splits longer ones over
#: threads; on a busy machine a thread then waits for a free core and one dot of 10^5
#: values can take 15 ms instead of 0.01 ms (measured on the project's 2-core box).
_BLAS_DOT_MAX_N = 8192


def _vdot(a: np.ndarray, b: np.ndarray) -> float:
    """Σ a_i·b_i of two 1-D float arrays: BLAS for short vectors (unchanged results),
    numpy's own single-threaded einsum loop for long ones (see ``_BLAS_DOT_MAX_N``)."""
    if a.shape[0] <= _BLAS_DOT_MAX_N:
        return float(np.dot(a, b))
    return float(np.einsum("i,i->", a, b))


def _log_phi_pair_sorted(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    r"""ln Φ(z) and ln Φ(−z) for ascending ``z``, with one ``ndtr`` pass.

    For z < 0, Φ(z) is the small tail t: ln Φ(z) = ln t and ln Φ(−z) = log1p(−t)
    (exact to rounding because t ≤ 1/2); mirrored for z ≥ 0. Where the tail underflows
    (|z| > ~37) ``log_ndtr`` takes over. Same values as two ``log_ndtr`` calls to
    rounding, in about a third of the time; because ``z`` is ascending the two sides
    are a prefix and a suffix, so no masking is needed.
    """
    if z.ndim != 1:  # one sorted sample per row
        return _log_phi_pair(z)
    n = z.size
    k = int(np.searchsorted(z, 0.0))  # z[:k] < 0 <= z[k:]
    lc = np.empty(n)
    ls = np.empty(n)
    # The small tail is Φ(z) below 0 and Φ(−z) above; written straight into place.
    for tail_of, small, large in ((z[:k], lc[:k], ls[:k]), (-z[k:], ls[k:], lc[k:])):
        if tail_of.size == 0:
            continue
        tail = ndtr(tail_of)
        with np.errstate(divide="ignore"):
            np.log(tail, out=small)
        if tail[0] == 0.0 or tail[-1] == 0.0:  # underflow at the far end (|z| > ~37)
            bad = tail == 0.0
            small[bad] = log_ndtr(tail_of[bad])
        np.negative(tail, out=tail)
        np.log1p(tail, out=large)
    return lc, ls


def _log_phi_pair(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """ln Φ(z) and ln Φ(−z) for any array ``z`` (see ``_log_phi_pair_sorted``)."""
    az = -np.abs(z)
    tail = ndtr(az)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_tail = np.log(tail)
        bad = tail == 0.0
        if bad.any():
            log_tail[bad] = log_ndtr(az[bad])
        log_body = np.log1p(-tail)
    neg = z < 0.0
    return np.where(neg, log_tail, log_body), np.where(neg, log_body, log_tail)


def _deviations(xs: np.ndarray) -> np.ndarray:
    """x − x̄, computed once and shared by the tests in :func:`normality_report`."""
    return xs - xs.mean()


def _trusted_sorted_ok(xs: np.ndarray, min_n: int) -> bool:
    """Whether an ascending sample passes check_sample's tests (enough values, all finite,
    not constant), read off its ends; used with the private ``_sorted`` plumbing so that
    bad data still gets check_sample's own message."""
    return bool(xs.size >= min_n and np.isfinite(xs[0]) and np.isfinite(xs[-1]) and xs[-1] > xs[0])


def _sorted_sample(x, func: str, min_n: int) -> np.ndarray:
    """Validate once and sort once."""
    return np.sort(check_sample(x, "x", func, min_n=min_n))


def _poly(coef: tuple[float, ...], x: float) -> float:
    """Evaluate c0 + c1 x + c2 x² + … (Horner)."""
    out = 0.0
    for c in reversed(coef):
        out = out * x + c
    return out


def _two_sided_p(z: float) -> float:
    return float(2.0 * ndtr(-abs(z))) if np.isfinite(z) else float("nan")
