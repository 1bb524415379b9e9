"""Capability and performance indices on the transformed scale.

The control chart supplies the centre and the two sigmas on the transformed scale;
this module maps the specification limits through the same transform and computes
Cp, Cpk, Pp, Ppk, Cpm, the one-sided indices, their confidence intervals, expected
and observed ppm, and a verdict against a required index.

A specification limit outside the transform's domain on the side the data can never
reach (LSL = 0 under a log transform: ln 0 = −∞) means that side cannot fail. It is
kept as the user gave it but left out of the indices, and a note says so in plain
words. A limit on the wrong side (an USL below every value the transform allows)
is refused.

Capability of a process that is not in statistical control is not meaningful; the
verdict text says so first whenever ``stable=False``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
from scipy.special import log_ndtr, ndtri
from scipy.stats import chi2

from ._results import Result
from ._validation import check_optional_float, check_sample
from .errors import ConfigError, DataError

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

_FUNC = "capability"
_LN_1E6 = math.log(1e6)

#: Verdict codes and their meaning.
VERDICTS = {
    "meets": "the lower confidence bound of the conservative index reaches the requirement",
    "marginal": "the point estimate reaches the requirement but its lower confidence bound does not",
    "fails": "the point estimate is below the requirement",
    "not_assessed": "no specification limit that can be failed was given",
}


@dataclass(frozen=True, slots=True)
class Interval(Result):
    """A two-sided confidence interval.

    Attributes
    ----------
    low, high : float
        Interval limits.
    method : str
        How the interval was computed ("chi-square" or "Bissell (1990)").
    confidence : float
        Two-sided confidence level, e.g. 0.95.
    """

    low: float
    high: float
    method: str
    confidence: float = 0.95


@dataclass(frozen=True, slots=True)
class Capability(Result):
    """Capability and performance of one characteristic.

    Attributes
    ----------
    lsl, usl, target : float or None
        Limits and target as the user gave them (measurement units).
    lsl_transformed, usl_transformed, target_transformed : float or None
        The same on the transformed scale; None where absent or where that side
        cannot fail (outside the transform's domain).
    lower_assessed, upper_assessed : bool
        Whether each side enters the indices.
    transform_name : str
        Name of the transform the indices are computed under.
    n : int
        Number of values.
    center, sigma_within, sigma_overall : float
        Centre and sigmas on the transformed scale (from the control chart).
    cp, cpk, cpu, cpl : float or None
        Capability indices (within sigma). Cp needs both limits; Cpk is the smaller
        of CPU and CPL over the sides assessed.
    pp, ppk, ppu, ppl : float or None
        Performance indices (overall sigma).
    cpm : float or None
        Taguchi index with the target, overall sigma, both limits needed.
    cp_ci, cpk_ci, pp_ci, ppk_ci : Interval or None
        Two-sided intervals at ``confidence``.
    cpk_lower_bound, ppk_lower_bound : float or None
        One-sided lower confidence bounds at ``confidence`` (Bissell 1990).
    ppm_within, ppm_within_below, ppm_within_above : float or None
        Expected parts per million outside the limits, within sigma (total and per side).
    ppm_overall, ppm_overall_below, ppm_overall_above : float or None
        The same with overall sigma.
    ppm_observed, ppm_observed_below, ppm_observed_above : float or None
        Observed parts per million of the raw values outside the limits.
    required_index, confidence : float
        Settings of the verdict and intervals.
    stable : bool
        Whether the process was in statistical control.
    verdict : str
        One of ``"meets"``, ``"marginal"``, ``"fails"``, ``"not_assessed"``.
    verdict_index_name : str or None
        ``"Cpk"`` or ``"Ppk"``: the smaller (conservative) of the two.
    verdict_point, verdict_lower_bound : float or None
        Point estimate and one-sided lower confidence bound of that index.
    verdict_text : str
        One plain sentence with the numbers.
    notes : tuple of str
        Plain-words remarks.
    lower_side, upper_side : str
        What each limit means under this transform (:data:`SIDE_STATUSES`, the rule shared
        with the percentile route): ``"absent"``, ``"assessed"``, ``"cannot_fail"`` or
        ``"beyond_fitted_bound"``.
    route_verdict : str or None
        The verdict of this transform route alone. Equal to ``verdict`` unless
        analyze() based the verdict on a more pessimistic adequate model (see
        ``model_range``).
    verdict_model : str or None
        The model the verdict rests on (the transform's name unless the model range
        chose another).
    model_range : ModelRange or None
        ppm and Ppk under every candidate model, their adequacy and the verdict basis
        (set by analyze(); see :mod:`qcnorm.modelrange`).
    """

    lsl: float | None
    usl: float | None
    target: float | None
    lsl_transformed: float | None
    usl_transformed: float | None
    target_transformed: float | None
    lower_assessed: bool
    upper_assessed: bool
    transform_name: str
    n: int
    center: float
    sigma_within: float
    sigma_overall: float
    cp: float | None
    cpk: float | None
    cpu: float | None
    cpl: float | None
    pp: float | None
    ppk: float | None
    ppu: float | None
    ppl: float | None
    cpm: float | None
    cp_ci: Interval | None
    cpk_ci: Interval | None
    pp_ci: Interval | None
    ppk_ci: Interval | None
    cpk_lower_bound: float | None
    ppk_lower_bound: float | None
    ppm_within: float | None
    ppm_within_below: float | None
    ppm_within_above: float | None
    ppm_overall: float | None
    ppm_overall_below: float | None
    ppm_overall_above: float | None
    ppm_observed: float | None
    ppm_observed_below: float | None
    ppm_observed_above: float | None
    required_index: float
    confidence: float
    stable: bool
    verdict: str
    verdict_index_name: str | None
    verdict_point: float | None
    verdict_lower_bound: float | None
    verdict_text: str
    notes: tuple[str, ...]
    lower_side: str = "absent"
    upper_side: str = "absent"
    route_verdict: str | None = None
    verdict_model: str | None = None
    model_range: Any = None

    def summary(self) -> pd.DataFrame:
        """Table of the indices: columns ``index``, ``estimate``, ``low``, ``high``.

        Indices that do not apply (e.g. Cp with one limit) are NaN.
        """
        nan = float("nan")

        def row(name: str, est: float | None, ci: Interval | None) -> dict[str, Any]:
            return {
                "index": name,
                "estimate": nan if est is None else est,
                "low": nan if ci is None else ci.low,
                "high": nan if ci is None else ci.high,
            }

        rows = [
            row("Cp", self.cp, self.cp_ci),
            row("Cpk", self.cpk, self.cpk_ci),
            row("CPU", self.cpu, None),
            row("CPL", self.cpl, None),
            row("Pp", self.pp, self.pp_ci),
            row("Ppk", self.ppk, self.ppk_ci),
            row("PPU", self.ppu, None),
            row("PPL", self.ppl, None),
            row("Cpm", self.cpm, None),
        ]
        return pd.DataFrame(rows, columns=["index", "estimate", "low", "high"])


# --------------------------------------------------------------------------------------
# one-sided logic shared by the transform route and the percentile route
# --------------------------------------------------------------------------------------

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


# --------------------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------------------


def _fmt(v: float) -> str:
    """Numbers in messages: a few significant digits."""
    return f"{v:.4g}"


def _transform_one(transform: Any, v: float) -> float:
    out = np.asarray(transform.transform(np.asarray([v], dtype=np.float64)), dtype=np.float64)
    return float(out.reshape(-1)[0])


def _in_domain(transform: Any, v: float) -> bool:
    return bool(np.asarray(transform.in_domain(np.asarray([v], dtype=np.float64))).all())


def _domain_text(domain: Any) -> str:
    lo = "(" if getattr(domain, "low_open", True) else "["
    hi = ")" if getattr(domain, "high_open", True) else "]"
    return f"{lo}{_fmt(domain.low)}, {_fmt(domain.high)}{hi}"


def _map_limit(
    transform: Any, value: float, which: str, other_given: bool
) -> tuple[float | None, str | None]:
    """Map one limit to the transformed scale.

    Returns (transformed value or None, note). None with a note means "this side
    cannot fail"; a limit on the impossible side raises ConfigError.
    """
    name = getattr(transform, "name", "the transform")
    domain = transform.domain
    label = "LSL" if which == "lower" else "USL"
    if _in_domain(transform, value):
        t = _transform_one(transform, value)
        if math.isfinite(t):
            return t, None
        # A finite value mapped to ±inf sits on the domain's edge.
        side = "below" if t < 0 else "above"
    elif value <= domain.low:
        side = "below"
    elif value >= domain.high:
        side = "above"
    else:  # pragma: no cover - a domain with a hole is not a transform we build
        raise ConfigError(
            f"The {label} {_fmt(value)} cannot be mapped through the {name} transform "
            f"(domain {_domain_text(domain)}). Choose another transform or check the limit."
        )
    if (which == "lower" and side == "below") or (which == "upper" and side == "above"):
        # the shared one-sided rule decides what the side means (same as the percentile route)
        status = side_status(transform_support(transform), value, which)
        lowest = which == "lower"
        end = _fmt(domain.low if lowest else domain.high)
        if status == "cannot_fail":
            return None, (
                f"{label} {_fmt(value)} lies at or {'below the lowest' if lowest else 'above the highest'} "
                f"value the {name} transform allows ({end}): no product can "
                f"{'fall below' if lowest else 'rise above'} it, so "
                + (f"only the {'upper' if lowest else 'lower'} side is assessed." if other_given
                   else "that side cannot fail.")
            )
        return None, (
            f"{label} {_fmt(value)} lies beyond the {'lower' if lowest else 'upper'} bound that the {name} "
            f"transform fitted to the data ({end}): this model shows no risk on that side, but a bound "
            "fitted to the data is not a physical limit, so the side is NOT shown as 'cannot fail' — "
            "compare the range of figures across the adequate models."
        )
    if which == "upper":
        raise ConfigError(
            f"The USL {_fmt(value)} lies at or below the lowest value the {name} transform allows "
            f"({_fmt(domain.low)}): every part would be out of specification. Check the limit "
            "(units, sign, a decimal point) or choose a transform whose domain includes it."
        )
    raise ConfigError(
        f"The LSL {_fmt(value)} lies at or above the highest value the {name} transform allows "
        f"({_fmt(domain.high)}): every part would be out of specification. Check the limit "
        "(units, sign, a decimal point) or choose a transform whose domain includes it."
    )


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


def _chi2_interval(c: float | None, n: int, confidence: float) -> Interval | None:
    r"""C · sqrt(χ²_{α/2, n−1}/(n−1)) … C · sqrt(χ²_{1−α/2, n−1}/(n−1))."""
    if c is None:
        return None
    a = 1.0 - confidence
    df = n - 1
    lo = c * math.sqrt(float(chi2.ppf(a / 2.0, df)) / df)
    hi = c * math.sqrt(float(chi2.ppf(1.0 - a / 2.0, df)) / df)
    return Interval(lo, hi, "chi-square", confidence)


def _bissell_se(c: float, n: int) -> float:
    r"""sqrt(1/(9n) + C²/(2(n−1))) (Bissell 1990)."""
    return math.sqrt(1.0 / (9.0 * n) + c * c / (2.0 * (n - 1)))


def _bissell_interval(c: float | None, n: int, confidence: float) -> Interval | None:
    if c is None:
        return None
    z = float(ndtri(1.0 - (1.0 - confidence) / 2.0))
    se = _bissell_se(c, n)
    return Interval(c - z * se, c + z * se, "Bissell (1990)", confidence)


def _bissell_lower(c: float | None, n: int, confidence: float) -> float | None:
    if c is None:
        return None
    z = float(ndtri(confidence))
    return c - z * _bissell_se(c, n)


def _indices(lo: float | None, hi: float | None, mu: float, sigma: float):
    upper = None if hi is None else (hi - mu) / (3.0 * sigma)
    lower = None if lo is None else (mu - lo) / (3.0 * sigma)
    both = None if (lo is None or hi is None) else (hi - lo) / (6.0 * sigma)
    sides = [v for v in (upper, lower) if v is not None]
    k = min(sides) if sides else None
    return both, k, upper, lower


def _check_positive(v: Any, name: str) -> float:
    f = check_optional_float(v, name, _FUNC)
    if f is None or f <= 0.0:
        hint = (
            "A sigma of zero means the values do not vary: check the gauge resolution."
            if name.startswith("sigma")
            else "Give the index the process must reach, such as 1.33."
        )
        raise ConfigError(f"The '{name}' parameter of {_FUNC} must be a positive number. Got {v!r} instead. {hint}")
    return f


# --------------------------------------------------------------------------------------
# public
# --------------------------------------------------------------------------------------


def capability(
    x: Any,
    y: Any,
    transform: Any,
    *,
    lsl: float | None = None,
    usl: float | None = None,
    target: float | None = None,
    center: float,
    sigma_within: float,
    sigma_overall: float,
    required_index: float = 1.33,
    confidence: float = 0.95,
    stable: bool = True,
) -> Capability:
    r"""Capability and performance indices of one characteristic.

    Parameters
    ----------
    x : array_like
        Raw values in measurement units (used for observed ppm and n).
    y : array_like
        The same values on the transformed scale (same length as ``x``).
    transform : fitted transform
        Object with ``transform(v)``, ``in_domain(v)``, ``domain`` (``low``, ``high``,
        ``low_open``, ``high_open`` in measurement units) and ``name``.
    lsl, usl, target : float, optional
        Specification limits and target in measurement units.
    center, sigma_within, sigma_overall : float
        Centre and sigmas on the transformed scale (from the control chart).
    required_index : float, default 1.33
        The index the process must reach.
    confidence : float, default 0.95
        Level of the two-sided intervals and of the one-sided lower bounds.
    stable : bool, default True
        False when the control chart shows the process out of statistical control.

    Returns
    -------
    Capability

    Raises
    ------
    DataError
        Too few or non-finite values, or ``x`` and ``y`` of different lengths.
    ConfigError
        LSL ≥ USL, a limit on the impossible side of the transform's domain, a target
        outside the limits, a non-positive sigma, or a confidence outside (0, 1).

    Notes
    -----
    With L, U, T the transformed limits and target, μ the centre:

    - Cp = (U − L)/(6σ_w), CPU = (U − μ)/(3σ_w), CPL = (μ − L)/(3σ_w), Cpk = min(CPU, CPL);
      Pp, PPU, PPL, Ppk the same with σ_o (overall).
    - Cpm = (U − L)/(6·sqrt(σ_o² + (μ − T)²)).
    - Cp, Pp interval: C·sqrt(χ²_{α/2,n−1}/(n−1)) to C·sqrt(χ²_{1−α/2,n−1}/(n−1)).
    - Cpk, Ppk interval (Bissell 1990): C ± z_{1−α/2}·sqrt(1/(9n) + C²/(2(n−1)));
      one-sided lower bound with z_{1−α}.
    - Expected ppm: 10^6·[Φ((L − μ)/σ) + Φ(−(U − μ)/σ)], via log Φ.
    - Verdict: the smaller of Cpk and Ppk and its lower bound against ``required_index``.

    The intervals assume normal data on the transformed scale and treat the sigma as a
    sample standard deviation with n − 1 degrees of freedom.

    References
    ----------
    Bissell, A.F. (1990). How reliable is your capability index? Applied Statistics
    39(3), 331–340.
    Montgomery, D.C. Introduction to Statistical Quality Control, Wiley (chapter on
    process capability).
    NIST/SEMATECH e-Handbook of Statistical Methods, section 6.1.6.
    """
    xr = check_sample(x, "x", _FUNC, min_n=2, allow_constant=True)
    yt = check_sample(y, "y", _FUNC, min_n=2, allow_constant=True)
    if yt.size != xr.size:
        raise DataError(
            f"The 'y' parameter of {_FUNC} must hold the transformed values of 'x' "
            f"({xr.size} values). Got {yt.size} values instead."
        )
    n = int(xr.size)
    lsl = check_optional_float(lsl, "lsl", _FUNC)
    usl = check_optional_float(usl, "usl", _FUNC)
    target = check_optional_float(target, "target", _FUNC)
    mu = check_optional_float(center, "center", _FUNC)
    if mu is None:
        raise ConfigError(f"The 'center' parameter of {_FUNC} must be a number. Got None instead.")
    sw = _check_positive(sigma_within, "sigma_within")
    so = _check_positive(sigma_overall, "sigma_overall")
    req = _check_positive(required_index, "required_index")
    conf = check_optional_float(confidence, "confidence", _FUNC)
    if conf is None or not 0.0 < conf < 1.0:
        raise ConfigError(
            f"The 'confidence' parameter of {_FUNC} must lie strictly between 0 and 1 "
            f"(e.g. 0.95). Got {confidence!r} instead."
        )
    if lsl is not None and usl is not None and lsl >= usl:
        raise ConfigError(
            f"The LSL ({_fmt(lsl)}) must be below the USL ({_fmt(usl)}). "
            "Check that the two limits are not swapped or equal."
        )
    name = str(getattr(transform, "name", "transform"))

    notes: list[str] = []
    lo_t = hi_t = None
    if lsl is not None:
        lo_t, note = _map_limit(transform, lsl, "lower", usl is not None)
        if note:
            notes.append(note)
    if usl is not None:
        hi_t, note = _map_limit(transform, usl, "upper", lsl is not None)
        if note:
            notes.append(note)

    tgt_t = None
    if target is not None:
        if (lsl is not None and target < lsl) or (usl is not None and target > usl):
            raise ConfigError(
                f"The target ({_fmt(target)}) must lie within the specification limits "
                f"(LSL {lsl if lsl is None else _fmt(lsl)}, USL {usl if usl is None else _fmt(usl)}). "
                "Check the target or the limits."
            )
        if not _in_domain(transform, target):
            raise ConfigError(
                f"The target ({_fmt(target)}) lies outside the values the {name} transform allows "
                f"({_domain_text(transform.domain)}). Check the target or choose another transform."
            )
        tgt_t = _transform_one(transform, target)

    cp, cpk, cpu, cpl = _indices(lo_t, hi_t, mu, sw)
    pp, ppk, ppu, ppl = _indices(lo_t, hi_t, mu, so)
    cpm = None
    if lo_t is not None and hi_t is not None and tgt_t is not None:
        cpm = (hi_t - lo_t) / (6.0 * math.sqrt(so * so + (mu - tgt_t) ** 2))

    if lsl is None and usl is None:
        notes.append("No specification limits were given: capability is not assessed.")
    elif lo_t is None and hi_t is None:
        notes.append("Neither limit can be failed under this transform: capability is not assessed.")
    elif lo_t is None or hi_t is None:
        notes.append(
            "One-sided specification: Cpk and Ppk are the one-sided indices; "
            "Cp, Pp and Cpm need both limits and are not given."
        )
    if lo_t is not None and hi_t is not None and target is None:
        notes.append("No target was given: Cpm is not computed.")
    if cpk is not None and n < 30:
        notes.append(
            f"Only {n} values: the confidence intervals are wide; "
            "at least 50–100 values are usual for a capability study."
        )

    wb, wa, wt = _ppm_sides(lo_t, hi_t, mu, sw)
    ob, oa, ot = _ppm_sides(lo_t, hi_t, mu, so)

    obs_b = obs_a = obs_t = None
    if lsl is not None or usl is not None:
        cnt_b = int(np.count_nonzero(xr < lsl)) if lsl is not None else 0
        cnt_a = int(np.count_nonzero(xr > usl)) if usl is not None else 0
        obs_b = cnt_b * 1e6 / n if lsl is not None else None
        obs_a = cnt_a * 1e6 / n if usl is not None else None
        obs_t = (cnt_b + cnt_a) * 1e6 / n

    cpk_lb = _bissell_lower(cpk, n, conf)
    ppk_lb = _bissell_lower(ppk, n, conf)

    # Verdict on the conservative figure.
    pct = f"{conf * 100:g} %"
    if cpk is None:
        verdict, vname, vpoint, vlb = "not_assessed", None, None, None
        text = "Capability is not assessed: no specification limit that a part could fail was given."
    else:
        if ppk <= cpk:
            vname, vpoint, vlb = "Ppk", ppk, ppk_lb
        else:
            vname, vpoint, vlb = "Cpk", cpk, cpk_lb
        if vlb >= req:
            verdict = "meets"
            text = (
                f"Meets the required {req:.2f}: {vname} = {vpoint:.2f} and its {pct} lower "
                f"confidence bound {vlb:.2f} are both at or above {req:.2f}."
            )
        elif vpoint >= req:
            verdict = "marginal"
            text = (
                f"Meets the required {req:.2f} on the point estimate only: {vname} = {vpoint:.2f}, "
                f"but its {pct} lower confidence bound is {vlb:.2f}, so more data are needed "
                "to show it with confidence."
            )
        else:
            verdict = "fails"
            text = (
                f"Does not meet the required {req:.2f}: {vname} = {vpoint:.2f} "
                f"({pct} lower confidence bound {vlb:.2f})."
            )
    if not stable:
        text = (
            "Capability is not meaningful while the process is not in statistical control; "
            "the figures describe these data only. " + text
        )

    return Capability(
        lsl=lsl,
        usl=usl,
        target=target,
        lsl_transformed=lo_t,
        usl_transformed=hi_t,
        target_transformed=tgt_t,
        lower_assessed=lo_t is not None,
        upper_assessed=hi_t is not None,
        transform_name=name,
        n=n,
        center=mu,
        sigma_within=sw,
        sigma_overall=so,
        cp=cp,
        cpk=cpk,
        cpu=cpu,
        cpl=cpl,
        pp=pp,
        ppk=ppk,
        ppu=ppu,
        ppl=ppl,
        cpm=cpm,
        cp_ci=_chi2_interval(cp, n, conf),
        cpk_ci=_bissell_interval(cpk, n, conf),
        pp_ci=_chi2_interval(pp, n, conf),
        ppk_ci=_bissell_interval(ppk, n, conf),
        cpk_lower_bound=cpk_lb,
        ppk_lower_bound=ppk_lb,
        ppm_within=wt,
        ppm_within_below=wb,
        ppm_within_above=wa,
        ppm_overall=ot,
        ppm_overall_below=ob,
        ppm_overall_above=oa,
        ppm_observed=obs_t,
        ppm_observed_below=obs_b,
        ppm_observed_above=obs_a,
        required_index=req,
        confidence=conf,
        stable=bool(stable),
        verdict=verdict,
        verdict_index_name=vname,
        verdict_point=vpoint,
        verdict_lower_bound=vlb,
        verdict_text=text,
        notes=tuple(notes),
        lower_side=side_status(transform_support(transform), lsl, "lower"),
        upper_side=side_status(transform_support(transform), usl, "upper"),
        route_verdict=verdict,
        verdict_model=name if verdict != "not_assessed" else None,
    )
