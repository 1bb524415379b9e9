"""The "All characteristics" page (issue 7) and its Ppk figure.

Expected values come from the core itself: :func:`qcnorm.batch.run_batch` on the same
bytes, specs and subgroup column, and :func:`qcnorm.analyze` for the characteristic
opened from the page (DESIGN.md, "Statistics are computed once, in the core": the page
must show the core's numbers, formatted by qcnorm.ui.common.fmt, and compute none).
The figure is checked against the fields of the BatchRows it was given.
"""

from __future__ import annotations

import io
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from streamlit.testing.v1 import AppTest

from qcnorm import plots
from qcnorm.analysis import analyze
from qcnorm.batch import BatchRow, run_batch
from qcnorm.data import read_measurements
from qcnorm.ui import common
from qcnorm.ui.common import fmt, fmt_p, fmt_ppm

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")
WIDE = ROOT / "demo_data" / "line3_spool_wide.csv"
SPECS = ROOT / "demo_data" / "line3_spool_specs.csv"


def _app() -> AppTest:
    return AppTest.from_file(APP, default_timeout=90)


def _ok(at: AppTest) -> AppTest:
    assert not at.exception, [e.value for e in at.exception]
    return at


def _go(at: AppTest, key: str) -> AppTest:
    at.sidebar.radio(key="qc_page").set_value(key).run()
    return _ok(at)


def _table(at: AppTest):
    frames = [d.value for d in at.dataframe if "rank" in d.value.columns]
    assert len(frames) == 1, "the ranked table is on the page"
    return frames[0]


def _wide_csv(rng: np.random.Generator, n: int = 60) -> bytes:
    """Two usable columns and one constant column (no spread: analyze refuses it)."""
    gap = np.round(rng.lognormal(np.log(3.0), 0.3, n), 3)
    width = np.round(rng.normal(10.0, 0.2, n), 3)
    lines = ["Part,Gap (mm),Width (mm),Stuck (mm)"]
    lines += [f"P{i},{gap[i]},{width[i]},5.0" for i in range(n)]
    return ("\n".join(lines) + "\n").encode()


def test_demo_overview_ranks_six_with_the_batch_numbers_and_opens_one():
    at = _go(_app().run(), "overview")
    assert not at.error
    assert any("authorised person" in c.value for c in at.caption)  # the release caution
    ref = run_batch(WIDE, specs=SPECS, subgroup="Subgroup")  # Load pre-selects 'Subgroup'
    tbl = _table(at)
    assert len(tbl) == len(ref.rows) == 6
    assert list(tbl["rank"]) == [1, 2, 3, 4, 5, 6]
    for (_, shown), r in zip(tbl.iterrows(), ref.rows):
        assert shown["characteristic"].split(" [")[0] == r.characteristic
        assert shown["Cpk"] == fmt(r.cpk, 3) and shown["Ppk"] == fmt(r.ppk, 3)
        assert shown["Cpk 95% low"] == fmt(r.cpk_lower, 3)
        assert shown["Ppk 95% low"] == fmt(r.ppk_lower, 3)
        assert shown["ppm expected"] == fmt_ppm(r.ppm_overall)
        assert shown["ppm observed"] == fmt_ppm(r.ppm_observed)
        assert shown["transform"] == r.transform
        assert shown["in control"] == ("yes" if r.in_control else "NO")
        assert shown["n"] == f"{r.n:,}"
        assert shown["AD p before"] == fmt_p(r.ad_p_raw)  # '< 0.0001' for the skewed ones
    assert any(v == "< 0.0001" for v in tbl["AD p before"])  # demo Ra, Residue… are far from normal
    # the chosen row's "what to know" is shown in full beside the opener (cut off in the table)
    first = ref.rows[0]
    if first.warnings:
        md = common.md  # names and messages are shown as text, never as markup
        assert any(c.value == f"**{md(first.characteristic)}:** {md(first.warnings)}" for c in at.caption)
    # worst first: the batch's own ordering key never decreases down the table
    keys = [r.sort_key for r in ref.rows]
    assert keys == sorted(keys)
    fig = [c for c in at.get("plotly_chart")]
    assert fig, "the Ppk chart is drawn"

    # click through to the third-ranked characteristic
    pick = ref.rows[2]
    at.selectbox(key="qc_ov_pick").set_value(pick.characteristic).run()
    at.button(key="qc_ov_open").click().run()
    _ok(at)
    assert at.session_state["qc_page"] == "shape"
    col = f"{pick.characteristic} [{pick.units}]"
    assert at.session_state["qc_column"] == col and at.session_state["qc_pick"] == col
    assert at.session_state["qc_lsl"] == pick.lsl and at.session_state["qc_usl"] == pick.usl
    assert at.session_state["qc_target"] == pick.target
    # the single-characteristic flow analyses exactly that column with those specs
    m = read_measurements(WIDE, column=col, subgroup="Subgroup", order="Time")
    a = analyze(m, lsl=pick.lsl, usl=pick.usl, target=pick.target, units=pick.units)
    assert any(a.transform.describe() in md.value for md in at.markdown)
    _go(at, "capability")
    shown = {mt.label: mt.value for mt in at.metric}
    assert shown["Ppk"] == fmt(pick.ppk, 3) == fmt(a.capability.ppk, 3)
    assert shown["Cpk"] == fmt(pick.cpk, 3)


def test_own_file_bad_column_in_its_row_specs_upload_and_bad_specs(rng):
    data = _wide_csv(rng)
    at = _app().run()
    at.radio(key="qc_source_kind").set_value("upload").run()
    at.file_uploader(key="qc_upload").set_value(("parts.csv", data, "text/csv")).run()
    _go(at, "overview")
    tbl = _table(at)
    ref = run_batch(io.BytesIO(data))
    assert len(tbl) == 3
    stuck = tbl[tbl["characteristic"].str.startswith("Stuck")].iloc[0]
    bad = next(r for r in ref.rows if r.characteristic == "Stuck")
    assert stuck["verdict"] == "NOT ANALYSED" and stuck["what to know"] == bad.error
    assert "no spread" in stuck["what to know"]
    assert any(common.md(bad.error) in e.value and "Stuck" in e.value for e in at.error)  # listed under the table too (as text)
    good = tbl[~tbl["characteristic"].str.startswith("Stuck")]
    assert set(good["verdict"]) == {"not assessed"} and set(good["transform"]) != {"—"}

    # a specs CSV gives Gap its limits; the numbers are run_batch's with the same specs
    specs = b"characteristic,lsl,usl,target,required_index,units\nGap,1.0,6.5,,1.33,mm\n"
    at.file_uploader(key="qc_ov_specs_upload").set_value(("specs.csv", specs, "text/csv")).run()
    _ok(at)
    assert not [e for e in at.error if "must be" in e.value]
    ref = run_batch(io.BytesIO(data), specs=io.StringIO(specs.decode()))
    gap = next(r for r in ref.rows if r.characteristic == "Gap")
    shown = _table(at)
    row = shown[shown["characteristic"].str.startswith("Gap")].iloc[0]
    assert row["Ppk"] == fmt(gap.ppk, 3) and row["Ppk 95% low"] == fmt(gap.ppk_lower, 3)
    assert row["rank"] == gap.rank

    # inconsistent limits: the reader's message, the table stays as it was
    worse = b"characteristic,lsl,usl\nGap,7,2\n"
    at.file_uploader(key="qc_ov_specs_upload").set_value(("worse.csv", worse, "text/csv")).run()
    _ok(at)
    assert any("must be below usl" in e.value for e in at.error)
    assert _table(at)["Ppk"].tolist() == shown["Ppk"].tolist()


# --------------------------------------------------------------------------------------
# the figure draws the rows' numbers, nothing else
# --------------------------------------------------------------------------------------


def _rows(rng) -> tuple[BatchRow, ...]:
    data = _wide_csv(rng)
    specs = b"characteristic,lsl,usl\nGap,1.0,6.5\nWidth,9.0,11.0\n"
    return run_batch(io.BytesIO(data), specs=io.StringIO(specs.decode())).rows


def test_ppk_figure_draws_every_row_and_the_intervals_the_rows_hold(rng):
    rows = _rows(rng)
    assert [r.error is not None for r in rows].count(True) == 1
    fig = plots.ppk_overview_figure(rows)
    names = [r.characteristic for r in rows]
    assert list(fig.layout.yaxis.categoryarray) == names  # every characteristic has its row
    pts = {y: x for t in fig.data if t.mode == "markers" and t.customdata is not None
           for x, y in zip(t.x, t.y)}
    segs = {}
    for t in fig.data:
        if t.mode == "lines":
            xs, ys = list(t.x), list(t.y)
            for i in range(0, len(xs), 3):
                segs[ys[i]] = (xs[i], xs[i + 1])
    for r in rows:
        if r.ppk is None:
            assert r.characteristic not in pts and r.characteristic not in segs
        else:
            assert pts[r.characteristic] == r.ppk
            assert segs[r.characteristic] == (r.ppk_lower, r.ppk)
    notes = {a.y: a.text for a in fig.layout.annotations if a.yref == "y"}
    assert set(notes) == {r.characteristic for r in rows if r.ppk is None}
    assert "not analysed" in notes["Stuck"]
    # one required index shared by all rows: one dashed line there
    assert [s.x0 for s in fig.layout.shapes] == [1.33]


def test_ppk_figure_marks_each_required_index_when_they_differ(rng):
    rows = list(_rows(rng))
    rows[0] = replace(rows[0], required_index=1.67)
    fig = plots.ppk_overview_figure(rows)
    ticks = [t for t in fig.data if t.name == "required index"]
    assert len(ticks) == 1 and list(ticks[0].x) == [r.required_index for r in rows]
    assert not fig.layout.shapes
    # unstable rows are hollow, stable ones filled (the row's in_control field)
    for t in fig.data:
        if t.mode == "markers" and t.customdata is not None:
            for sym, cd in zip(t.marker.symbol, t.customdata):
                assert (sym == "circle") == (cd[2] == "in control")


@pytest.mark.parametrize("verdict", ["fails", "marginal", "meets"])
def test_ppk_figure_colours_follow_the_verdict(verdict):
    row = BatchRow(characteristic="X", n=100, ppk=1.2, ppk_lower=1.05, in_control=True, verdict=verdict)
    fig = plots.ppk_overview_figure([row])
    marker = [t for t in fig.data if t.mode == "markers" and t.customdata is not None][0]
    assert marker.marker.color == plots._VERDICT_STYLE[verdict][1]
