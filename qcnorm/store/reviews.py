"""Reviews: decisions on analyses; in team mode each one is an electronic signature.

A signature (team mode) records the signer's account id, username and full name, the
meaning (approved / hold / rejected), the UTC time and the SHA-256 of the analysis
signed (:func:`~qcnorm.store.analysis_sha256`: its stored JSON and data fingerprint).
The signer re-enters the password at the moment of signing; the account that saved the
analysis may not sign it; an administrator may not sign unless the store setting
allows it. The analysis must still match its seal and its data fingerprint.

In single-user mode a review is recorded with the name given (or the login name) and
``signed`` False: it is not an electronic signature.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from .._validation import check_choice
from ..errors import AuthError, ConfigError, PermissionDenied, StoreError
from . import chain
from ._common import _now, _optional_text, _required_text, analysis_sha256, data_sha256, os_login
from .baselines import BaselinesRoom
from .records import DECISIONS, MEANINGS, SINGLE_USER_LABEL, ReviewRecord, User
from .schema import analysis_t, review_t

__all__ = ["ReviewsRoom"]

_WORDS = {**{k: k for k in DECISIONS}, **{v: k for k, v in MEANINGS.items()}}


class ReviewsRoom(BaselinesRoom):
    """Signing and reading reviews."""

    @staticmethod
    def _review_record(row: Any) -> ReviewRecord:
        return ReviewRecord(
            id=row.id, analysis_id=row.analysis_id, decision=row.decision, reviewer=row.reviewer,
            comment=row.comment, created_at=row.created_at, supersedes=row.supersedes,
            signer_id=row.signer_id, signer_username=row.signer_username, signer_full_name=row.signer_full_name,
            meaning=row.meaning or MEANINGS.get(row.decision), signed_at_utc=row.signed_at_utc,
            analysis_sha256=row.analysis_sha256, signed=bool(row.signed),
        )

    def _latest_reviews(self, conn: Connection, ids: Sequence[int]) -> dict[int, ReviewRecord]:
        out: dict[int, ReviewRecord] = {}
        for start in range(0, len(ids), 500):
            chunk = list(ids[start : start + 500])
            newest = (
                sa.select(sa.func.max(review_t.c.id))
                .where(review_t.c.analysis_id.in_(chunk))
                .group_by(review_t.c.analysis_id)
            )
            for row in conn.execute(sa.select(review_t).where(review_t.c.id.in_(newest))):
                out[row.analysis_id] = self._review_record(row)
        return out

    def save_review(
        self,
        analysis_id: int,
        decision: str | None = None,
        comment: str = "",
        *,
        signer: User | None = None,
        password: str | None = None,
        supersedes: int | None = None,
        reviewer: str | None = None,
    ) -> int:
        """Record a review decision (approve / hold / reject); returns its id.

        Team mode: ``signer`` (the signed-in account) and ``password`` (re-entered now)
        are required; the review is an electronic signature. Single-user mode:
        ``reviewer`` is the name recorded (default: the login name); not a signature.
        Reviews are append-only: a changed decision is a new review, optionally with
        ``supersedes`` naming the earlier review of the same analysis.

        Raises
        ------
        AuthError
            Wrong password (counts towards the lockout), locked or disabled account.
        PermissionDenied
            No signer in team mode, a role that may not sign, or the signer saved the
            analysis (a different supervisor must sign).
        """
        func = "HistoryStore.save_review"
        aid = self._id(analysis_id)
        key = _WORDS.get(decision.strip().lower(), decision.strip().lower()) if isinstance(decision, str) else decision
        check_choice(key, DECISIONS, "decision", func)
        text = _optional_text(comment, "comment", func)
        team = signer is not None  # confirmed inside the write transaction
        if team:
            name = self._signer_checked(signer, password, reviewer)
        else:
            name = os_login() if reviewer is None else _required_text(reviewer, "reviewer", func)[:200]
        with self._transaction("save the review") as conn:
            if self._team_mode(conn) != team:
                if team:
                    raise ConfigError(f"This history database has no accounts (single-user mode): {func} takes no signer.")
                self._signer_checked(None, password, reviewer)  # raises: team mode needs a signer
            who = self._who(conn, signer, "sign_review", func)
            arow = conn.execute(sa.select(analysis_t).where(analysis_t.c.id == aid)).first()
            if arow is None:
                raise StoreError(f"No analysis with id {analysis_id} in the history database {self.url}: nothing to review. Check the id.")
            if team and arow.saved_by_id == who["id"]:
                raise PermissionDenied(
                    f"{who['full_name']} ({who['username']}) saved analysis {aid}, so may not sign its review: "
                    "a different supervisor must sign it (separation of duties)."
                )
            self._check_signable(conn, arow)
            if supersedes is not None:
                old = conn.execute(sa.select(review_t.c.analysis_id).where(review_t.c.id == self._id(supersedes))).first()
                if old is None:
                    raise StoreError(f"Review {supersedes} (to be superseded) is not in the history database {self.url}. Check the id.")
                if old.analysis_id != aid:
                    raise ConfigError(f"Review {supersedes} is about analysis {old.analysis_id}, not {aid}: a new review can only supersede one of the same analysis.")
            now = _now()
            rid, _, _ = chain.append(conn, review_t, dict(
                analysis_id=aid, decision=key, reviewer=who["full_name"] if team else name, comment=text,
                created_at=now, supersedes=supersedes, signer_id=who["id"], signer_username=who["username"],
                signer_full_name=who["full_name"] if team else SINGLE_USER_LABEL, meaning=MEANINGS[key],
                signed_at_utc=now, analysis_sha256=analysis_sha256(arow.analysis_json, arow.data_sha256), signed=team,
            ), postgres=self._is_pg)
            self._audit(conn, who, "review_signed" if team else "review_recorded",
                        f"Review {rid} of analysis {aid}: {MEANINGS[key]}"
                        + (f" (signed by {who['full_name']})." if team else f" (recorded for {name}; not a signature)."),
                        target="review", target_id=rid)
            return rid

    def _signer_checked(self, signer: Any, password: Any, reviewer: Any) -> str:
        """Re-verify the signer's password (team mode); returns the full name."""
        if signer is None:
            extra = " A typed reviewer name is not accepted." if reviewer is not None else ""
            raise PermissionDenied("Sign in first: a review is an electronic signature by a supervisor, "
                                   f"who re-enters the password to sign.{extra}")
        if not isinstance(signer, User):
            raise ConfigError(f"The 'signer' of HistoryStore.save_review must be a qcnorm.store.User (from authenticate). Got {type(signer).__name__} instead.")
        if not isinstance(password, str) or not password:
            raise AuthError("Re-enter your password to sign: the signature needs it at the moment of signing.")
        row = self._check_password(signer.username, password, purpose="signature")
        if int(row["id"]) != signer.id:
            raise PermissionDenied(f"The account {signer.username!r} is not the one signed in. Sign in again.")
        return str(row["full_name"])

    def _check_signable(self, conn: Connection, arow: Any) -> None:
        try:
            labels = None if arow.subgroups_json is None else json.loads(arow.subgroups_json)
            data_ok = data_sha256(json.loads(arow.values_json), labels) == arow.data_sha256
        except (ValueError, TypeError):
            data_ok = False
        if not data_ok or (arow.chain_seq is not None and not chain.check_record(conn, analysis_t, int(arow.id))):
            raise StoreError(
                f"Analysis {arow.id} no longer matches its seal or its data fingerprint: it was changed after it was "
                "saved and cannot be signed. Run 'python -m qcnorm store verify' and tell the quality manager."
            )

    def reviews_for(self, analysis_id: int) -> list[ReviewRecord]:
        """Every review of an analysis, oldest first (the full decision trail)."""
        aid = self._id(analysis_id)
        with self._reading(f"read the reviews of analysis {analysis_id}") as conn:
            if conn.execute(sa.select(analysis_t.c.id).where(analysis_t.c.id == aid)).first() is None:
                raise StoreError(f"No analysis with id {analysis_id} in the history database {self.url}. Check the id.")
            rows = conn.execute(sa.select(review_t).where(review_t.c.analysis_id == aid).order_by(review_t.c.id))
            return [self._review_record(r) for r in rows]
