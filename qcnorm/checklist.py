"""The release-review checklist: the questions a supervisor asks before a lot is released.

One function, :func:`review_checklist`, answers them from an :class:`~qcnorm.analysis.Analysis`
(or its ``to_dict()``, e.g. a saved analysis read back from the history store), so the
app's review page and the PDF summary show the same answers from the same thresholds.

The checklist is decision support, not a release decision: release follows the site's
quality system, the customer's requirements and applicable regulations, and is made by
an authorised person.

Items (each ``passed`` is True, False, or None when the question cannot be answered):

========================  ===================================================================
key                       passes when
========================  ===================================================================
``in_control``            the control chart shows no rule violation (against the frozen
                          baseline in Phase II)
``transform_adequate``    Anderson–Darling p on the transformed data ≥ 0.05 (on the raw data
                          when no transform was applied); None when n is too small for the
                          AD p-value
``enough_data``           n ≥ 30 (common practice; 100 or more is better for capability)
``capability``            the conservative index (the smaller of Cpk and Ppk) has a lower
                          confidence bound ≥ the required index; None without a spec limit
                          that can be failed
========================  ===================================================================
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ._results import Result
from .control import FalseAlarmRate

__all__ = [
    "ChecklistItem",
    "review_checklist",
    "checklist_outcome",
    "AD_P_MIN",
    "MIN_N",
    "CHECKLIST_KEYS",
    "analysis_dict",
]

#: Smallest Anderson–Darling p-value after the transform for which the transform is
#: judged adequate (the usual 5 % significance level; common practice).
AD_P_MIN = 0.05

#: Smallest number of values judged enough for a capability statement (common practice:
#: at least 30, better 100). Kept equal to ``qcnorm.analysis.SMALL_N``.
MIN_N = 30

#: The checklist items in the order they are shown.
CHECKLIST_KEYS = ("in_control", "transform_adequate", "enough_data", "capability")


@dataclass(frozen=True, slots=True)
class ChecklistItem(Result):
    """One question of the release review and its answer.

    Attributes
    ----------
    key : str
        Stable identifier (one of :data:`CHECKLIST_KEYS`).
    name : str
        The question in plain words.
    passed : bool or None
        True (yes), False (no) or None (cannot be answered from these data).
    detail : str
        The numbers behind the answer, in one sentence.
    rule : str
        The threshold applied, in words.
    """

    key: str
    name: str
    passed: bool | None
    detail: str
    rule: str

    @property
    def status(self) -> str:
        """``"pass"``, ``"fail"`` or ``"n/a"``."""
        return "n/a" if self.passed is None else ("pass" if self.passed else "fail")


def analysis_dict(analysis: Any) -> dict[str, Any]:
    """``analysis.to_dict()`` (a mapping is returned as it is), completed with the
    dispersion-chart signals under ``control.dispersion.violations`` when the dict lacks
    them (they make the process out of control but are not in ``control.violations``)."""
    if isinstance(analysis, Mapping):
        return dict(analysis)
    if hasattr(analysis, "to_dict"):
        d = analysis.to_dict()
        disp = ((d.get("control") or {}).get("dispersion"))
        dv = getattr(getattr(getattr(analysis, "chart", None), "dispersion", None), "violations", None)
        if isinstance(disp, dict) and "violations" not in disp and dv is not None:
            disp["violations"] = [
                {"rule": v.rule, "index": int(v.index), "description": v.description,
                 "points": [int(p) for p in v.points]}
                for v in dv
            ]
        return d
    from .errors import ConfigError

    raise ConfigError(
        f"review_checklist needs an Analysis (from qcnorm.analyze) or its to_dict(); "
        f"got {type(analysis).__name__}."
    )


_RULE_NAMES = {"beyond_limits": "beyond-the-limits", "western_electric": "Western Electric", "nelson": "Nelson"}


def _g(v: Any, digits: int = 3) -> str:
    return "—" if v is None else f"{float(v):.{digits}g}"


def _idx(v: Any) -> str:
    """Capability indices with 2 decimals (the trade's convention)."""
    return "—" if v is None else f"{float(v):.2f}"


def _item_in_control(d: Mapping[str, Any]) -> ChecklistItem:
    c = d.get("control") or {}
    phase = c.get("phase") or d.get("phase") or "I"
    name = (
        "In statistical control against the frozen baseline?"
        if str(phase) == "II"
        else "In statistical control?"
    )
    rules = _RULE_NAMES.get(str(c.get("rules")), str(c.get("rules") or "run"))
    rule = f"no {rules} rule violation on the control chart"
    viol = list(c.get("violations") or [])
    seen = {(str(v.get("rule")), int(v.get("index", -1))) for v in viol}
    # dicts that list dispersion signals only under control.dispersion: add them once
    viol += [v for v in (c.get("dispersion") or {}).get("violations") or []
             if (str(v.get("rule")), int(v.get("index", -1))) not in seen]
    in_control = c.get("in_control")
    if in_control is None:
        return ChecklistItem("in_control", name, None, "No control chart in this analysis.", rule)
    if in_control:
        detail = f"No rule violations among {c.get('n_points', '?')} chart points."
    elif not viol:
        detail = "The chart reports the process out of statistical control (see its signals)."
    else:
        kinds = sorted({str(v.get("rule")) for v in viol})
        pts = sorted({int(v.get("index", 0)) + 1 for v in viol})
        shown = ", ".join(str(p) for p in pts[:12]) + (" …" if len(pts) > 12 else "")
        detail = (
            f"{len(viol)} signal{'s' if len(viol) != 1 else ''} ({', '.join(kinds)}) at point"
            f"{'s' if len(pts) != 1 else ''} {shown}: find and remove the causes before judging capability."
        )
    # the expected false alarms of these rules (qcnorm.control.false_alarm_rate), in words
    fa = FalseAlarmRate.from_dict(c.get("false_alarm") or {})
    if fa is not None:
        detail += f" {fa.plain_words()}"
    return ChecklistItem("in_control", name, bool(in_control), detail, rule)


def _item_transform(d: Mapping[str, Any]) -> ChecklistItem:
    tname = str((d.get("transform") or {}).get("name") or "none")
    norm = (d.get("normality") or {}).get("transformed") or {}
    p = norm.get("ad_p_value")
    rule = f"Anderson–Darling p ≥ {AD_P_MIN:g} after the transform"
    name = "Transform adequate?" if tname != "none" else "Data adequately normal (no transform)?"
    scale = "the transformed data" if tname != "none" else "the raw data"
    if p is None:
        return ChecklistItem(
            "transform_adequate", name, None,
            f"No Anderson–Darling p-value for {scale} (too few values): judge the probability plot.",
            rule,
        )
    ok = float(p) >= AD_P_MIN
    detail = (
        f"Anderson–Darling p = {_g(p)} on {scale} ({tname}): "
        + ("no evidence against normality." if ok else "normality is rejected; limits and ppm are approximate.")
    )
    return ChecklistItem("transform_adequate", name, ok, detail, rule)


def _item_n(d: Mapping[str, Any]) -> ChecklistItem:
    n = int(d.get("n") or 0)
    ok = n >= MIN_N
    detail = f"n = {n}" + (
        "." if ok else f": below {MIN_N}; intervals are wide and the transform choice is uncertain."
    )
    return ChecklistItem(
        "enough_data", "Enough data?", ok, detail, f"n ≥ {MIN_N} (common practice; 100 or more is better)"
    )


def _item_capability(d: Mapping[str, Any]) -> ChecklistItem:
    cap = d.get("capability") or {}
    req = cap.get("required_index")
    if req is None:
        req = (d.get("settings") or {}).get("required_index")
    rule = ("lower confidence bound of the smaller of Cpk and Ppk ≥ the required index, under the most "
            "pessimistic adequate model")
    name = "Capability at or above the requirement (with its lower confidence bound)?"
    point, lb, iname = cap.get("verdict_point"), cap.get("verdict_lower_bound"), cap.get("verdict_index_name")
    if point is None or lb is None or req is None:
        return ChecklistItem(
            "capability", name, None,
            "Not assessed: no specification limit that a part could fail was given.", rule,
        )
    conf = cap.get("confidence") or (d.get("settings") or {}).get("confidence") or 0.95
    ok = float(lb) >= float(req)
    detail = (
        f"{iname} = {_idx(point)}, {float(conf) * 100:g} % lower bound {_idx(lb)}, required {_idx(req)}"
    )
    if ok:
        detail += "."
    elif float(point) >= float(req):
        detail += ": the point estimate meets it but the lower bound does not; more data are needed."
    else:
        detail += ": below the requirement."
    mr = cap.get("model_range") or {}
    if mr.get("basis_model") and cap.get("verdict_model") and cap.get("verdict_model") != cap.get("transform_name"):
        detail += (f" Index from the most pessimistic model considered ({mr['basis_model']}, {mr.get('basis_route')} "
                   f"route); the chosen transform alone says '{cap.get('route_verdict')}'.")
    if mr.get("model_dependent"):
        detail += " Model-dependent: the adequate models disagree; collect more data."
    if (d.get("control") or {}).get("in_control") is False:
        detail += " Not meaningful while the process is out of control."
    return ChecklistItem("capability", name, ok, detail, rule)


_ITEMS = {
    "in_control": _item_in_control,
    "transform_adequate": _item_transform,
    "enough_data": _item_n,
    "capability": _item_capability,
}


def review_checklist(analysis: Any) -> tuple[ChecklistItem, ...]:
    """Answer the release-review questions for one analysis.

    Parameters
    ----------
    analysis : Analysis or Mapping
        The result of :func:`qcnorm.analyze`, or its ``to_dict()`` (the JSON contract;
        e.g. read back from the history store).

    Returns
    -------
    tuple of ChecklistItem
        In the order of :data:`CHECKLIST_KEYS`.

    Notes
    -----
    Thresholds: Anderson–Darling p ≥ 0.05 after the transform (5 % level, common
    practice); n ≥ 30 (common practice); lower one-sided confidence bound of the
    conservative index ≥ the required index (the bound is Bissell's approximation,
    computed in :mod:`qcnorm.capability`).

    References
    ----------
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker.
    Bissell, A.F. (1990). How reliable is your capability index? Applied Statistics 39(3), 331–340.
    """
    d = analysis_dict(analysis)
    return tuple(_ITEMS[k](d) for k in CHECKLIST_KEYS)


def checklist_outcome(items: tuple[ChecklistItem, ...]) -> str:
    """Summary of a checklist: ``"all_pass"``, ``"some_fail"`` or ``"incomplete"``.

    Any failed item gives ``"some_fail"``; otherwise any unanswered item gives
    ``"incomplete"``.
    """
    if any(i.passed is False for i in items):
        return "some_fail"
    if any(i.passed is None for i in items):
        return "incomplete"
    return "all_pass"
