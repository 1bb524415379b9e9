"""Report section "Control chart in measurement units": the chart figure, the limits on
both scales, the rule violations and the expected false alarms."""

from __future__ import annotations

from ..control import FalseAlarmRate
from .common import _DASH, fmt
from .figures import _fig_chart
from .layout import _Writer
from .view import _View


def _sec_chart(w: _Writer, v: _View) -> None:
    c = v.d.get("control") or {}
    u = c.get("units") or {}
    tr = c.get("transformed") or {}
    disp = c.get("dispersion") or {}
    w.section("chart")
    w.figure(_fig_chart(v, w.epw), 105, "Control chart in measurement units and its dispersion chart")
    w.table(
        ("Line", "Measurement units", "Transformed scale"),
        [
            ("Center", fmt(u.get("center")), fmt(tr.get("center"))),
            ("Lower control limit", fmt(u.get("lcl")), fmt(tr.get("lcl"))),
            ("Upper control limit", fmt(u.get("ucl")), fmt(tr.get("ucl"))),
            ("Sigma within", _DASH, fmt(tr.get("sigma_within"))),
            ("Sigma overall", _DASH, fmt(tr.get("sigma_overall"))),
            (f"{v.chart_series['dispersion']['label'].capitalize()}: center / LCL / UCL", _DASH,
             f"{fmt(disp.get('center'))} / {fmt(disp.get('lcl'))} / {fmt(disp.get('ucl'))}"),
        ],
        widths=(40, 30, 30), align=("LEFT", "RIGHT", "RIGHT"),
    )
    for note in (u.get("lcl_note"), u.get("ucl_note")):
        if note:
            w.para(str(note), size=8.5)
    # control.violations already holds the dispersion-chart signals; add any it lacks, once
    viol = list(c.get("violations") or [])
    seen = {(str(x.get("rule")), x.get("index")) for x in viol}
    viol += [x for x in disp.get("violations") or [] if (str(x.get("rule")), x.get("index")) not in seen]
    if viol:
        w.subheading(f"Rule violations ({len(viol)})")
        shown = viol[:150]
        w.table((v.chart_series["xlabel"].capitalize(), "Rule", "What it means"),
                [(fmt(int(x.get("index", 0)) + 1, "int"), str(x.get("rule") or _DASH),
                  str(x.get("description") or _DASH)) for x in shown],
                widths=(13, 20, 67), align=("RIGHT", "LEFT", "LEFT"))
        if len(viol) > len(shown):
            w.para(f"… and {len(viol) - len(shown)} more (see the JSON export).", size=8)
    else:
        w.para("No rule violations: the process is in statistical control on this chart.")
    fa = FalseAlarmRate.from_dict(c.get("false_alarm") or {})
    if fa is not None:
        w.para(f"Expected false alarms: {fa.plain_words()}", size=8.5)
