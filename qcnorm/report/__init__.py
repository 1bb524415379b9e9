"""The PDF summary of one analysis: a document that stands on its own on paper.

:func:`build_pdf` turns an :class:`~qcnorm.analysis.Analysis` into PDF bytes;
:func:`write_pdf` writes them to a file. No browser is involved: figures are drawn with
matplotlib's Agg canvas (object API, no pyplot state) into PNG bytes at a fixed dpi, and
laid out with fpdf2 in the DejaVu Sans font so µ σ ≤ ≥ λ – print as themselves.

The report draws only what the Analysis holds. Every number printed comes from
``Analysis.to_dict()`` (the JSON contract) through one formatting helper,
:func:`fmt`; the checklist comes from :func:`qcnorm.checklist.review_checklist`; the
arrays drawn (values, transformed values, chart points and limits in units, the
dispersion chart) come from the Analysis's result objects. Two pieces of drawing data
come from the core's own functions rather than from the Analysis: histogram bins from
:func:`qcnorm.plots.histogram_bins` (the same bins the app shows; every value counted)
and the probability-plot points and band from :func:`qcnorm.normality.probability_plot`.
No statistic is computed in this package.

Determinism: the same Analysis, meta and review give byte-identical PDFs. The PDF
creation date is the report date when given (else a fixed epoch), the PNGs carry no
software/time metadata, matplotlib runs under its default style (user rc settings do
not leak in) and fpdf2's document id derives from the content.

Layout: A4 or US Letter, 15 mm margins, automatic page breaks; long text wraps
(``multi_cell``), tables break across pages and repeat their header row, figures are
scaled to the printable width and moved to the next page whole when they do not fit.
Headings keep with what follows: a section heading or sub-heading is drawn only with
the block after it, and both go to the next page when the heading and the block's first
part (a whole figure or box, a table's header row and first two rows, two lines of text)
do not fit together.

The package, one module per responsibility (imports run downwards only):

- ``common``      ReportMeta, section titles and names printed, :func:`fmt`
- ``layout``      the font, the page and ``_Writer`` (headings kept with what follows, tables, figures)
- ``figures``     the matplotlib drawings (histograms, probability plots, control chart)
- ``view``        ``_View``: what the report prints or draws, taken from one Analysis
- ``section_*``   one module per report section (header and data used, shape/transform,
  normality, stability, capability with the table across models, decision/signature,
  caution and references)
- ``build``       :func:`build_pdf` (the sections in order) and :func:`write_pdf`

Every name this module had before it became a package is still importable from
``qcnorm.report`` (private ones too, for the tests).
"""

from __future__ import annotations

from .build import _EPOCH, _creation_date, _resolve_meta, build_pdf, write_pdf
from .common import (
    _DASH,
    CAUTION_TEXT,
    CHART_NAMES,
    PAGE_SIZES,
    RULE_NAMES,
    SECTION_TITLES,
    ReportMeta,
    _get,
    _text,
    fmt,
)
from .figures import (
    _FIG_DPI,
    _IN_AXES_LEGEND,
    _LINE,
    _MATPLOTLIB_RC,
    _STYLE_LOCK,
    COLOUR_ROLES,
    _colours,
    _fig_chart,
    _fig_histograms,
    _fig_probability,
    _hist_panel,
    _limit_line,
    _new_figure,
    _png,
    _prob_panel,
    _Style,
    _vline,
)
from .layout import _BOTTOM, _MARGIN, SYSTEM_FONT_DIR, _doc_class, _font_paths, _Writer
from .section_capability import _ci, _sec_capability, _sub_model_range
from .section_decision import (
    _DECISION_LABELS,
    _MEANING_WORDS,
    _REVIEW_FIELDS,
    _SIGNATURE_MEANINGS,
    _STATUS,
    _check_review,
    _sec_review,
    _sec_verdict,
    _utc_text,
)
from .section_header import _header_pairs, _sec_data, _sec_header
from .section_normality import NORMALITY_ROWS, _sec_normality
from .section_references import _REFERENCES, _methods, _sec_caution, _sec_methods
from .section_shape import _CANDIDATE_NAMES, CANDIDATE_COLUMNS, _sec_transform
from .section_stability import _sec_chart
from .view import _View

__all__ = [
    "ReportMeta",
    "build_pdf",
    "write_pdf",
    "fmt",
    "SECTION_TITLES",
    "CAUTION_TEXT",
    "PAGE_SIZES",
    "NORMALITY_ROWS",
    "CANDIDATE_COLUMNS",
    "CHART_NAMES",
    "RULE_NAMES",
    "COLOUR_ROLES",
]
