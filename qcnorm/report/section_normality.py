"""Report section "Normality before and after the transform": the test table, the
verdicts, histograms and normal probability plots."""

from __future__ import annotations

from .common import fmt
from .figures import _fig_histograms, _fig_probability
from .layout import _Writer
from .view import _View


#: Rows of the normality table: label, key in NormalityReport.to_dict(), format kind.
NORMALITY_ROWS: tuple[tuple[str, str, str], ...] = (
    ("Anderson–Darling A²", "ad_statistic", "stat"),
    ("Anderson–Darling A*", "ad_statistic_star", "stat"),
    ("Anderson–Darling p", "ad_p_value", "p"),
    ("Shapiro–Wilk W", "shapiro_w", "stat"),
    ("Shapiro–Wilk p", "shapiro_p_value", "p"),
    ("Skewness", "skewness", "stat"),
    ("Skewness test p", "skewness_p_value", "p"),
    ("Excess kurtosis", "excess_kurtosis", "stat"),
    ("Kurtosis test p", "kurtosis_p_value", "p"),
)


def _sec_normality(w: _Writer, v: _View) -> None:
    nr = (v.d.get("normality") or {}).get("raw") or {}
    nt = (v.d.get("normality") or {}).get("transformed") or {}
    w.section("normality")
    rows = [(label, fmt(nr.get(key), kind), fmt(nt.get(key), kind)) for label, key, kind in NORMALITY_ROWS]
    w.table(("Statistic", "Measurements", f"Transformed ({v.transform_name})"), rows,
            widths=(40, 30, 30), align=("LEFT", "RIGHT", "RIGHT"))
    for label, rep in (("Measurements", nr), ("Transformed", nt)):
        if rep.get("verdict"):
            w.para(f"{label}: {rep['verdict']}", size=8.5)
    w.para("A p-value below 0.05 is evidence against normality. With many values every test "
           "rejects small departures, so read the skewness and the probability plot beside it.", size=8)
    w.figure(_fig_histograms(v, w.epw), 62, "Histograms of the measurements and of the transformed values")
    w.figure(_fig_probability(v, w.epw), 62, "Normal probability plots before and after the transform")
