"""The view: everything the report prints or draws, taken from one Analysis (no statistics)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..checklist import ChecklistItem, analysis_dict, review_checklist
from ..errors import QcnormError
from .common import RULE_NAMES, ReportMeta, _get


class _View:
    """Everything the report prints or draws, taken from one Analysis (no statistics)."""

    def __init__(self, analysis: Any, meta: ReportMeta) -> None:
        self.a = analysis
        self.d: dict[str, Any] = analysis_dict(analysis)
        d = self.d
        self.meta = meta
        self.characteristic = meta.characteristic or d.get("characteristic") or "(unnamed characteristic)"
        self.units = meta.units or d.get("units")
        self.units_label = f"measurement [{self.units}]" if self.units else "measurement"
        self.values = np.asarray(analysis.values, dtype=float)
        self.transformed = np.asarray(analysis.transformed, dtype=float)
        s = d.get("settings") or {}
        self.lsl, self.usl, self.target = s.get("lsl"), s.get("usl"), s.get("target")
        cap = d.get("capability") or {}
        self.lsl_t, self.usl_t = cap.get("lsl_transformed"), cap.get("usl_transformed")
        self.target_t = cap.get("target_transformed")
        self.transform_name = (d.get("transform") or {}).get("name") or "none"
        self.prob_raw = self._prob(self.values)
        self.prob_transformed = self._prob(self.transformed)
        self.chart_series = self._chart()
        self.checklist: tuple[ChecklistItem, ...] = review_checklist(d)

    @staticmethod
    def _prob(x: np.ndarray) -> dict[str, Any] | None:
        """Probability-plot data from the core (qcnorm.normality.probability_plot)."""
        from ..normality import probability_plot

        try:
            pp = probability_plot(x)
        except QcnormError:
            return None
        thin = f", {pp.theoretical.size} of {pp.n} points shown" if pp.thinned else ""
        return {
            "theoretical": np.asarray(pp.theoretical, float), "ordered": np.asarray(pp.ordered, float),
            "lower": np.asarray(pp.lower, float), "upper": np.asarray(pp.upper, float),
            "slope": float(pp.line_slope), "intercept": float(pp.line_intercept),
            "band_label": f"{pp.confidence * 100:g} % pointwise band{thin}",
        }

    def _chart(self) -> dict[str, Any]:
        ch, lu = self.a.chart, self.a.limits_units
        c = self.d.get("control") or {}
        kind = c.get("chart") or getattr(ch, "chart", "individuals")
        individual = kind == "individuals"
        pts_units = lu.points
        disp = getattr(ch, "dispersion", None)
        stat = str(_get(disp, "statistic", default="moving_range"))
        stat_label = {"moving_range": "moving range", "range": "range", "stdev": "standard deviation"}.get(stat, stat)
        exc_pts = sorted({int(e.get("index", e.get("point", -1))) for e in c.get("excluded_points") or []
                          if isinstance(e, Mapping)})
        # as in the app: the point where a rule triggers (rule ids beside it) and the other
        # points of its pattern; excluded points are shown as excluded only
        triggers: dict[int, list[str]] = {}
        pattern: set[int] = set()
        for v in c.get("violations") or []:
            if v.get("chart", "location") != "location" or v.get("rule") == "DISP":
                continue
            i = int(v.get("index", -1))
            if i not in exc_pts:
                rules = triggers.setdefault(i, [])
                if v.get("rule") not in rules:
                    rules.append(str(v.get("rule")))
            pattern.update(int(p) for p in v.get("points") or [])
        pattern_pts = sorted(pattern - set(triggers) - set(exc_pts))
        dviol = (c.get("dispersion") or {}).get("violations") or []
        disp_sig = sorted({int(v.get("index", -1)) for v in dviol})
        rules = RULE_NAMES.get(str(c.get("rules")), str(c.get("rules") or ""))
        title = {
            "individuals": "Individuals chart",
            "xbar_r": "X̄ chart (subgroup means)",
            "xbar_s": "X̄ chart (subgroup means)",
        }.get(kind, f"{kind} chart")
        return {
            "kind": kind,
            "points": np.asarray(pts_units, dtype=float),
            "center": _get(lu, "center"),
            "ucl": _get(lu, "ucl"),
            "lcl": _get(lu, "lcl"),
            "ucl_note": _get(lu, "ucl_note"),
            "lcl_note": _get(lu, "lcl_note"),
            "label": "value" if individual else "subgroup mean",
            "title": f"{title} in measurement units, phase {c.get('phase', 'I')}, {rules} rules",
            "xlabel": "observation" if individual else "subgroup",
            "triggers": triggers,
            "pattern_points": pattern_pts,
            "excluded_points": exc_pts,
            "dispersion": {
                "values": _get(disp, "values"),
                "signal_points": disp_sig,
                "center": _get(disp, "center"),
                "ucl": _get(disp, "ucl"),
                "lcl": _get(disp, "lcl"),
                "label": stat_label,
                "title": f"{stat_label.capitalize()} chart (on the transformed scale)",
                "ylabel": f"{stat_label} (transformed)",
            },
        }
