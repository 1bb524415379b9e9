"""The entry points: :func:`build_pdf` (the sections in order) and :func:`write_pdf`."""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import ConfigError
from .common import PAGE_SIZES, ReportMeta
from .figures import _Style
from .layout import _Writer
from .section_capability import _sec_capability
from .section_decision import _check_review, _sec_review, _sec_verdict
from .section_header import _sec_data, _sec_header
from .section_normality import _sec_normality
from .section_references import _sec_caution, _sec_methods
from .section_shape import _sec_transform
from .section_stability import _sec_chart
from .view import _View


_EPOCH = _dt.datetime(2000, 1, 1, tzinfo=_dt.timezone.utc)


def _creation_date(date: str | None) -> _dt.datetime:
    if not date:
        return _EPOCH
    try:
        dt = _dt.datetime.fromisoformat(str(date))
    except ValueError:
        raise ConfigError(
            f"The report date must be an ISO date such as 2026-11-25 (or 2026-11-25T22:00). Got {date!r} instead."
        ) from None
    return dt if dt.tzinfo else dt.replace(tzinfo=_dt.timezone.utc)


def _resolve_meta(analysis: Any, meta: ReportMeta | None) -> ReportMeta:
    import dataclasses

    m = meta or ReportMeta()
    if m.data_sha256 is None:
        from ..store import data_sha256

        sub = getattr(analysis, "subgroups", None)
        m = dataclasses.replace(m, data_sha256=data_sha256(analysis.values, None if sub is None else list(sub)))
    return m


def build_pdf(analysis: Any, *, meta: ReportMeta | None = None, review: Mapping[str, Any] | None = None,
              page: str = "A4") -> bytes:
    """The PDF summary of one analysis, as bytes.

    Parameters
    ----------
    analysis : Analysis
        The result of :func:`qcnorm.analyze`.
    meta : ReportMeta, optional
        Header fields (plant, line, lot, shift, operator, date, ...). The data SHA-256 is
        computed from ``analysis.values`` (and subgroups) when not given.
    review : dict, optional
        A review decision: ``decision`` (approve / hold / reject), ``reviewer``,
        ``comment``, ``date``. A :class:`qcnorm.store.ReviewRecord` works too. With
        ``signed=True`` (an electronic signature in team mode) the signature is printed:
        ``signer_full_name`` (``signer_username``), ``meaning``, ``signed_at_utc`` (UTC)
        and the ``analysis_sha256`` it signs; otherwise the section says the decision is
        not an electronic signature.
    page : {"A4", "Letter"}
        Paper size.

    Returns
    -------
    bytes
        A PDF; byte-identical for the same inputs.

    Notes
    -----
    Nothing is computed here beyond drawing: every number comes from
    ``analysis.to_dict()`` and the checklist from :func:`qcnorm.checklist.review_checklist`.
    """
    if page not in PAGE_SIZES:
        raise ConfigError(f"The page size must be one of {', '.join(PAGE_SIZES)}. Got {page!r} instead.")
    if not hasattr(analysis, "to_dict") or not hasattr(analysis, "values"):
        raise ConfigError(
            f"build_pdf needs an Analysis from qcnorm.analyze(). Got {type(analysis).__name__} instead."
        )
    rev = _check_review(review)
    m = _resolve_meta(analysis, meta)
    created = _creation_date(m.date)
    v = _View(analysis, m)
    title = f"qcnorm summary — {v.characteristic}"
    footer = f"qcnorm {v.d.get('qcnorm_version') or __version__}  ·  {v.characteristic}  ·  data SHA-256 {m.data_sha256[:16]}…"
    with _Style():
        w = _Writer(page, created, title, footer)
        _sec_header(w, v, title)
        _sec_caution(w)
        _sec_verdict(w, v)
        _sec_data(w, v)
        _sec_transform(w, v)
        _sec_normality(w, v)
        _sec_chart(w, v)
        _sec_capability(w, v)
        _sec_review(w, rev)
        _sec_methods(w, v)
        return w.output()


def write_pdf(analysis: Any, path: str | Path, **kw: Any) -> Path:
    """Write :func:`build_pdf` output to ``path``; returns the path.

    Keyword arguments go to :func:`build_pdf` (``meta``, ``review``, ``page``).
    """
    out = Path(path)
    if not out.parent.is_dir():
        raise ConfigError(
            f"The PDF could not be written to {out} (the folder {out.parent} does not exist). "
            "Create the folder or choose another path."
        )
    data = build_pdf(analysis, **kw)
    try:
        out.write_bytes(data)
    except OSError as exc:
        raise ConfigError(
            f"The PDF could not be written to {out} ({exc.strerror or exc}). "
            "Check that the folder exists and is writable, and that the file is not open elsewhere."
        ) from None
    return out
