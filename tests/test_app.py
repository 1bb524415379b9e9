"""The app's flow with Streamlit's AppTest: the numbers shown are the core's numbers.

Each expected value is computed here by the core itself — qcnorm.data.read_measurements
and qcnorm.analyze on the same bytes and options — and compared with what the page
shows (DESIGN.md: "Statistics are computed once, in the core"; the UI computes none).
Bad files must give an error element and never an exception on the page (issue 5).
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pytest
from streamlit.testing.v1 import AppTest

from qcnorm.analysis import analyze
from qcnorm.data import read_measurements
from qcnorm.ui.common import fmt, fmt_ppm

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")
WIDE = ROOT / "demo_data" / "line3_spool_wide.csv"
TIMEOUT = 60


def _app() -> AppTest:
    return AppTest.from_file(APP, default_timeout=TIMEOUT)


def _go(at: AppTest, key: str) -> AppTest:
    at.sidebar.radio(key="qc_page").set_value(key).run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _metrics(at: AppTest) -> dict[str, str]:
    return {m.label: m.value for m in at.metric}


def _upload(at: AppTest, name: str, data: bytes, mime: str = "text/csv") -> AppTest:
    at.radio(key="qc_source_kind").set_value("upload").run()
    at.file_uploader(key="qc_upload").set_value((name, data, mime)).run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _csv(rng: np.random.Generator, n: int = 80) -> tuple[bytes, np.ndarray]:
    x = np.round(rng.lognormal(np.log(3.0), 0.4, n), 3)
    lines = ["Part,Batch,Gap (mm)"] + [f"P{i},B{i // 4},{v}" for i, v in enumerate(x)]
    lines[11] = "P10,B2,n/a"  # one unreadable cell: must show in the ingest report
    return ("\n".join(lines) + "\n").encode(), x


def test_demo_loads_and_every_page_shows_the_cores_numbers():
    at = _app().run()
    assert not at.exception and not at.error
    # demo specs pre-filled from demo_data/line3_spool_specs.csv (Ra: USL 1.6, one-sided)
    assert at.number_input(key="qc_usl").value == pytest.approx(1.6)
    assert at.number_input(key="qc_lsl").value is None
    pick = at.selectbox(key="qc_pick").value
    m = read_measurements(WIDE, column=pick, subgroup="Subgroup", order="Time")
    a = analyze(m, usl=1.6, units="µm")
    assert _metrics(at)["Values used"] == f"{m.n:,}"
    assert any("authorised person" in c.value for c in at.caption)

    _go(at, "shape")
    assert any(a.transform.describe() in md.value for md in at.markdown)
    assert any(a.transform_reason == i.value for i in at.info)

    _go(at, "stability")
    shown = _metrics(at)
    assert shown["Centre line"] == f"{fmt(a.limits_units.center)} µm"
    assert shown["Signals"] == str(len(a.chart.violations) + len(a.chart.dispersion.violations))
    # the chart type in words, not the core's id
    assert a.chart.chart == "xbar_r"
    assert any("Chart: subgroup mean and range (X̄–R)" in c.value for c in at.caption)
    assert not any("Chart: xbar_r" in c.value for c in at.caption)
    assert any("authorised person" in c.value for c in at.caption)

    _go(at, "capability")
    shown = _metrics(at)
    assert shown["Cpk"] == fmt(a.capability.cpk, 3)
    assert shown["Ppk"] == fmt(a.capability.ppk, 3)
    text = " ".join(md.value for md in at.markdown)
    if not a.in_control:
        assert "capability is not meaningful while the process is unstable" in text
    assert any(a.capability.verdict_text in e.value for e in list(at.error) + list(at.warning) + list(at.success))
    # demo Ra is one-sided (USL 1.6 µm only): the blank LSL reads "none"
    assert any("Specification: LSL none, USL 1.6 µm, target none." in c.value for c in at.caption)
    # "not meaningful while unstable" is said in the verdict; no second box repeats it
    boxes = [e.value for e in list(at.error) + list(at.warning) + list(at.success) + list(at.info)]
    if not a.in_control and "not meaningful" in a.capability.verdict_text:
        assert sum("not meaningful" in b for b in boxes) == 1
    # the range across models is drawn from capability.model_range, one row per model
    mr = a.capability.model_range
    assert any(h.value == "Across models" for h in at.subheader)
    mr_tbl = next(t.value for t in at.table if "verdict alone" in t.value.columns)
    assert list(mr_tbl["model"]) == [m.model + (" (chosen)" if m.chosen else "") for m in mr.models]
    assert list(mr_tbl["ppm"]) == [fmt_ppm(m.ppm) for m in mr.models]


def test_upload_choose_column_specs_override_and_exclude(rng):
    data, _ = _csv(rng)
    at = _upload(_app().run(), "gaps.csv", data)
    assert at.selectbox(key="qc_pick").value == "Gap (mm)"
    # choose the subgroup column "none" -> individuals; enter specs
    at.selectbox(key="qc_subgroup").set_value(None)
    at.number_input(key="qc_lsl").set_value(1.0)
    at.number_input(key="qc_usl").set_value(9.0)
    at.number_input(key="qc_target").set_value(3.0).run()
    assert not at.exception and not at.error
    assert _metrics(at)["Values left out"] == "1"
    assert any("n/a" in str(df.value.to_string()) for df in at.dataframe)  # excluded row shown

    m = read_measurements(io.BytesIO(data), column="Gap (mm)")
    assert m.n == 79

    # override the transform on the Shape page
    _go(at, "shape")
    at.selectbox(key="qc_transform").set_value("boxcox").run()
    assert not at.exception
    a = analyze(m, lsl=1.0, usl=9.0, target=3.0, transform="boxcox", units="mm")
    assert a.transform.name == "boxcox"
    assert any(a.transform.describe() in md.value for md in at.markdown)
    # an override says so, and where to see the whole ranking again
    assert any("chose this transform yourself" in c.value for c in at.caption)

    _go(at, "capability")
    assert _metrics(at)["Cpk"] == fmt(a.capability.cpk, 3)
    tbl = at.table[0].value  # a static table: wraps, never cuts a column off on a laptop
    assert tbl.loc[tbl["index"] == "Pp", "estimate"].item() == fmt(a.capability.pp, 3)
    ppm = at.table[1].value
    assert list(ppm.columns) == ["parts per million", "below LSL", "above USL", "total"]
    assert any(f"target {fmt(3.0)} mm" in c.value for c in at.caption)  # target with its units

    # exclude a point as an assignable cause -> Phase I re-estimate by the core
    _go(at, "stability")
    at.multiselect(key="qc_exclude_pick").set_value([4])
    at.text_input(key="qc_exclude_reason").set_value("probe not seated")
    [b for b in at.button if b.label.startswith("Exclude")][0].click().run()
    assert not at.exception
    assert at.session_state["qc_exclusions"] == {4: "probe not seated"}
    a2 = analyze(m, lsl=1.0, usl=9.0, target=3.0, transform="boxcox", units="mm",
                 exclude={4: "probe not seated"})
    assert _metrics(at)["Centre line"] == f"{fmt(a2.limits_units.center)} mm"
    assert a2.limits_units.center != a.limits_units.center
    _go(at, "capability")
    assert _metrics(at)["Cpk"] == fmt(a2.capability.cpk, 3)


@pytest.mark.parametrize("name,data", [
    ("photo.csv", b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 8),
    ("empty.csv", b""),
    ("words.csv", b"name,comment\nalpha,good\nbeta,bad\n"),
    ("short.csv", b"x\n1.0\n2.0\n"),
    ("book.xlsx", b"PK\x03\x04 this is not really a workbook"),
])
def test_bad_files_show_an_error_and_no_exception(name, data):
    at = _upload(_app().run(), name, data)
    for page in ("load", "shape", "stability", "capability"):
        if page != "load":
            _go(at, page)
        assert not at.exception
    # on some page the user was told what is wrong
    at = _upload(_app().run(), name, data)
    msgs = [e.value for e in at.error]
    _go(at, "shape")
    msgs += [e.value for e in at.error]
    assert msgs, "a bad file must produce an error message"
    assert all("Traceback" not in m for m in msgs)


def test_inconsistent_specs_show_the_cores_message():
    at = _app().run()
    at.number_input(key="qc_lsl").set_value(5.0)
    at.number_input(key="qc_usl").set_value(1.0).run()
    _go(at, "capability")
    assert not at.exception
    assert any("lower spec limit" in e.value.lower() for e in at.error)


def test_paste_from_spreadsheet():
    at = _app().run()
    at.radio(key="qc_source_kind").set_value("paste").run()
    vals = "\n".join(f"{v:.3f}" for v in np.random.default_rng(5).gamma(4.0, 0.5, 40))
    at.text_area(key="qc_paste").set_value("Torque\n" + vals).run()
    [b for b in at.button if b.label.startswith("Use the pasted")][0].click().run()
    assert not at.exception and not at.error
    assert _metrics(at)["Values used"] == "40"


MESSY = ROOT / "tests" / "data" / "messy"


def test_censored_file_speaks_in_the_apps_words_and_keeps_ids_out_of_subgroups():
    """censored.csv: the reader's hints name Python arguments (include_censored=True,
    excluded_rows()); on the page they must name the app's own controls instead. Its
    'Sample' column numbers each row (an id), so it must not be pre-chosen as subgroups."""
    at = _upload(_app().run(), "censored.csv", (MESSY / "censored.csv").read_bytes())
    assert not at.exception
    assert at.selectbox(key="qc_subgroup").value is None
    # a blank subgroup/time choice reads as "none", not as Streamlit's "Choose an option"
    assert at.selectbox(key="qc_subgroup").proto.placeholder.startswith("none")
    assert at.selectbox(key="qc_time").proto.placeholder.startswith("none")
    shown = [w.value for w in at.warning] + [c.value for c in at.caption]
    shown += [str(df.value.to_string()) for df in at.dataframe]
    text = " ".join(shown)
    assert "censored" in text  # the warning is there ...
    assert "include_censored" not in text and "excluded_rows()" not in text  # ... in app words
    assert "Use censored values" in text


def test_demo_subgroup_column_is_still_guessed():
    """Repeated labels (demo 'Subgroup': five parts each) are a subgroup column."""
    at = _app().run()
    assert at.selectbox(key="qc_subgroup").value == "Subgroup"


def test_sheet_note_points_at_the_sheet_control():
    at = _upload(_app().run(), "title_two_sheets.xlsx", (MESSY / "title_two_sheets.xlsx").read_bytes(),
                 mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet")
    notes = " ".join(c.value for c in at.caption)
    assert "Read sheet 'Data'" in notes
    assert "sheet=" not in notes and "decimal=" not in notes
    assert "under 'Sheet'" in notes


def test_tiny_p_values_read_as_less_than():
    """Demo Ra is strongly skewed: its raw Anderson–Darling p is far below 1e-4 (core's own
    number, checked here first), which the page shows as '< 0.0001', not as 1e-23."""
    at = _go(_app().run(), "shape")
    pick = at.session_state["qc_pick"]
    m = read_measurements(WIDE, column=pick, subgroup="Subgroup", order="Time")
    a = analyze(m, usl=1.6, units="µm")
    assert a.normality_raw.ad_p_value < 1e-4
    tbl = at.dataframe[0].value
    row = tbl[tbl["diagnostic"] == "Anderson–Darling p-value"]
    assert row["measurements"].item() == "< 0.0001"
    assert row["after transform"].item() == fmt(a.normality_transformed.ad_p_value)
    assert not any("chose this transform yourself" in c.value for c in at.caption)  # auto: no note


def test_a_refusal_on_an_analysis_page_offers_the_way_back_to_load():
    """Too few values (the core's minimum is 8): the Shape page shows the core's message and
    a button back to Load, where the column or the file is changed."""
    data = b"Gap (mm)\n" + b"\n".join(f"{v:.2f}".encode() for v in (1.1, 1.3, 0.9, 1.2, 1.0)) + b"\n"
    at = _go(_upload(_app().run(), "five.csv", data), "shape")
    assert any("at least 8" in e.value for e in at.error)
    back = [b for b in at.button if b.label == "Back to 1 · Load"]
    assert back
    back[0].click().run()
    assert not at.exception
    assert at.session_state["qc_page"] == "load"


def test_shape_page_states_how_the_box_cox_lambda_was_used():
    # Demo Ra with Box–Cox requested: the reason on the Shape page is the core's, and it says
    # whether λ was rounded (default) or used as estimated (checkbox off) — issue 10.
    at = _app().run()
    pick = at.selectbox(key="qc_pick").value
    m = read_measurements(WIDE, column=pick, subgroup="Subgroup", order="Time")
    _go(at, "shape")
    at.selectbox(key="qc_transform").set_value("boxcox").run()
    assert not at.exception
    a = analyze(m, usl=1.6, units="µm", transform="boxcox")
    p = a.transform.params_
    assert a.transform.rounded_  # Ra: the 95 % interval of λ holds 0 (the log)
    assert any(a.transform_reason == i.value for i in at.info)
    assert any(f"rounded from the maximum-likelihood estimate {p['lambda_mle']:.3g}" in i.value for i in at.info)
    at.checkbox(key="qc_round_lambda").uncheck().run()
    assert not at.exception
    exact = analyze(m, usl=1.6, units="µm", transform="boxcox", round_lambda=False)
    assert exact.transform.params_["lambda"] == exact.transform.params_["lambda_mle"]
    assert any(exact.transform_reason == i.value for i in at.info)
    assert any("rounding to a convenient value was switched off" in i.value for i in at.info)


def test_long_chart_lists_signals_and_takes_other_points_by_number(rng):
    """A chart longer than PICK_LIST_MAX lists only its signals for exclusion; other
    points are typed by number, and a wrong number gets a message instead of an exclusion."""
    from qcnorm.ui.stability_page import PICK_LIST_MAX, _typed_points

    assert _typed_points("12, 40 41;12", 50) == ([11, 39, 40], [])
    assert _typed_points("0, 51, x", 50)[1] == ["0", "51", "x"]
    n = PICK_LIST_MAX + 500
    x = np.round(rng.normal(10.0, 1.0, n), 3)
    x[100] = 30.0  # a clear signal
    data = ("Value (mm)\n" + "\n".join(str(v) for v in x) + "\n").encode()
    at = _upload(_app().run(), "long.csv", data)
    _go(at, "stability")
    options = at.multiselect(key="qc_exclude_pick").options
    a = analyze(x, units="mm")
    flagged = {v.index for v in tuple(a.chart.violations) + tuple(a.chart.dispersion.violations)}
    assert 100 in flagged and len(options) == len(flagged) < 50
    at.text_input(key="qc_exclude_typed").set_value("2600")
    at.text_input(key="qc_exclude_reason").set_value("gauge dropped")
    [b for b in at.button if b.label.startswith("Exclude")][0].click().run()
    assert not at.exception
    assert "qc_exclusions" not in at.session_state or not at.session_state["qc_exclusions"]
    assert any("Not a point of this chart: 2600" in w.value for w in at.warning)
    at.text_input(key="qc_exclude_typed").set_value("7")
    at.text_input(key="qc_exclude_reason").set_value("gauge dropped")
    [b for b in at.button if b.label.startswith("Exclude")][0].click().run()
    assert not at.exception
    assert at.session_state["qc_exclusions"] == {6: "gauge dropped"}
