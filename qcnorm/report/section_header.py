"""Report sections: the header (title, where the data came from) and "Data used"
(counts, chart, exclusions, notes on the data)."""

from __future__ import annotations

from .._version import __version__
from .common import _DASH, CHART_NAMES, fmt
from .layout import _Writer
from .view import _View


def _header_pairs(v: _View) -> list[tuple[str, str]]:
    m = v.meta
    d = v.d
    s = d.get("settings") or {}
    lot_shift = " / ".join(x for x in (m.lot, m.shift) if x) or _DASH
    lim = {k: "none" if s.get(k) is None else fmt(s.get(k)) for k in ("lsl", "usl")}
    spec = ("none given" if s.get("lsl") is None and s.get("usl") is None
            else f"LSL {lim['lsl']}, USL {lim['usl']}")
    spec += f", target {fmt(s.get('target'))}" if s.get("target") is not None else ""
    return [
        ("Plant", m.plant or _DASH),
        ("Line", m.line or _DASH),
        ("Characteristic", v.characteristic),
        ("Units", v.units or _DASH),
        ("Lot / shift", lot_shift),
        ("Operator", m.operator or _DASH),
        ("Date", m.date or _DASH),
        ("qcnorm version", str(d.get("qcnorm_version") or __version__)),
        ("Specification", spec),
        ("Required index", fmt(s.get("required_index"), "index")),
        ("Data SHA-256", m.data_sha256 or _DASH),
    ]


def _sec_data(w: _Writer, v: _View) -> None:
    d = v.d
    c = d.get("control") or {}
    w.section("data")
    rows = [
        ("Values analysed (n)", fmt(d.get("n"), "int")),
        ("Chart points", fmt(c.get("n_points"), "int")),
        ("Chart", CHART_NAMES.get(str(c.get("chart")), str(c.get("chart") or _DASH))),
        ("Phase", str(d.get("phase") or "I")),
        ("Rows excluded", fmt(len(d.get("excluded") or []), "int")),
    ]
    w.kv_table(rows)
    exc = list(d.get("excluded") or [])
    if exc:
        w.subheading("Exclusions")
        w.table(("Row", "Chart point", "Reason"),
                [(fmt(e.get("row"), "int"),
                  fmt(None if e.get("point") is None else int(e["point"]) + 1, "int"),
                  str(e.get("reason") or _DASH)) for e in exc],
                widths=(12, 14, 74), align=("RIGHT", "RIGHT", "LEFT"))
    else:
        w.para("No rows or chart points were excluded.")
    warns = list(d.get("warnings") or [])
    if warns:
        w.subheading("Notes on these data")
        w.bullets(warns)


def _sec_header(w: _Writer, v: _View, title: str) -> None:
    """The title and the header table (plant, line, characteristic, specification, data SHA-256)."""
    w.title(title, "Transform, normality, control chart and capability for one characteristic.")
    w.kv_table(_header_pairs(v))
