"""Report section "Transform and why it was chosen": the chosen transform, its reason,
the candidates compared and the spread–level cross-check."""

from __future__ import annotations

from collections.abc import Mapping

from .common import _DASH, _text, fmt
from .layout import _Writer
from .view import _View


#: Columns of the candidate table: header, key in the candidate dict, format kind, alignment, width.
CANDIDATE_COLUMNS: tuple[tuple[str, str, str, str, float], ...] = (
    ("Candidate", "description", "text", "LEFT", 51),
    ("Log-lik.", "loglik", "stat", "RIGHT", 10),
    ("AIC", "aic", "stat", "RIGHT", 10),
    ("ΔAIC", "delta_aic", "stat", "RIGHT", 9),
    ("AD p after", "ad_p_value", "p", "RIGHT", 10),
    ("Skewness after", "skewness_after", "stat", "RIGHT", 10),
)


#: Names of the transform families, for a candidate that could not be fitted.
_CANDIDATE_NAMES = {"none": "No transform", "log": "Natural log", "boxcox": "Box–Cox",
                    "yeojohnson": "Yeo–Johnson", "johnson": "Johnson system"}


def _sec_transform(w: _Writer, v: _View) -> None:
    t = v.d.get("transform") or {}
    w.section("transform")
    w.para(f"Chosen: {t.get('description') or t.get('name')}", bold=True)
    w.para(str(t.get("reason") or ""))
    cands = list(t.get("candidates") or [])
    if cands:
        rows: list[tuple[str, ...]] = []
        for x in cands:
            if x.get("error"):
                # not fitted: its name, and the reason across the number columns
                name = _CANDIDATE_NAMES.get(str(x.get("name")), str(x.get("name") or _DASH))
                rows.append((f"{name}: not fitted", str(x["error"])))
                continue
            chosen = " (chosen)" if x.get("name") == v.transform_name else ""
            rows.append(tuple(
                (_text(x.get(key) or (x.get("name") if key == "description" else None))
                 + (chosen if key == "description" else ""))
                if kind == "text" else fmt(x.get(key), kind)
                for _h, key, kind, _a, _w in CANDIDATE_COLUMNS
            ))
        w.subheading("Candidates compared (lower AIC fits the original data better)")
        w.table([c[0] for c in CANDIDATE_COLUMNS], rows, widths=[c[4] for c in CANDIDATE_COLUMNS],
                align=[c[3] for c in CANDIDATE_COLUMNS], size=7.5)
    sl = t.get("spread_level")
    if isinstance(sl, Mapping):
        txt = sl.get("text") or sl.get("message") or sl.get("note")
        lam = sl.get("lambda_") if sl.get("lambda_") is not None else sl.get("lambda")
        w.para("Spread–level cross-check from the subgroups: "
               + (f"λ = {fmt(lam)}. " if lam is not None else "") + (str(txt) if txt else ""), size=8.5)
