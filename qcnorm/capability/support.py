"""The one-sided rule shared by the transform route, the percentile route and the model range.

Where a model puts probability (:class:`Support`, from :func:`transform_support` or
:func:`distribution_support`) and what a specification limit means under it
(:func:`side_status`, one of :data:`SIDE_STATUSES`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from .._results import Result
from ..errors import ConfigError

__all__ = ["SIDE_STATUSES", "Support", "transform_support", "distribution_support", "side_status"]

#: What a specification limit means under a model, per side.
SIDE_STATUSES = {
    "absent": "no limit was given on this side",
    "assessed": "the model puts some probability beyond the limit: the side enters the indices",
    "cannot_fail": "the limit lies at or beyond a physical bound of the model (e.g. LSL ≤ 0 for a "
                   "characteristic that cannot be negative): this side cannot fail under this model",
    "beyond_fitted_bound": "the limit lies beyond a bound fitted to the data (Johnson S_B/S_L, a fitted "
                           "threshold or shift): the model shows no risk there, but a fitted bound is "
                           "not a physical limit, so this is never read as 'cannot fail'",
}


@dataclass(frozen=True, slots=True)
class Support(Result):
    """Where a model puts probability, in measurement units.

    ``low``/``high`` are the ends (±inf when unbounded); ``*_physical`` says whether an
    end is a physical bound of the characteristic (0 for a model of positive values:
    an unshifted log or Box–Cox transform, the lognormal, Weibull, gamma and exponential
    distributions). An end estimated from the data (Johnson S_B/S_L bounds, the
    threshold of a 3-parameter lognormal, the shift of a shifted log/Box–Cox) is never
    physical.
    """

    low: float = -math.inf
    high: float = math.inf
    low_physical: bool = False
    high_physical: bool = False
    model: str = ""

    @property
    def low_fitted(self) -> bool:
        return math.isfinite(self.low) and not self.low_physical

    @property
    def high_fitted(self) -> bool:
        return math.isfinite(self.high) and not self.high_physical


#: Transforms whose lower domain end is 0 unless shifted (then it is fitted).
_ZERO_BOUNDED_TRANSFORMS = ("log", "boxcox")
#: Distribution families whose support is x > 0 (a physical bound).
_POSITIVE_FAMILIES = ("lognormal", "weibull", "gamma", "exponential")


def transform_support(transform: Any) -> Support:
    """The support of the model "T(X) is normal" for a fitted transform T.

    The support is the transform's domain. Its lower end is physical only for an
    unshifted log or Box–Cox transform (domain x > 0); every other finite end (Johnson
    S_B/S_L bounds, a fitted shift or threshold) was estimated from the data.
    """
    dom = transform.domain
    name = str(getattr(transform, "name", "transform"))
    params = getattr(transform, "params_", {}) or {}
    shift = float(params.get("shift", 0.0) or 0.0)
    physical_low = (name in _ZERO_BOUNDED_TRANSFORMS and abs(shift) < 1e-12
                    and math.isfinite(dom.low) and abs(float(dom.low)) < 1e-300)
    return Support(low=float(dom.low), high=float(dom.high), low_physical=physical_low,
                   high_physical=False, model=name)


def distribution_support(name: str, params: Any) -> Support:
    """The support of a fitted distribution family (names of ``qcnorm.distributions``)."""
    if name in _POSITIVE_FAMILIES:
        return Support(low=0.0, low_physical=True, model=name)
    if name == "lognormal3":
        return Support(low=float(params["threshold"]), model=name)
    return Support(model=name)


def side_status(support: Support, limit: float | None, which: str) -> str:
    """What one specification limit means under a model (the shared one-sided rule).

    Parameters
    ----------
    support : Support
        The model's support (:func:`transform_support`, :func:`distribution_support`).
    limit : float or None
        The LSL (``which="lower"``) or USL (``which="upper"``) in measurement units.

    Returns
    -------
    str
        One of :data:`SIDE_STATUSES`: ``"absent"``, ``"assessed"``, ``"cannot_fail"``
        (a lower limit at or below a physical lower bound, or an upper limit at or above
        a physical upper bound) or ``"beyond_fitted_bound"`` (the same against a bound
        fitted to the data — never "cannot fail").

    Notes
    -----
    A limit on the *wrong* side (a USL at or below the lower end, an LSL at or above the
    upper end) is reported as ``"assessed"`` here: every part would be out, and the
    route that uses the model says so (the transform route refuses it).
    """
    if limit is None:
        return "absent"
    v = float(limit)
    if which == "lower":
        if v <= support.low:
            return "cannot_fail" if support.low_physical else "beyond_fitted_bound"
        return "assessed"
    if which == "upper":
        if v >= support.high:
            return "cannot_fail" if support.high_physical else "beyond_fitted_bound"
        return "assessed"
    raise ConfigError(f"The 'which' parameter of side_status must be 'lower' or 'upper'. Got {which!r} instead.")
