"""capability(): the transform route's indices, ppm and verdict for one characteristic.

The steps: validate the inputs, map the limits and target to the transformed scale
(:mod:`.limits`), compute the indices and their intervals (:mod:`.indices`), the ppm
(:mod:`.ppm`) and the verdict (:mod:`.verdict`), and hold them in one :class:`Capability`.
"""

from __future__ import annotations

import math
from typing import Any

from .._validation import check_optional_float, check_sample
from ..errors import ConfigError, DataError
from .indices import _bissell_interval, _bissell_lower, _chi2_interval, _indices
from .limits import _domain_text, _fmt, _in_domain, _map_limit, _transform_one
from .ppm import _observed_ppm, _ppm_sides
from .results import Capability
from .support import side_status, transform_support
from .verdict import _verdict

__all__ = ["capability"]

_FUNC = "capability"


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
    xr, lsl, usl, target, mu, sw, so, req, conf = _checked_inputs(
        x, y, lsl, usl, target, center, sigma_within, sigma_overall, required_index, confidence)
    n = int(xr.size)
    name = str(getattr(transform, "name", "transform"))
    lo_t, hi_t, tgt_t, notes = _mapped_spec(transform, name, lsl, usl, target)

    cp, cpk, cpu, cpl = _indices(lo_t, hi_t, mu, sw)
    pp, ppk, ppu, ppl = _indices(lo_t, hi_t, mu, so)
    cpm = None
    if lo_t is not None and hi_t is not None and tgt_t is not None:
        cpm = (hi_t - lo_t) / (6.0 * math.sqrt(so * so + (mu - tgt_t) ** 2))
    notes.extend(_spec_notes(lsl, usl, target, lo_t, hi_t, cpk, n))

    wb, wa, wt = _ppm_sides(lo_t, hi_t, mu, sw)
    ob, oa, ot = _ppm_sides(lo_t, hi_t, mu, so)
    obs_b, obs_a, obs_t = _observed_ppm(xr, lsl, usl)

    cpk_lb = _bissell_lower(cpk, n, conf)
    ppk_lb = _bissell_lower(ppk, n, conf)
    # Verdict on the conservative figure.
    verdict, vname, vpoint, vlb, text = _verdict(cpk, ppk, cpk_lb, ppk_lb, req, conf, stable)

    return Capability(
        lsl=lsl, usl=usl, target=target,
        lsl_transformed=lo_t, usl_transformed=hi_t, target_transformed=tgt_t,
        lower_assessed=lo_t is not None, upper_assessed=hi_t is not None,
        transform_name=name, n=n, center=mu, sigma_within=sw, sigma_overall=so,
        cp=cp, cpk=cpk, cpu=cpu, cpl=cpl,
        pp=pp, ppk=ppk, ppu=ppu, ppl=ppl,
        cpm=cpm,
        cp_ci=_chi2_interval(cp, n, conf),
        cpk_ci=_bissell_interval(cpk, n, conf),
        pp_ci=_chi2_interval(pp, n, conf),
        ppk_ci=_bissell_interval(ppk, n, conf),
        cpk_lower_bound=cpk_lb, ppk_lower_bound=ppk_lb,
        ppm_within=wt, ppm_within_below=wb, ppm_within_above=wa,
        ppm_overall=ot, ppm_overall_below=ob, ppm_overall_above=oa,
        ppm_observed=obs_t, ppm_observed_below=obs_b, ppm_observed_above=obs_a,
        required_index=req, confidence=conf, stable=bool(stable),
        verdict=verdict, verdict_index_name=vname, verdict_point=vpoint, verdict_lower_bound=vlb,
        verdict_text=text,
        notes=tuple(notes),
        lower_side=side_status(transform_support(transform), lsl, "lower"),
        upper_side=side_status(transform_support(transform), usl, "upper"),
        route_verdict=verdict,
        verdict_model=name if verdict != "not_assessed" else None,
    )


def _checked_inputs(x, y, lsl, usl, target, center, sigma_within, sigma_overall, required_index, confidence):
    """The arguments of :func:`capability`, validated: (x, lsl, usl, target, centre, σ_w, σ_o,
    required index, confidence). Bad input raises DataError / ConfigError with the fix."""
    xr = check_sample(x, "x", _FUNC, min_n=2, allow_constant=True)
    yt = check_sample(y, "y", _FUNC, min_n=2, allow_constant=True)
    if yt.size != xr.size:
        raise DataError(
            f"The 'y' parameter of {_FUNC} must hold the transformed values of 'x' "
            f"({xr.size} values). Got {yt.size} values instead."
        )
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
    return xr, lsl, usl, target, mu, sw, so, req, conf


def _mapped_spec(
    transform: Any, name: str, lsl: float | None, usl: float | None, target: float | None
) -> tuple[float | None, float | None, float | None, list[str]]:
    """LSL, USL and target on the transformed scale (None where absent or where that side
    cannot fail), and the notes of the mapping."""
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
    return lo_t, hi_t, tgt_t, notes


def _spec_notes(
    lsl: float | None, usl: float | None, target: float | None,
    lo_t: float | None, hi_t: float | None, cpk: float | None, n: int,
) -> list[str]:
    """Plain-words notes on which indices the given limits allow, and on a small sample."""
    notes: list[str] = []
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
    return notes
