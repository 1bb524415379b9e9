"""Cached calls into the core: reading, analysing, probability-plot data.

Everything the pages show comes from here, and everything here comes from the core
(qcnorm.data, qcnorm.analysis, qcnorm.normality). Results are cached per
(SHA-256 of the data bytes, options): the bytes themselves are passed with a leading
underscore so Streamlit does not hash them again, and the digest stands for them.
``st.cache_resource`` keeps one shared object per key (results are frozen dataclasses,
never mutated), so a rerun that changes nothing costs a dictionary look-up.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd
import streamlit as st

from .. import data as qdata
from ..analysis import Analysis, analyze
from ..errors import ReadError
from ..normality import ProbabilityPlot, probability_plot
from . import state

__all__ = ["DEMO_DIR", "DEMO_FILES", "ReadOptions", "AnalysisOptions", "read_options",
           "analysis_options", "table", "characteristics", "measurements", "analysis",
           "probability_plots", "current_measurements", "current_analysis", "demo_source",
           "demo_specs", "spec_name"]

DEMO_DIR = Path(__file__).resolve().parents[2] / "demo_data"
#: label -> file name of the demo files the Load page offers
DEMO_FILES = {
    "Line 3 spool · ten days, one column per characteristic": "line3_spool_wide.csv",
    "Line 3 spool · last shift only": "line3_spool_last_shift.csv",
    "Line 3 spool · ten days, long format (one row per reading)": "line3_spool_long.csv",
}
SPECS_FILE = "line3_spool_specs.csv"
#: points drawn on a probability plot (the core keeps both tails in full and thins the
#: middle evenly by rank); more only slows the browser without showing more
PP_MAX_POINTS = 800


@dataclass(frozen=True, slots=True)
class ReadOptions:
    """How to read the loaded bytes into one characteristic's measurements."""

    name: str
    sheet: str | None
    column: str | None
    characteristic: str | None
    subgroup: str | None
    order: str | None
    include_censored: bool

    def key(self) -> tuple:
        return (self.name, self.sheet, self.column, self.characteristic, self.subgroup,
                self.order, self.include_censored)


@dataclass(frozen=True, slots=True)
class AnalysisOptions:
    """The options of analyze() that the pages set."""

    lsl: float | None
    usl: float | None
    target: float | None
    required_index: float
    transform: str
    round_lambda: bool
    chart: str
    rules: str
    exclude: tuple[tuple[int, str], ...]
    units: str | None

    def key(self) -> tuple:
        return (self.lsl, self.usl, self.target, self.required_index, self.transform,
                self.round_lambda, self.chart, self.rules, self.exclude, self.units)


# --------------------------------------------------------------------------------------
# cached core calls
# --------------------------------------------------------------------------------------


def _source(data: bytes, name: str) -> Any:
    """What the reader gets: a named file-like object (the name tells CSV from XLSX)."""
    buf = io.BytesIO(data)
    buf.name = name
    return buf


@st.cache_resource(max_entries=2, show_spinner=False)
def parsed(digest: str, _data: bytes, name: str, sheet: str | None) -> Any:
    """The file parsed once (qcnorm.data.parse_file); the table, the list of
    characteristics and the measurements are read from it (a 200,000-row file was parsed
    three times on upload: 4.8 s)."""
    return qdata.parse_file(_source(_data, name), sheet=sheet or None)


@st.cache_resource(max_entries=16, show_spinner=False)
def table(digest: str, _data: bytes, name: str, sheet: str | None) -> pd.DataFrame:
    """The file as a table (for choosing columns and the preview)."""
    return qdata.read_table(parsed(digest, _data, name, sheet))


@st.cache_resource(max_entries=16, show_spinner=False)
def characteristics(digest: str, _data: bytes, name: str, sheet: str | None) -> Any:
    """The characteristics in the file with their counts (qcnorm.data.list_characteristics)."""
    return qdata.list_characteristics(parsed(digest, _data, name, sheet))


@st.cache_resource(max_entries=32, show_spinner=False)
def measurements(digest: str, _data: bytes, key: tuple) -> Any:
    opts = ReadOptions(*key)
    return qdata.read_measurements(
        parsed(digest, _data, opts.name, opts.sheet), column=opts.column, subgroup=opts.subgroup,
        order=opts.order, characteristic=opts.characteristic, sheet=opts.sheet or None,
        include_censored=opts.include_censored,
    )


@st.cache_resource(max_entries=64, show_spinner=False)
def analysis(digest: str, _data: bytes, read_key: tuple, an_key: tuple) -> Analysis:
    m = measurements(digest, _data, read_key)
    o = AnalysisOptions(*an_key)
    return analyze(
        m, lsl=o.lsl, usl=o.usl, target=o.target, required_index=o.required_index,
        transform=o.transform, round_lambda=o.round_lambda, chart=o.chart, rules=o.rules,
        exclude=o.exclude, units=o.units,
    )


@st.cache_resource(max_entries=64, show_spinner=False)
def probability_plots(digest: str, _data: bytes, read_key: tuple, an_key: tuple
                      ) -> tuple[ProbabilityPlot, ProbabilityPlot]:
    """Probability-plot data (qcnorm.normality.probability_plot) of the raw and the
    transformed values of the cached Analysis."""
    a = analysis(digest, _data, read_key, an_key)
    raw = probability_plot(a.values, max_points=PP_MAX_POINTS)
    tr = raw if a.transform.name == "none" else probability_plot(a.transformed, max_points=PP_MAX_POINTS)
    return raw, tr


# --------------------------------------------------------------------------------------
# the current choices (from session state)
# --------------------------------------------------------------------------------------


def read_options() -> ReadOptions | None:
    src = state.source()
    if src is None:
        return None
    return ReadOptions(
        name=src.name,
        sheet=state.get("qc_sheet") or None,
        column=state.get("qc_column"),
        characteristic=state.get("qc_characteristic"),
        subgroup=state.get("qc_subgroup"),
        order=state.get("qc_time"),
        include_censored=bool(state.get("qc_include_censored")),
    )


def _opt_float(v: Any) -> float | None:
    if v is None:
        return None
    try:
        return float(v)
    except (TypeError, ValueError):
        return None


def analysis_options() -> AnalysisOptions:
    ex = state.exclusions()
    return AnalysisOptions(
        lsl=_opt_float(state.get("qc_lsl")),
        usl=_opt_float(state.get("qc_usl")),
        target=_opt_float(state.get("qc_target")),
        required_index=_opt_float(state.get("qc_required_index")) or 1.33,
        transform=state.get("qc_transform"),
        round_lambda=bool(state.get("qc_round_lambda")),
        chart=state.get("qc_chart"),
        rules=state.get("qc_rules"),
        exclude=tuple(sorted((int(k), str(v)) for k, v in ex.items())),
        units=(state.get("qc_units") or "").strip() or None,
    )


def current_measurements() -> Any:
    src, ro = state.source(), read_options()
    if src is None or ro is None:
        return None
    return measurements(src.digest, src.data, ro.key())


def current_analysis() -> Analysis | None:
    """The Analysis of the current choices; raises the core's QcnormError on bad input."""
    src, ro = state.source(), read_options()
    if src is None or ro is None:
        return None
    return analysis(src.digest, src.data, ro.key(), analysis_options().key())


def current_probability_plots() -> tuple[ProbabilityPlot, ProbabilityPlot] | None:
    src, ro = state.source(), read_options()
    if src is None or ro is None:
        return None
    return probability_plots(src.digest, src.data, ro.key(), analysis_options().key())


# --------------------------------------------------------------------------------------
# demo data
# --------------------------------------------------------------------------------------


def demo_source(label: str) -> state.Source:
    fname = DEMO_FILES.get(label)
    if fname is None:
        raise ReadError(f"Unknown demo file {label!r}; choose one of: {', '.join(DEMO_FILES)}.")
    path = DEMO_DIR / fname
    if not path.exists():
        raise ReadError(f"The demo file {fname} is missing from {DEMO_DIR}. Run "
                        "`python demo_data/generate.py` to write it again.")
    return state.Source(name=fname, data=path.read_bytes(), kind="demo")


@st.cache_data(show_spinner=False)
def demo_specs() -> dict[str, dict[str, Any]]:
    """Spec limits of the demo characteristics (demo_data/line3_spool_specs.csv)."""
    path = DEMO_DIR / SPECS_FILE
    if not path.exists():
        return {}
    df = pd.read_csv(path)
    out: dict[str, dict[str, Any]] = {}
    for rec in df.to_dict("records"):
        clean = {k: (None if pd.isna(v) else v) for k, v in rec.items()}
        out[str(clean["characteristic"])] = clean
    return out


def spec_name(column_or_characteristic: str | None) -> str | None:
    """'Ra [µm]' -> 'Ra' (the name the specs file uses)."""
    if not column_or_characteristic:
        return None
    s = str(column_or_characteristic)
    for sep in (" [", " ("):
        if sep in s:
            s = s.split(sep, 1)[0]
    return s.strip()
