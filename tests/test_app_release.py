"""App tests of the release flows (streamlit.testing.v1.AppTest, no browser).

Technician: save this shift, freeze as baseline, Phase II against the frozen baseline.
Supervisor: awaiting-review list, decision with a comment, history with the decision.
Refusals: missing operator / reviewer / baseline reasons give an error and save nothing;
a database failure is shown kindly and loses nothing already saved.

Each test points QCNORM_DB at its own SQLite file under tmp_path and checks the
database itself (through HistoryStore) besides the page.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pandas as pd
import pytest
from streamlit.testing.v1 import AppTest

from qcnorm.errors import StoreError
from qcnorm.store import HistoryStore

ROOT = Path(__file__).resolve().parents[1]
APP = str(ROOT / "app.py")
LAST_SHIFT = "Line 3 spool · last shift only"


@pytest.fixture
def db(tmp_path, monkeypatch) -> Path:
    path = tmp_path / "history.sqlite3"
    monkeypatch.setenv("QCNORM_DB", str(path))
    return path


def _app() -> AppTest:
    at = AppTest.from_file(APP, default_timeout=60)
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _go(at: AppTest, page: str) -> AppTest:
    at.session_state["qc_page"] = page
    at.run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _click(at: AppTest, label: str) -> AppTest:
    labels = [b.label for b in at.button]
    assert label in labels, labels
    at.button[labels.index(label)].click().run()
    assert not at.exception, [e.value for e in at.exception]
    return at


def _texts(elements) -> str:
    return "\n".join(str(e.value) for e in elements)


def _save_shift(at: AppTest, operator: str, shift: str, note: str = "", lot: str = "") -> AppTest:
    _go(at, "release")
    at.text_input(key="rs_operator").set_value(operator)
    at.text_input(key="rs_shift").set_value(shift)
    at.text_input(key="rs_lot").set_value(lot)
    at.text_area(key="rs_note").set_value(note)
    return _click(at, "Save this shift")


def _review(at: AppTest, reviewer: str, decision: str, comment: str) -> AppTest:
    _go(at, "review")
    at.text_input(key="rs_reviewer").set_value(reviewer)
    at.radio(key="rs_decision").set_value(decision)
    at.text_area(key="rs_comment").set_value(comment)
    return _click(at, "Record decision")


def _dataframes(at: AppTest) -> list[pd.DataFrame]:
    return [d.value for d in at.dataframe]


def test_every_release_page_shows_the_caution_and_the_database(db):
    at = _app()
    for page in ("release", "review", "history"):
        _go(at, page)
        caps = _texts(at.caption)
        assert "decision support" in caps and "authorised person" in caps, page
        assert str(db) in caps, page  # the database path is on the page (issue 6)


def test_save_review_and_history(db):
    at = _app()
    _save_shift(at, "Dana Whit", "2026-11-25 C", note="insert changed 14:10", lot="L-4471")
    assert not at.error, _texts(at.error)
    assert "Saved as analysis #1" in _texts(at.success)

    with HistoryStore(db) as s:
        waiting = s.list_analyses(awaiting_review=True)
        assert [r.id for r in waiting] == [1]
        rec = waiting[0]
        assert (rec.operator, rec.shift, rec.lot, rec.note) == ("Dana Whit", "2026-11-25 C", "L-4471",
                                                                "insert changed 14:10")
        assert rec.characteristic == "Ra" and rec.analysis["phase"] == "I"

    # External check of the stored fingerprint: the values read from the demo file by
    # pandas (not by qcnorm), encoded as the store's docstring defines (repr(float), TAB,
    # JSON-quoted subgroup label, lines joined by "\n", UTF-8), hashed by hashlib (FIPS 180-4).
    raw = pd.read_csv(ROOT / "demo_data" / "line3_spool_wide.csv")
    lines = [f"{float(v)!r}\t{json.dumps(str(g), ensure_ascii=False)}"
             for v, g in zip(raw["Ra [µm]"], raw["Subgroup"])]
    assert rec.n == len(raw) == 900
    assert rec.data_sha256 == hashlib.sha256("\n".join(lines).encode("utf-8")).hexdigest()

    # Supervisor: the shift is listed as awaiting review, with its evidence and checklist.
    _go(at, "review")
    listed = _dataframes(at)[0]
    assert list(listed["#"]) == [1] and listed["decision"].iloc[0] == "awaiting review"
    md = _texts(at.markdown)
    for question in ("In statistical control?", "Transform adequate?", "Enough data?"):
        assert question in md
    assert "re-checked now" in _texts(at.caption)  # store.verify on the opened record
    ev = next(t.value for t in at.table if "figure" in t.value.columns)  # static: wraps, never cut off
    chart_row = ev.loc[ev["figure"] == "Chart", "value"].item()
    assert chart_row.startswith("subgroup mean and range (X̄–R)")  # words, not the id 'xbar_r'
    assert ev.loc[ev["figure"] == "Spec limits (LSL / USL)", "value"].item() == "none / 1.6 µm"

    _review(at, "Sam Reyes", "approve", "signals traced to the insert change; parts sorted")
    assert not at.error, _texts(at.error)
    assert "Review #1 recorded" in _texts(at.success)
    # the decided record stays open with its decision trail (for the PDF with the decision)
    assert "Review #1 by **Sam Reyes**" in _texts(at.markdown)
    with HistoryStore(db) as s:
        assert s.list_analyses(awaiting_review=True) == []
        (rv,) = s.reviews_for(1)
        assert (rv.decision, rv.reviewer, rv.comment) == ("approve", "Sam Reyes",
                                                          "signals traced to the insert change; parts sorted")

    _go(at, "history")
    frames = _dataframes(at)
    shifts = next(f for f in frames if "shift" in f.columns and "operator" in f.columns)
    row = shifts.iloc[0]
    assert (row["#"], row["shift"], row["decision"], row["reviewer"]) == (1, "2026-11-25 C", "approve", "Sam Reyes")
    decisions = next(f for f in frames if "review #" in f.columns)
    assert decisions["comment"].iloc[0] == "signals traced to the insert change; parts sorted"
    assert len(at.get("plotly_chart")) == 2  # capability over shifts, signals per shift
    # demo Ra is one-sided (USL 1.6 µm only, demo_data/line3_spool_specs.csv): a blank limit reads "none"
    spec = next(c.value for c in at.caption if c.value.startswith("Spec:"))
    assert "LSL none" in spec and "USL 1.6 µm" in spec and "— µm" not in spec
    # each bar of the signals chart carries its count, so a shift without signals shows "0"
    from qcnorm.ui.history_page import violations_over_shifts_figure
    with HistoryStore(db) as s:
        recs = list(reversed(s.list_analyses("Ra", limit=200)))
    bar = violations_over_shifts_figure(recs).data[0]
    assert list(bar.text) == [str(r.violations or 0) for r in recs]


def test_a_changed_decision_is_a_new_review_pointing_at_the_old(db):
    at = _app()
    _save_shift(at, "Dana Whit", "2026-11-25 C")
    _review(at, "Sam Reyes", "hold", "wait for the gauge check")
    _review(at, "Sam Reyes", "approve", "gauge check passed")
    assert "replaces review #1" in _texts(at.success)
    with HistoryStore(db) as s:
        first, second = s.reviews_for(1)
    assert (first.decision, second.decision, second.supersedes) == ("hold", "approve", first.id)


def test_missing_names_give_an_error_and_save_nothing(db):
    at = _app()
    # Ra is a stable lognormal process (demo_data/generate.py): under the default rules it is in
    # control; the Western Electric zone rules raise false alarms on its ten days (on 180 stable
    # subgroups they do so 94 % of the time, false_alarm_rate), which this test needs for a checklist NO.
    at.session_state["qc_rules"] = "western_electric"
    _save_shift(at, "   ", "2026-11-25 C")
    assert "operator's name" in _texts(at.error)
    _save_shift(at, "Dana Whit", "")
    assert "shift label" in _texts(at.error)
    with HistoryStore(db) as s:
        assert s.list_analyses() == []

    _save_shift(at, "Dana Whit", "2026-11-25 C")
    _review(at, "", "approve", "fine")
    assert "reviewer" in _texts(at.error)
    _review(at, "Sam Reyes", "reject", "")  # hold / reject need a reason
    assert "comment" in _texts(at.error)
    # The ten demo days show signals (checklist: NO), so approving needs a reason too.
    _review(at, "Sam Reyes", "approve", "")
    assert "In statistical control?" in _texts(at.error) and "why you approve" in _texts(at.error)
    with HistoryStore(db) as s:
        assert s.reviews_for(1) == []
        assert [r.id for r in s.list_analyses(awaiting_review=True)] == [1]


def test_freeze_then_next_shift_is_phase_two(db):
    at = _app()
    at.session_state["qc_rules"] = "western_electric"  # signals on the ten demo days (see above)
    _go(at, "release")
    # The ten demo days show signals: freezing needs an explicit confirmation.
    at.text_input(key="rs_freeze_by").set_value("Kim Ortega")
    at.text_input(key="rs_freeze_reason").set_value("ten days after the tool change")
    _click(at, "Freeze as baseline")
    assert "not in statistical control" in _texts(at.error)
    with HistoryStore(db) as s:
        assert s.get_characteristic("Ra") is None or s.list_baselines("Ra") == []
    at.checkbox(key="rs_freeze_unstable").check()
    _click(at, "Freeze as baseline")
    assert "Baseline #1 frozen" in _texts(at.success)
    phase1 = at.session_state["qc_transform"]
    assert phase1 == "auto"

    # Load the next shift (the last-shift demo file): charted against the baseline.
    at.session_state["qc_demo_file"] = LAST_SHIFT
    _go(at, "load")
    _go(at, "release")
    info = _texts(at.info)
    assert "Phase II" in info and "*without refitting*" in info and "baseline #1" in info
    # the Phase II notice names the frozen transform once, in words (no id, no repeated reason)
    assert "Natural log" in info or "Box–Cox" in info or "Yeo–Johnson" in info or "Johnson" in info
    # icons are Material Symbols, not emoji (a plant PC often has no emoji font)
    assert all(not i.icon or i.icon.startswith(":material/") for i in at.info)
    _save_shift(at, "Dana Whit", "2026-11-25 C")
    with HistoryStore(db) as s:
        b = s.latest_baseline("Ra")
        (rec,) = s.list_analyses("Ra")
    assert rec.analysis["phase"] == "II" and rec.baseline_id == b.id
    # Not refitted: the saved transform is the frozen one, parameters and all.
    assert rec.analysis["transform"]["name"] == b.baseline["transform_name"]
    assert rec.analysis["transform"]["params"] == b.baseline["transform_params"]
    assert rec.analysis["control"]["transformed"]["center"] == pytest.approx(b.center, rel=1e-12)
    assert rec.n == 30  # the last-shift file holds 30 Ra readings

    # The supervisor sees the phase on the review page too.
    _go(at, "review")
    assert "Phase II" in _texts(at.info)
    assert "In statistical control against the frozen baseline?" in _texts(at.markdown)

    # Turning Phase II off analyses the shift on its own again, and the page says so.
    _go(at, "release")
    at.toggle(key="rs_use_baseline").set_value(False).run()
    assert "Phase I" in _texts(at.warning)


def test_saved_pdf_is_made_from_a_faithful_rerun(db):
    at = _app()
    _save_shift(at, "Dana Whit", "2026-11-25 C")
    _review(at, "Sam Reyes", "approve", "ok")
    assert "reproduces the stored figures" in _texts(at.caption)
    _click(at, "Prepare PDF summary")
    pdf = at.session_state["rs_pdf"]
    assert pdf["bytes"][:5] == b"%PDF-" and pdf["name"].endswith("#1.pdf")
    from io import BytesIO

    from pypdf import PdfReader

    text = "\n".join(p.extract_text() for p in PdfReader(BytesIO(pdf["bytes"])).pages)
    with HistoryStore(db) as s:
        rec = s.get_analysis(1)
    assert rec.data_sha256[:16] in text and "Sam Reyes" in text and "2026-11-25 C" in text


def test_database_failure_is_shown_kindly_and_loses_nothing(db, monkeypatch):
    at = _app()
    _save_shift(at, "Dana Whit", "2026-11-25 C")

    def refuse(self, *a, **k):
        raise StoreError("Could not save the analysis (history database test): database is locked.")

    monkeypatch.setattr(HistoryStore, "save_analysis", refuse)
    # The same results again: the page asks before saving a second record ...
    _save_shift(at, "Dana Whit", "2026-11-26 A")
    assert "already saved as #1" in _texts(at.warning) and not at.error
    # ... and with the confirmation ticked the database refuses: shown kindly.
    at.checkbox(key="rs_save_again").check()
    _click(at, "Save this shift")
    assert "Not saved" in _texts(at.error) and "locked" in _texts(at.error)
    assert at.text_input(key="rs_shift").value == "2026-11-26 A"  # the entries are kept
    monkeypatch.undo()
    with HistoryStore(db) as s:
        assert [r.shift for r in s.list_analyses()] == ["2026-11-25 C"]


def test_a_file_that_is_not_a_database_is_refused_kindly(tmp_path, monkeypatch):
    bad = tmp_path / "notes.txt"
    bad.write_text("this is not a database\n" * 50)
    monkeypatch.setenv("QCNORM_DB", str(bad))
    at = _app()
    for page in ("release", "review", "history"):
        _go(at, page)
        assert at.error, page
        assert "cannot be opened" in _texts(at.info), page
    assert bad.read_text().startswith("this is not a database")
