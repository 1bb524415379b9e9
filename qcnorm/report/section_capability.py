"""Report section "Capability and expected ppm": indices with intervals, ppm, the
percentile cross-check and the table across models (capability.model_range)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from .common import _DASH, _text, fmt
from .layout import _Writer
from .view import _View


def _ci(iv: Any, side: str) -> Any:
    return iv.get(side) if isinstance(iv, Mapping) else None


def _sec_capability(w: _Writer, v: _View) -> None:
    cap = v.d.get("capability") or {}
    w.section("capability")
    if cap.get("verdict") in (None, "not_assessed"):
        w.para("Capability was not assessed: no specification limit that a part could fail was given.")
        return
    if (v.d.get("control") or {}).get("in_control") is False:
        w.boxed("The process is not in statistical control: these figures describe these data only "
                "and do not predict future parts.", fill=(250, 225, 225))
    conf = cap.get("confidence") or 0.95
    pct = f"{float(conf) * 100:g} %"
    rows = []
    for name, key, lb in (("Cp", "cp", None), ("Cpk", "cpk", "cpk_lower_bound"), ("Pp", "pp", None),
                          ("Ppk", "ppk", "ppk_lower_bound"), ("Cpm", "cpm", None)):
        iv = cap.get(f"{key}_ci")
        rows.append((name, fmt(cap.get(key), "index"), fmt(_ci(iv, "low"), "index"),
                     fmt(_ci(iv, "high"), "index"), fmt(cap.get(lb), "index") if lb else _DASH))
    w.table(("Index", "Estimate", f"{pct} low", f"{pct} high", f"{pct} lower bound"), rows,
            widths=(20, 20, 20, 20, 20), align=("LEFT", "RIGHT", "RIGHT", "RIGHT", "RIGHT"))
    w.subheading("Parts per million outside the specification")
    ppm_rows = [
        ("Expected, within sigma", cap.get("ppm_within_below"), cap.get("ppm_within_above"), cap.get("ppm_within")),
        ("Expected, overall sigma", cap.get("ppm_overall_below"), cap.get("ppm_overall_above"), cap.get("ppm_overall")),
        ("Observed in these data", cap.get("ppm_observed_below"), cap.get("ppm_observed_above"), cap.get("ppm_observed")),
    ]
    w.table(("", "Below LSL", "Above USL", "Total"),
            [(r[0], fmt(r[1], "ppm"), fmt(r[2], "ppm"), fmt(r[3], "ppm")) for r in ppm_rows],
            widths=(40, 20, 20, 20), align=("LEFT", "RIGHT", "RIGHT", "RIGHT"))
    perc = cap.get("percentile") or {}
    w.subheading("Percentile cross-check")
    if perc.get("distribution"):
        w.table(("Best-fitting distribution", "Pp (percentile)", "Ppk (percentile)"),
                [(_text(perc.get("distribution")), fmt(perc.get("pp"), "index"), fmt(perc.get("ppk"), "index"))],
                widths=(50, 25, 25), align=("LEFT", "RIGHT", "RIGHT"))
    else:
        w.para("No distribution was fitted, so there is no percentile cross-check.")
    _sub_model_range(w, cap.get("model_range"))
    w.para(str(cap.get("verdict_text") or ""), bold=True)
    for note in cap.get("notes") or []:
        w.para(str(note), size=8)


def _sub_model_range(w: _Writer, mr: Any) -> None:
    """ppm and Ppk under every fitted model (capability.model_range), as the JSON holds them."""
    if not isinstance(mr, Mapping) or not mr.get("models"):
        return
    w.subheading("Across models")
    if mr.get("summary_text"):
        w.para(str(mr["summary_text"]))
    rows = []
    for m in mr["models"]:
        flag = "bound near limit" if m.get("bound_near_limit") else ""
        rows.append((_text(m.get("model")) + (" (chosen)" if m.get("chosen") else ""),
                     _text(m.get("route")), fmt(m.get("ppm"), "ppm"), fmt(m.get("ppk"), "index"),
                     fmt(m.get("delta_aic"), "stat") if m.get("delta_aic") is not None else _DASH,
                     "yes" if m.get("adequate") else "no", flag,
                     str(m.get("verdict") or _DASH).replace("_", " ")))
    w.table(("Model", "Route", "ppm", "Ppk", "ΔAIC", "Adequate", "Flag", "Verdict alone"), rows,
            widths=(19, 12, 12, 9, 10, 11, 15, 12),
            align=("LEFT", "LEFT", "RIGHT", "RIGHT", "RIGHT", "LEFT", "LEFT", "LEFT"))
    w.para(str(mr.get("verdict_basis") or ""), size=8.5)
    w.para(f"Adequate: Anderson–Darling p ≥ {fmt(mr.get('ad_alpha'), 'stat')} (A² ≤ "
           f"{fmt(mr.get('a2_critical'), 'stat')} where no p-value is published) and AIC within "
           f"{fmt(mr.get('delta_aic_window'), 'stat')} of the best (Burnham & Anderson 2002). A fitted bound "
           "within its Robson & Whitlock (1964) margin of a limit may not make the verdict optimistic.", size=8)
