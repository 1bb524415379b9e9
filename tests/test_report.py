"""The PDF summary (qcnorm/report/) and the release checklist (qcnorm/checklist.py).

What is checked, and against what:
- the text of the PDF, read back with pypdf (an independent PDF parser), holds every
  section heading, the caution, the review decision, and the numbers of the Analysis
  formatted with the report's one formatting helper ``fmt``;
- the file is byte-identical for the same input (built twice);
- poppler (pdftoppm, an independent renderer) renders every page; the PNGs are kept in
  tests/artifacts/report/ for a person to look at;
- poppler's pdftotext word boxes lie inside the page margins on A4 and Letter (nothing
  runs off the page);
- each checklist item follows its stated threshold: AD p ≥ 0.05 (common practice, 5 %
  level), n ≥ 30 (common practice), lower confidence bound ≥ required index (the
  capability verdict of qcnorm.capability, Bissell 1990), no run-rule violation.
"""

from __future__ import annotations

import copy
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from pypdf import PdfReader

from conftest import ROOT, skip_or_fail
from qcnorm.analysis import SMALL_N, analyze
from qcnorm.checklist import AD_P_MIN, CHECKLIST_KEYS, MIN_N, checklist_outcome, review_checklist
from qcnorm.data import read_measurements
from qcnorm.errors import ConfigError, QcnormError
from qcnorm.report import (
    CANDIDATE_COLUMNS,
    CAUTION_TEXT,
    NORMALITY_ROWS,
    PAGE_SIZES,
    SECTION_TITLES,
    ReportMeta,
    build_pdf,
    fmt,
    write_pdf,
)
from qcnorm.store import data_sha256

DEMO = ROOT / "demo_data"
META = ReportMeta(plant="Works 2", line="Line 3", lot="L-1125", shift="C", operator="J. Doe",
                  date="2026-11-25")
REVIEW = {"decision": "hold", "reviewer": "A. Reviewer", "comment": "Find the cause of the signals first.",
          "date": "2026-11-26"}


# ----------------------------------------------------------------------------- fixtures
@pytest.fixture(scope="module")
def ra_analysis():
    """900 Ra values of the invented line, one-sided spec USL 1.6 µm (capability assessed)."""
    m = read_measurements(DEMO / "line3_spool_wide.csv", column="Ra")
    return analyze(m, usl=1.6)


@pytest.fixture(scope="module")
def shift_analysis():
    """30 Ra values of the invented last shift, USL 1.6 µm."""
    m = read_measurements(DEMO / "line3_spool_last_shift.csv", column="Ra")
    return analyze(m, usl=1.6)


@pytest.fixture(scope="module")
def subgroup_analysis():
    """Flatness in subgroups (X̄ chart), two-sided spec, one point excluded with a reason."""
    m = read_measurements(DEMO / "line3_spool_wide.csv", column="Flatness", subgroup="Subgroup")
    return analyze(m, lsl=0.0, usl=12.0, exclude={4: "fixture loose, re-clamped"}, characteristic="Flatness")


@pytest.fixture(scope="module")
def pdf_a4(ra_analysis) -> bytes:
    return build_pdf(ra_analysis, meta=META, review=REVIEW, page="A4")


@pytest.fixture(scope="module")
def pdf_letter(subgroup_analysis) -> bytes:
    return build_pdf(subgroup_analysis, page="Letter")


def _text(pdf: bytes) -> str:
    import io

    reader = PdfReader(io.BytesIO(pdf))
    return "\n".join(p.extract_text() for p in reader.pages)


def _flat(s: str) -> str:
    """Whitespace collapsed to single spaces (wrapped lines join up)."""
    return re.sub(r"\s+", " ", s)


# ----------------------------------------------------------------------------- text
def test_every_section_heading_and_the_caution_are_present(pdf_a4):
    text = _flat(_text(pdf_a4))
    for i, title in enumerate(SECTION_TITLES.values(), start=1):
        assert f"{i}. {title}" in text, title
    assert _flat(CAUTION_TEXT) in text


def test_header_fields_version_and_data_fingerprint(pdf_a4, ra_analysis):
    text = _flat(_text(pdf_a4))
    for v in ("Works 2", "Line 3", "L-1125 / C", "J. Doe", "2026-11-25", ra_analysis.version):
        assert v in text
    # The fingerprint is the history store's (one function, qcnorm.store.data_sha256).
    assert data_sha256(ra_analysis.values) in text


def test_review_decision_printed_when_given(pdf_a4, pdf_letter):
    text = _flat(_text(pdf_a4))
    assert "On hold" in text and "A. Reviewer" in text and REVIEW["comment"] in text
    assert "No review decision has been recorded" not in text
    assert "No review decision has been recorded" in _flat(_text(pdf_letter))


def test_numbers_printed_equal_the_analysis(pdf_a4, ra_analysis):
    d = ra_analysis.to_dict()
    text = _flat(_text(pdf_a4))
    assert f"Values analysed (n) {fmt(d['n'], 'int')}" in text
    # normality table: one row per statistic, before and after
    for label, key, kind in NORMALITY_ROWS:
        row = f"{label} {fmt(d['normality']['raw'][key], kind)} {fmt(d['normality']['transformed'][key], kind)}"
        assert row in text, row
    # control limits in units and on the transformed scale
    u, t = d["control"]["units"], d["control"]["transformed"]
    assert f"Center {fmt(u['center'])} {fmt(t['center'])}" in text
    assert f"Lower control limit {fmt(u['lcl'])} {fmt(t['lcl'])}" in text
    assert f"Upper control limit {fmt(u['ucl'])} {fmt(t['ucl'])}" in text
    # capability: estimate, interval, lower bound
    cap = d["capability"]
    for name, key in (("Cpk", "cpk"), ("Ppk", "ppk")):
        ci = cap[f"{key}_ci"]
        row = (f"{name} {fmt(cap[key], 'index')} {fmt(ci['low'], 'index')} {fmt(ci['high'], 'index')} "
               f"{fmt(cap[f'{key}_lower_bound'], 'index')}")
        assert row in text, row
    assert (f"Expected, within sigma {fmt(cap['ppm_within_below'], 'ppm')} "
            f"{fmt(cap['ppm_within_above'], 'ppm')} {fmt(cap['ppm_within'], 'ppm')}") in text
    assert (f"Observed in these data {fmt(cap['ppm_observed_below'], 'ppm')} "
            f"{fmt(cap['ppm_observed_above'], 'ppm')} {fmt(cap['ppm_observed'], 'ppm')}") in text
    perc = cap["percentile"]
    if perc.get("distribution"):
        assert f"{perc['distribution']} {fmt(perc['pp'], 'index')} {fmt(perc['ppk'], 'index')}" in text
    assert _flat(cap["verdict_text"]) in text
    # candidate table: each candidate's AIC and AD p after
    for c in d["transform"]["candidates"]:
        assert fmt(c["aic"], "stat") in text and fmt(c["ad_p_value"], "p") in text
    assert len(CANDIDATE_COLUMNS) >= 5


def test_checklist_and_violations_printed(pdf_letter, subgroup_analysis):
    d = subgroup_analysis.to_dict()
    text = _flat(_text(pdf_letter))
    for item in review_checklist(subgroup_analysis):
        assert _flat(item.detail) in text
    for v in d["control"]["violations"][:20]:
        assert f"{v['index'] + 1} {v['rule']} {v['description']}" in text
    # the exclusion and its reason are listed
    assert "fixture loose, re-clamped" in text
    assert "X̄" in text or "xbar" in text


def test_same_input_gives_byte_identical_pdf(tmp_path, pdf_a4, ra_analysis):
    # built a second time (through write_pdf): the same bytes
    out = write_pdf(ra_analysis, tmp_path / "summary.pdf", meta=META, review=REVIEW, page="A4")
    assert out.read_bytes() == pdf_a4
    assert pdf_a4.startswith(b"%PDF-")


def test_bad_arguments_get_a_clear_message(tmp_path, ra_analysis):
    with pytest.raises(ConfigError, match="page size must be one of A4, Letter"):
        build_pdf(ra_analysis, page="A3")
    with pytest.raises(ConfigError, match="approve, hold, reject"):
        build_pdf(ra_analysis, review={"decision": "maybe"})
    with pytest.raises(ConfigError, match="ISO date"):
        build_pdf(ra_analysis, meta=ReportMeta(date="25/11/2026"))
    with pytest.raises(ConfigError, match="could not be written"):
        write_pdf(ra_analysis, tmp_path / "no" / "such" / "dir" / "x.pdf")
    with pytest.raises(QcnormError):
        build_pdf({"n": 3})


def test_fmt_is_the_one_formatting_rule():
    assert fmt(None) == fmt(float("nan")) == "—"
    assert fmt(1.3333, "index") == "1.33"
    assert fmt(2.7e-6, "p") == "< 0.0001" and fmt(0.0512, "p") == "0.0512"
    assert fmt(2699.8, "ppm") == "2,700" and fmt(0.5397, "ppm") == "0.54" and fmt(0.0, "ppm") == "0" and fmt(5.2e-146, "ppm") == "< 0.01"
    assert fmt(50.81234) == "50.81"
    with pytest.raises(ConfigError, match="value, index, p, ppm, int, stat"):
        fmt(1.0, "percent")


def test_font_falls_back_to_matplotlibs_dejavu(monkeypatch, tmp_path):
    import matplotlib

    from qcnorm.report import layout

    monkeypatch.setattr(layout, "SYSTEM_FONT_DIR", tmp_path / "no-fonts-here")
    reg, bold = layout._font_paths()
    assert Path(reg).is_relative_to(Path(matplotlib.get_data_path()))
    assert Path(reg).name == "DejaVuSans.ttf" and Path(bold).name == "DejaVuSans-Bold.ttf"


def test_each_signal_is_listed_once(residue_analysis, residue_pdf):
    """control.violations already holds the dispersion-chart signals (DISP): the table lists
    each (rule, point) once, and its count agrees with the checklist's."""
    d = residue_analysis.to_dict()
    c = d["control"]
    distinct = {(v["rule"], v["index"]) for v in c["violations"] + c["dispersion"]["violations"]}
    assert c["dispersion"]["violations"]  # the case has DISP signals
    text = _flat(_text(residue_pdf))
    assert f"Rule violations ({len(distinct)})" in text
    for v in c["dispersion"]["violations"]:
        assert text.count(f"{v['index'] + 1} DISP {v['description']}") == 1
    assert f"{len(distinct)} signal{'s' if len(distinct) != 1 else ''} (" in _flat(review_checklist(d)[0].detail)
    assert "Observation Rule What it means" in text  # individuals chart: points are observations
    assert "Specification none given" in text  # no spec limits


def test_a_candidate_not_fitted_reads_as_such(shift_analysis):
    """A transform family that was not fitted is named, with its reason across the row."""
    cands = shift_analysis.to_dict()["transform"]["candidates"]
    skipped = [c for c in cands if c.get("error")]
    assert skipped  # Johnson is not tried below 100 values
    text = _flat(_text(build_pdf(shift_analysis)))
    for c in skipped:
        assert _flat(f"{c['error']}") in text
    assert "Johnson system: not fitted" in text
    assert "LSL none, USL 1.6" in text


# ----------------------------------------------------------------------------- figures
def _figure_colours(pdf: bytes) -> set[str]:
    """Every pixel colour of every figure embedded in the PDF (images decoded by pypdf)."""
    import io

    import numpy as np

    out: set[str] = set()
    for pg in PdfReader(io.BytesIO(pdf)).pages:
        for im in pg.images:
            px = np.asarray(im.image.convert("RGB")).reshape(-1, 3)
            out |= {"#%02X%02X%02X" % tuple(int(c) for c in rgb) for rgb in np.unique(px, axis=0)}
    return out


def test_figures_use_the_house_palette(pdf_letter):
    """The figures draw in the app's colours (qcnorm.plots.PALETTE, the one source): data,
    transformed data, centre line, control limits, spec limits, signals, the excluded point
    and the grid all appear, and matplotlib's default cycle colours do not."""
    from qcnorm.plots import PALETTE
    from qcnorm.report import COLOUR_ROLES

    assert set(COLOUR_ROLES.values()) <= set(PALETTE)
    colours = _figure_colours(pdf_letter)  # Flatness: signals, one excluded point, LSL and USL
    for key in ("ink", "teal", "center", "control", "spec", "signal", "excluded", "grid"):
        assert PALETTE[key].upper() in colours, key
    for default in ("#1F77B4", "#FF7F0E", "#2CA02C", "#D62728", "#4C72B0", "#55A868", "#C44E52"):
        assert default not in colours, default


# ----------------------------------------------------------------------------- page layout
@pytest.fixture(scope="module")
def residue_analysis():
    """900 Residue values, no spec limits, phase I only (no baseline): the case where the
    control-chart heading was once left alone at the foot of page 3."""
    m = read_measurements(DEMO / "line3_spool_wide.csv", column="Residue")
    return analyze(m)


_SUBHEADINGS = ("Exclusions", "Notes on these data", "Candidates compared", "Rule violations (",
                "Parts per million", "Percentile cross-check", "References")


def _page_lines(pdf: bytes) -> list[list[str]]:
    """What each page draws, in content-stream order (the order fpdf2 lays things out):
    text lines, and "<figure>" where an image is drawn; the footer (drawn last) left off."""
    import io

    pages = []
    for pg in PdfReader(io.BytesIO(pdf)).pages:
        events: list[str] = []

        def on_op(op, args, cm, tm, events=events):
            if op == b"Do":  # an image XObject is painted
                events.append("<figure>")

        def on_text(text, cm, tm, font, size, events=events):
            events.extend(ln.strip() for ln in text.splitlines() if ln.strip())

        pg.extract_text(visitor_operand_before=on_op, visitor_text=on_text)
        assert events and events[-1].startswith("qcnorm ") and " page " in events[-1]
        pages.append(events[:-1])
    return pages


@pytest.fixture(scope="module")
def residue_pdf(residue_analysis) -> bytes:
    return build_pdf(residue_analysis, page="A4")


def test_no_heading_is_left_alone_at_the_foot_of_a_page(pdf_a4, pdf_letter, residue_pdf):
    headings = [f"{i}. {t}" for i, t in enumerate(SECTION_TITLES.values(), start=1)]
    for pdf in (pdf_a4, pdf_letter, residue_pdf):
        pages = _page_lines(pdf)
        for k, lines in enumerate(pages[:-1], start=1):
            last = lines[-1]
            assert last not in headings, f"page {k} ends with the heading {last!r}"
            assert not last.startswith(_SUBHEADINGS), f"page {k} ends with the sub-heading {last!r}"
        # every section heading is printed once, in order
        found = [ln for lines in pages for ln in lines if ln in headings]
        assert found == headings


def _writer(page: str = "A4"):
    import datetime as dt

    from qcnorm.report import _Style, _Writer

    with _Style():
        return _Writer(page, dt.datetime(2000, 1, 1, tzinfo=dt.timezone.utc), "t", "qcnorm test footer")


def _fill_until(w, space_mm: float) -> None:
    """Paragraphs until about ``space_mm`` of the page is left (the writer's own measure)."""
    while w._space_left() > space_mm + 6:
        w.para("filler line")
    while w._space_left() > space_mm:
        w.pdf.ln(0.5)


def test_a_heading_moves_to_the_next_page_with_its_figure():
    """A section heading with room for itself but not for its figure goes to the next page."""
    w = _writer()
    _fill_until(w, 40)  # room for the heading (≈ 12 mm) and more, not for a 105 mm figure
    fig = _tiny_png()
    w.section("chart")
    w.figure(fig, 105, "a figure")
    pages = _page_lines(w.output())
    assert len(pages) == 2
    assert pages[0][-1] == "filler line"
    assert pages[1] == ["1. " + SECTION_TITLES["chart"], "<figure>"]


def test_a_table_header_row_never_stands_alone():
    """A sub-heading, the header row and the first rows start together on a page, also
    when the rows are tall (long text wraps in a narrow column)."""
    w = _writer("Letter")
    _fill_until(w, 24)  # room for a sub-heading and a header row, not for two tall rows under them
    long = "a point beyond a limit, " * 6
    w.subheading("Rule violations (3)")
    w.table(("Point", "Rule", "What it means"), [("1", "WE1", long)] * 3, widths=(10, 22, 68))
    pages = _page_lines(w.output())
    assert len(pages) == 2 and pages[0][-1] == "filler line"
    assert pages[1][:5] == ["Rule violations (3)", "Point", "Rule", "What it means", "1"]


def _tiny_png() -> bytes:
    import io

    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(1, 1))
    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=20)
    return buf.getvalue()


# ----------------------------------------------------------------------------- rendering
def _render(pdf: bytes, name: str, folder: Path) -> list[Path]:
    if shutil.which("pdftoppm") is None:
        skip_or_fail("poppler-utils not installed", "QCNORM_REQUIRE_BROWSER")
    folder.mkdir(parents=True, exist_ok=True)
    src = folder / f"{name}.pdf"
    src.write_bytes(pdf)
    for old in folder.glob(f"{name}-*.png"):
        old.unlink()
    subprocess.run(["pdftoppm", "-r", "50", "-png", str(src), str(folder / name)], check=True, timeout=60)
    return sorted(folder.glob(f"{name}-*.png"))


@pytest.mark.parametrize("which", ["a4", "letter"])
def test_pdftoppm_renders_every_page(which, pdf_a4, pdf_letter, artifacts_dir):
    import io

    pdf = pdf_a4 if which == "a4" else pdf_letter
    pages = PdfReader(io.BytesIO(pdf)).pages
    pngs = _render(pdf, f"summary-{which}", artifacts_dir / "report")
    assert len(pngs) == len(pages) >= 3
    assert all(p.stat().st_size > 2000 for p in pngs)  # not blank


def _word_boxes(pdf: bytes, tmp_path: Path) -> list[tuple[float, float, list[tuple[float, float, float, float, str]]]]:
    if shutil.which("pdftotext") is None:
        skip_or_fail("poppler-utils not installed", "QCNORM_REQUIRE_BROWSER")
    src = tmp_path / "x.pdf"
    src.write_bytes(pdf)
    html = subprocess.run(["pdftotext", "-bbox", str(src), "-"], check=True, capture_output=True,
                          text=True, timeout=60).stdout
    pages = []
    for m in re.finditer(r'<page width="([\d.]+)" height="([\d.]+)">(.*?)</page>', html, re.S):
        words = [
            (float(a), float(b), float(c), float(d), w)
            for a, b, c, d, w in re.findall(
                r'<word xMin="([\d.-]+)" yMin="([\d.-]+)" xMax="([\d.-]+)" yMax="([\d.-]+)">(.*?)</word>',
                m.group(3))
        ]
        pages.append((float(m.group(1)), float(m.group(2)), words))
    return pages


@pytest.mark.parametrize("which,page", [("a4", "A4"), ("letter", "Letter")])
def test_text_stays_inside_the_margins(which, page, pdf_a4, pdf_letter, tmp_path):
    """Every word box (poppler's layout) lies within the 15 mm margins of the paper size."""
    pdf = pdf_a4 if which == "a4" else pdf_letter
    pages = _word_boxes(pdf, tmp_path)
    w_mm, h_mm = PAGE_SIZES[page]
    pt = 72 / 25.4
    margin = 15 * pt - 1.0  # 1 pt tolerance for glyph side bearings
    assert pages
    for width, height, words in pages:
        assert width == pytest.approx(w_mm * pt, abs=0.5) and height == pytest.approx(h_mm * pt, abs=0.5)
        assert words
        for x0, y0, x1, y1, w in words:
            assert margin <= x0 and x1 <= width - margin, (w, x0, x1)
            assert 0 <= y0 and y1 <= height, (w, y0, y1)


# ----------------------------------------------------------------------------- checklist
@pytest.fixture(scope="module")
def base_dict(ra_analysis) -> dict:
    return ra_analysis.to_dict()


def _item(d: dict, key: str):
    return {i.key: i for i in review_checklist(d)}[key]


def test_checklist_thresholds_are_the_stated_ones():
    # common practice: 5 % level, at least 30 values; kept equal to the analysis's own rule
    assert AD_P_MIN == 0.05
    assert MIN_N == SMALL_N == 30
    assert CHECKLIST_KEYS == ("in_control", "transform_adequate", "enough_data", "capability")


def test_checklist_in_control_follows_the_chart(base_dict):
    d = copy.deepcopy(base_dict)
    d["control"]["in_control"], d["control"]["violations"] = True, []
    d["control"]["dispersion"]["violations"] = []  # the hand-built case: no signal on either chart
    assert _item(d, "in_control").passed is True
    d["control"]["in_control"] = False
    d["control"]["violations"] = [{"rule": "WE1", "index": 6, "description": "x", "points": [6]}]
    it = _item(d, "in_control")
    assert it.passed is False and "WE1" in it.detail and "point 7" in it.detail
    d["control"]["phase"] = "II"
    assert "baseline" in _item(d, "in_control").name


def test_checklist_and_pdf_state_the_expected_false_alarms(base_dict, residue_analysis, residue_pdf):
    """Beside the stability verdict: the in-control false-alarm rate of the rules used
    (qcnorm.control.false_alarm_rate; rule 1 alone is 2Φ(−3) = 0.27 % per point, Montgomery)."""
    d = copy.deepcopy(base_dict)
    fa = d["control"]["false_alarm"]
    assert fa["rules"] == d["control"]["rules"] and fa["n"] == d["control"]["n_points"]
    detail = _item(d, "in_control").detail
    assert f"about {100 * fa['over_n']:.0f} % of such runs" in detail
    del d["control"]["false_alarm"]  # an analysis stored before the field existed reads as before
    assert "false signal" not in _item(d, "in_control").detail
    rd = residue_analysis.to_dict()["control"]["false_alarm"]
    text = _flat(_text(residue_pdf))
    assert "Expected false alarms: With these rules, a stable process charted over" in text
    assert f"about {100 * rd['over_n']:.0f} % of such runs" in text


def test_checklist_transform_adequate_at_ad_p_005(base_dict):
    """Anderson–Darling p after the transform ≥ 0.05 passes (5 % level, common practice)."""
    d = copy.deepcopy(base_dict)
    for p, expected in ((0.05, True), (0.7, True), (0.0499, False), (1e-9, False), (None, None)):
        d["normality"]["transformed"]["ad_p_value"] = p
        assert _item(d, "transform_adequate").passed is expected, p


def test_checklist_enough_data_at_n_30(base_dict):
    """n ≥ 30 (common practice)."""
    d = copy.deepcopy(base_dict)
    for n, expected in ((30, True), (900, True), (29, False), (5, False)):
        d["n"] = n
        assert _item(d, "enough_data").passed is expected, n


def test_checklist_capability_uses_the_lower_bound(base_dict):
    """Passes only when the lower confidence bound reaches the required index."""
    d = copy.deepcopy(base_dict)
    cap = d["capability"]
    cap["required_index"] = 1.33
    cap.update(verdict_index_name="Cpk", verdict_point=1.6, verdict_lower_bound=1.33)
    assert _item(d, "capability").passed is True
    cap.update(verdict_point=1.5, verdict_lower_bound=1.2)  # point meets, bound does not
    it = _item(d, "capability")
    assert it.passed is False and "lower bound does not" in it.detail
    cap.update(verdict_point=1.0, verdict_lower_bound=0.8)
    assert _item(d, "capability").passed is False
    cap.update(verdict_point=None, verdict_lower_bound=None, verdict="not_assessed")
    assert _item(d, "capability").passed is None


def test_checklist_on_real_analyses_agrees_with_the_core(ra_analysis, shift_analysis, subgroup_analysis):
    for a in (ra_analysis, shift_analysis, subgroup_analysis):
        items = {i.key: i for i in review_checklist(a)}
        assert items["in_control"].passed is a.in_control
        p = a.normality_transformed.ad_p_value
        assert items["transform_adequate"].passed is (p >= 0.05)
        assert items["enough_data"].passed is (a.n >= 30)
        # the capability verdict of qcnorm.capability: "meets" iff the lower bound reaches it
        if a.capability is None or a.capability.verdict == "not_assessed":
            assert items["capability"].passed is None
        else:
            assert items["capability"].passed is (a.capability.verdict == "meets")
        # every signal, on either chart, is named in the detail
        for v in (*a.chart.violations, *a.chart.dispersion.violations):
            assert v.rule in items["in_control"].detail
        # the dict (a saved analysis) gives the same answers as the object (the details may
        # differ: to_dict() does not yet list the dispersion-chart signals)
        assert [i.passed for i in review_checklist(a.to_dict())] == [i.passed for i in items.values()]
        outcome = checklist_outcome(tuple(items.values()))
        assert outcome in ("all_pass", "some_fail", "incomplete")
    with pytest.raises(ConfigError, match="needs an Analysis"):
        review_checklist(42)


# ----------------------------------------------------------------------------- CLI
def test_cli_writes_the_pdf(tmp_path, shift_analysis):
    """The real command line (a subprocess) writes the PDF; --plant/--line/--lot/--shift/
    --operator/--date are printed in its header (text read back with pypdf) and the date is
    also the PDF's creation date."""
    import io

    out = tmp_path / "out.pdf"
    r = subprocess.run(
        [sys.executable, "-m", "qcnorm", "analyze", str(DEMO / "line3_spool_last_shift.csv"),
         "--column", "Ra", "--usl", "1.6", "--pdf", str(out),
         "--plant", "Works 2", "--line", "Line 3", "--lot", "L-1125", "--shift", "C",
         "--operator", "J. Doe", "--date", "2026-11-25"],
        capture_output=True, text=True, timeout=120, cwd=ROOT,
    )
    assert r.returncode == 0, r.stderr
    data = out.read_bytes()
    assert data.startswith(b"%PDF-") and data.rstrip().endswith(b"%%EOF")
    text = _flat(_text(data))
    assert SECTION_TITLES["capability"] in text
    # the same analysis as analyze() gives in-process: its capability outcome is printed
    cap = shift_analysis.capability
    if cap is None or cap.verdict == "not_assessed":
        assert "Capability was not assessed" in text
    else:
        assert _flat(cap.verdict_text) in text
    # the header fields given on the command line
    for label, value in (("Plant", "Works 2"), ("Line", "Line 3"), ("Lot / shift", "L-1125 / C"),
                         ("Operator", "J. Doe"), ("Date", "2026-11-25")):
        assert f"{label} {value}" in text, (label, value)
    assert "Plant —" not in text and "Line —" not in text
    assert PdfReader(io.BytesIO(data)).metadata.creation_date.date().isoformat() == "2026-11-25"


def test_cli_date_that_is_not_iso_is_bad_input(tmp_path, capsys):
    from qcnorm.cli import EXIT_BAD_INPUT, main

    out = tmp_path / "x.pdf"
    code = main(["analyze", str(DEMO / "line3_spool_last_shift.csv"), "--column", "Ra", "--usl", "1.6",
                 "--pdf", str(out), "--date", "25/11/2026"])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT and "ISO date" in err and "25/11/2026" in err
    assert "Traceback" not in err and not out.exists()


def test_capability_section_shows_the_range_across_models(pdf_a4, ra_analysis):
    """The PDF draws capability.model_range as the result holds it: every model, its ppm
    (the report's own ppm format) and the verdict basis."""
    mr = ra_analysis.capability.model_range
    assert mr is not None and len(mr.models) > 1
    text = _flat(_text(pdf_a4))
    assert "Across models" in text
    assert _flat(mr.verdict_basis) in text
    for m in mr.models:
        assert fmt(m.ppm, "ppm") in text


# ----------------------------------------------------------------------------- signature
def test_signed_decision_prints_the_signature_and_single_user_says_it_is_none(ra_analysis, tmp_path):
    """A review signed in team mode (through the store, as the app does) prints who signed
    (full name and user name), the meaning, the UTC time and the analysis SHA-256 it signs;
    a decision recorded without sign-in says it is not an electronic signature.
    The analysis hash is recomputed here from the stored JSON with hashlib (FIPS 180-4)
    through the store's documented encoding (qcnorm.store.analysis_sha256)."""
    from qcnorm.store import HistoryStore, analysis_sha256

    with HistoryStore(tmp_path / "signed.sqlite3") as s:
        ada = s.add_user("ada", "Ada Lind", "administrator", "admin-pass-9431")
        tina = s.add_user("tina", "Tina Marsh", "technician", "tech-pass-5520", actor=ada)
        sam = s.add_user("sam", "Sam Reyes", "supervisor", "super-pass-7718", actor=ada)
        s.save_characteristic("Ra", units="µm", usl=1.6, actor=tina)
        aid = s.save_analysis("Ra", analysis=ra_analysis.to_dict(), values=ra_analysis.values, shift="C",
                              lot="L-1125", operator="Tina Marsh", qcnorm_version=ra_analysis.version,
                              saved_by=tina)
        s.save_review(aid, "approve", "signals traced to the insert change", signer=sam,
                      password="super-pass-7718")
        rec = s.get_analysis(aid)
    rv = rec.latest_review
    # the signed hash, recomputed from the documented bytes: canonical JSON, "\n", data SHA-256
    import hashlib
    import json

    canonical = json.dumps(rec.analysis, ensure_ascii=False, sort_keys=True, separators=(",", ":"))
    expected = hashlib.sha256((canonical + "\n" + rec.data_sha256).encode("utf-8")).hexdigest()
    assert rv.signed and rv.analysis_sha256 == expected == analysis_sha256(rec.analysis, rec.data_sha256)
    text = _flat(_text(build_pdf(ra_analysis, meta=META, review=rv)))
    assert "Signed by Sam Reyes (sam)" in text
    assert "Meaning approved: release of the lot approved on the evidence in this record" in text
    assert f"Signed at (UTC) {rv.signed_at_utc[:19].replace('T', ' ')} UTC" in text
    assert rv.analysis_sha256 in text.replace(" ", "")  # a long hash may wrap inside its cell
    assert "Not an electronic signature" not in text
    for secret in ("super-pass-7718", "$argon2"):
        assert secret not in text

    unsigned = _flat(_text(build_pdf(ra_analysis, meta=META, review=REVIEW)))
    assert "Not an electronic signature" in unsigned and "Signed by" not in unsigned


def test_every_name_of_the_old_module_is_still_importable():
    """qcnorm/report.py became the package qcnorm/report/ (issue 11): every top-level name
    the module had, private ones too, is still importable from ``qcnorm.report``."""
    import qcnorm.report as report

    old = ("CANDIDATE_COLUMNS CAUTION_TEXT CHART_NAMES COLOUR_ROLES NORMALITY_ROWS PAGE_SIZES RULE_NAMES "
           "ReportMeta SECTION_TITLES SYSTEM_FONT_DIR _BOTTOM _CANDIDATE_NAMES _DASH _DECISION_LABELS _EPOCH "
           "_FIG_DPI _IN_AXES_LEGEND _LINE _MARGIN _MATPLOTLIB_RC _MEANING_WORDS _REFERENCES _REVIEW_FIELDS "
           "_SIGNATURE_MEANINGS _STATUS _STYLE_LOCK _Style _View _Writer _check_review _ci _colours "
           "_creation_date _doc_class _fig_chart _fig_histograms _fig_probability _font_paths _get "
           "_header_pairs _hist_panel _limit_line _methods _new_figure _png _prob_panel _resolve_meta "
           "_sec_capability _sec_chart _sec_data _sec_methods _sec_normality _sec_review _sec_transform "
           "_sec_verdict _sub_model_range _text _utc_text _vline build_pdf fmt write_pdf").split()
    assert [n for n in old if not hasattr(report, n)] == []
    assert sorted(report.__all__) == sorted(["ReportMeta", "build_pdf", "write_pdf", "fmt", "SECTION_TITLES",
                                             "CAUTION_TEXT", "PAGE_SIZES", "NORMALITY_ROWS", "CANDIDATE_COLUMNS",
                                             "CHART_NAMES", "RULE_NAMES", "COLOUR_ROLES"])
