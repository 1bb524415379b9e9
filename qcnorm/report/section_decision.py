"""Report sections on the decision: "Verdict and release checklist" and "Review decision"
(a signed decision with its signature, or an unsigned one said to be such); the review
handed to build_pdf is checked here."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..checklist import checklist_outcome
from ..errors import ConfigError
from .common import _DASH
from .layout import _Writer
from .view import _View


_STATUS = {True: "yes", False: "NO", None: "n/a"}


def _sec_verdict(w: _Writer, v: _View) -> None:
    w.section("verdict")
    cap = v.d.get("capability") or {}
    w.para(cap.get("verdict_text") or "Capability not assessed: no specification limit was given.", bold=True)
    outcome = checklist_outcome(v.checklist)
    w.para({"all_pass": "Every checklist item passes.",
            "some_fail": "At least one checklist item does not pass: see the details before release.",
            "incomplete": "Some checklist items cannot be answered from these data."}[outcome])
    w.table(("Question", "Answer", "Details", "Rule applied"),
            [(i.name, _STATUS[i.passed], i.detail, i.rule) for i in v.checklist],
            widths=(26, 9, 40, 25), align=("LEFT", "CENTER", "LEFT", "LEFT"))


_DECISION_LABELS = {"approve": "Approved", "hold": "On hold", "reject": "Rejected"}


#: the store's signature meanings (qcnorm.store.MEANINGS) and what each one says
_SIGNATURE_MEANINGS = {"approve": "approved", "hold": "hold", "reject": "rejected"}


_MEANING_WORDS = {
    "approved": "release of the lot approved on the evidence in this record",
    "hold": "the lot is not released until a later signed decision",
    "rejected": "release of the lot rejected on the evidence in this record",
}


_REVIEW_FIELDS = ("decision", "reviewer", "comment", "date", "created_at", "signed", "signer_id",
                  "signer_username", "signer_full_name", "meaning", "signed_at_utc", "analysis_sha256")


def _utc_text(iso: Any) -> str:
    """'2026-12-03T07:55:12.123456+00:00' -> '2026-12-03 07:55:12 UTC'."""
    if not iso:
        return _DASH
    return str(iso)[:19].replace("T", " ") + " UTC"


def _check_review(review: Any) -> dict[str, Any] | None:
    if review is None:
        return None
    if not isinstance(review, Mapping):
        review = {k: getattr(review, k, None) for k in _REVIEW_FIELDS}
    out = dict(review)
    dec = out.get("decision")
    key = dec.strip().lower() if isinstance(dec, str) else dec
    if key not in _DECISION_LABELS:
        raise ConfigError(
            f"The review decision must be one of {', '.join(_DECISION_LABELS)}. Got {dec!r} instead."
        )
    out["decision"] = key
    if out.get("date") is None and out.get("created_at") is not None:
        out["date"] = out["created_at"]
    return out


def _sec_review(w: _Writer, review: Mapping[str, Any] | None) -> None:
    w.section("review")
    if not review:
        w.para("No review decision has been recorded for this analysis.")
        return
    if review.get("signed"):
        meaning = str(review.get("meaning") or _SIGNATURE_MEANINGS.get(review["decision"], ""))
        w.kv_table([
            ("Decision", _DECISION_LABELS[review["decision"]]),
            ("Signed by", f"{review.get('signer_full_name') or _DASH} ({review.get('signer_username') or _DASH})"),
            ("Signed at (UTC)", _utc_text(review.get("signed_at_utc"))),
            ("Meaning", f"{meaning}: {_MEANING_WORDS.get(meaning, '')}".rstrip(": ")),
            ("Comment", str(review.get("comment") or _DASH)),
            ("Analysis SHA-256 signed", str(review.get("analysis_sha256") or _DASH)),
        ], wide=("Meaning", "Comment", "Analysis SHA-256 signed"))
        w.para("Electronic signature: the signer re-entered the password at the moment of signing; the "
               "history database keeps this signature bound to the analysis record whose SHA-256 is printed "
               "above (python -m qcnorm store verify checks that no record changed since).", size=8)
        return
    w.kv_table([
        ("Decision", _DECISION_LABELS[review["decision"]]),
        ("Reviewer", str(review.get("reviewer") or _DASH)),
        ("Date", str(review.get("date") or _DASH)),
        ("Comment", str(review.get("comment") or _DASH)),
    ], wide=("Comment",))
    w.para("Not an electronic signature: this decision was recorded without sign-in (single-user mode); "
           "the reviewer's name is as typed.", size=8)
