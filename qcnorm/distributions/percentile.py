"""Percentile-method capability (ISO 22514-2; Clements 1989) from a fitted distribution."""

from __future__ import annotations

import math

import numpy as np
from scipy.special import ndtr

from .._validation import check_optional_float
from ..capability import distribution_support, side_status
from ..errors import ConfigError
from .quantiles import _fast_quantiles_tails
from .results import DistributionFit, PercentileCapability

__all__ = ["percentile_capability"]

_LN_1E6 = math.log(1e6)


def percentile_capability(
    fit: DistributionFit, *, lsl: float | None = None, usl: float | None = None
) -> PercentileCapability:
    r"""Percentile-method Pp / Ppk from a fitted distribution.

    Parameters
    ----------
    fit : DistributionFit
        A fitted model (from :func:`fit_distribution` or :func:`fit_distributions`).
    lsl, usl : float, optional
        Specification limits in measurement units.

    Returns
    -------
    PercentileCapability

    Raises
    ------
    ConfigError
        LSL ≥ USL, or a non-number limit.

    Notes
    -----
    With X_p the fitted quantiles at p = Φ(−3) ≈ 0.135 %, 50 %, Φ(3) ≈ 99.865 %:

    Pp = (U − L)/(X99.865 − X0.135),
    PPU = (U − X50)/(X99.865 − X50), PPL = (X50 − L)/(X50 − X0.135),
    Ppk = min(PPU, PPL).

    For a normal fit these equal the usual Pp and Ppk (X99.865 − X0.135 = 6σ). Using
    Φ(±3) exactly (rather than the rounded 0.135 %) keeps that identity exact.
    Expected ppm = 10^6·[F(L) + 1 − F(U)] from the fitted model.

    References
    ----------
    Clements, J.A. (1989). Process capability calculations for non-normal
    distributions. Quality Progress 22(9), 95–100.
    ISO 22514-2, Statistical methods in process management — Capability and performance —
    Part 2: Process capability and performance of time-dependent process models.
    """
    func = "percentile_capability"
    if not isinstance(fit, DistributionFit):
        raise ConfigError(
            f"The 'fit' parameter of {func} must be a DistributionFit (from fit_distribution). "
            f"Got {type(fit).__name__} instead."
        )
    lsl = check_optional_float(lsl, "lsl", func)
    usl = check_optional_float(usl, "usl", func)
    if lsl is not None and usl is not None and lsl >= usl:
        raise ConfigError(
            f"The LSL ({lsl:g}) must be below the USL ({usl:g}). "
            "Check that the two limits are not swapped or equal."
        )
    q_lo = float(ndtr(-3.0))
    qv = np.array([q_lo, 0.5, 1.0 - q_lo])
    fast = _fast_quantiles_tails(fit.name, fit.params, qv, lsl, usl)
    if fast is None:
        x_low, x_med, x_high = (float(v) for v in fit.ppf(qv))
    else:
        x_low, x_med, x_high = (float(v) for v in fast[0])
    # The one-sided rule shared with the transform route: a limit where the model puts
    # zero probability because of a PHYSICAL bound (LSL ≤ 0 for a positive family) is
    # "cannot fail" and leaves the indices; one beyond a fitted bound (the lognormal3
    # threshold) stays in them (its PPL is a finite, honest number).
    sup = distribution_support(fit.name, fit.params)
    lo_side = side_status(sup, lsl, "lower")
    hi_side = side_status(sup, usl, "upper")
    lo_in = lsl is not None and lo_side != "cannot_fail"
    hi_in = usl is not None and hi_side != "cannot_fail"
    notes: list[str] = []
    for lim, side, label, word in ((lsl, lo_side, "LSL", "below"), (usl, hi_side, "USL", "above")):
        if side == "cannot_fail":
            notes.append(f"{label} {lim:g} lies where the fitted {fit.name} distribution puts no probability "
                         f"(a physical bound): no product can fall {word} it, so that side is not assessed.")
        elif side == "beyond_fitted_bound":
            notes.append(f"{label} {lim:g} lies beyond the threshold fitted to the data: the model shows no "
                         "risk there, but a fitted bound is not a physical limit.")
    pp = (usl - lsl) / (x_high - x_low) if (lo_in and hi_in) else None
    ppu = (usl - x_med) / (x_high - x_med) if hi_in else None
    ppl = (x_med - lsl) / (x_med - x_low) if lo_in else None
    sides = [v for v in (ppu, ppl) if v is not None]
    ppk = min(sides) if sides else None

    below = above = total = None
    logs = []
    if lsl is not None:
        lc = float(fit.logcdf(lsl)) if fast is None else fast[1]
        lb = lc + _LN_1E6 if lo_in else -math.inf
        below = math.exp(lb)
        logs.append(lb)
    if usl is not None:
        ls = float(fit.logsf(usl)) if fast is None else fast[2]
        la = ls + _LN_1E6 if hi_in else -math.inf
        above = math.exp(la)
        logs.append(la)
    if logs:
        total = math.exp(float(np.logaddexp.reduce(np.asarray(logs))))
    return PercentileCapability(
        distribution=fit.name,
        lsl=lsl,
        usl=usl,
        pp=pp,
        ppk=ppk,
        ppu=ppu,
        ppl=ppl,
        x_low=x_low,
        x_median=x_med,
        x_high=x_high,
        ppm_expected=total,
        ppm_below=below,
        ppm_above=above,
        lower_side=lo_side,
        upper_side=hi_side,
        notes=tuple(notes),
    )
