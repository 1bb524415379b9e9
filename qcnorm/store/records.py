"""What the store hands back: frozen record dataclasses, roles and decision words."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .._results import Result

__all__ = [
    "DECISIONS", "MEANINGS", "ROLES", "ROLE_DUTIES", "SINGLE_USER_LABEL",
    "CharacteristicRecord", "ReviewRecord", "BaselineRecord", "AnalysisRecord",
    "User", "AuditEvent", "ChainCheck",
]

#: Review decisions and what each means.
DECISIONS: dict[str, str] = {
    "approve": "evidence accepted; the lot may go on to release under the site's quality system",
    "hold": "not decided yet; more evidence or a reaction is needed",
    "reject": "evidence does not support release",
}

#: The meaning a signature records for each decision word.
MEANINGS: dict[str, str] = {"approve": "approved", "hold": "hold", "reject": "rejected"}

#: Account roles, least to most privileged in account matters (not a hierarchy: an
#: administrator manages accounts and does not analyse or sign by default).
ROLES: tuple[str, ...] = ("technician", "supervisor", "administrator")

#: What each role may do, in plain words (the permission table is in ``users.py``).
ROLE_DUTIES: dict[str, str] = {
    "technician": "analyse and save shifts",
    "supervisor": "analyse and save shifts, freeze baselines, sign reviews (approve / hold / reject)",
    "administrator": "manage accounts (add, disable, enable, unlock, change roles and passwords)",
}

#: How a write in single-user mode (no accounts) is attributed.
SINGLE_USER_LABEL = "local user (single-user mode, not an electronic signature)"


@dataclass(frozen=True, slots=True)
class CharacteristicRecord(Result):
    """One revision of a characteristic (the latest unless asked otherwise)."""

    id: int
    name: str
    revision: int
    units: str | None
    lsl: float | None
    usl: float | None
    target: float | None
    required_index: float
    created_at: str
    created_by: str


@dataclass(frozen=True, slots=True)
class ReviewRecord(Result):
    """One review decision on an analysis.

    ``signed`` is True for an electronic signature (team mode: the signer re-entered
    the password); then ``signer_*`` name the account, ``meaning`` is approved / hold /
    rejected, ``signed_at_utc`` the time and ``analysis_sha256`` the
    :func:`~qcnorm.store.analysis_sha256` of the analysis signed. In single-user mode
    ``signed`` is False and ``signer_full_name`` says so. ``reviewer`` is the full name
    (or, in single-user mode, the name given).
    """

    id: int
    analysis_id: int
    decision: str
    reviewer: str
    comment: str
    created_at: str
    supersedes: int | None
    signer_id: int | None = None
    signer_username: str | None = None
    signer_full_name: str | None = None
    meaning: str | None = None
    signed_at_utc: str | None = None
    analysis_sha256: str | None = None
    signed: bool = False


@dataclass(frozen=True, slots=True, eq=False)
class BaselineRecord(Result):
    """A frozen baseline: transform, center, sigma, chart type, and its data."""

    id: int
    characteristic: str
    characteristic_id: int
    created_at: str
    created_by: str
    reason: str
    baseline: dict[str, Any]
    transform: str | None
    chart_type: str | None
    center: float | None
    sigma: float | None
    n: int
    data_sha256: str
    values: np.ndarray
    subgroups: tuple[str, ...] | None
    created_by_id: int | None = None


@dataclass(frozen=True, slots=True, eq=False)
class AnalysisRecord(Result):
    """A saved analysis with its measurements and its latest review (or None).

    ``transform``, ``cpk``, ``ppk``, ``verdict``, ``in_control`` and ``violations``
    are summary columns read from the analysis JSON when it was saved; ``None`` where
    the JSON did not hold them.
    """

    id: int
    characteristic: str
    characteristic_id: int
    created_at: str
    operator: str
    shift: str
    lot: str
    note: str
    n: int
    data_sha256: str
    values: np.ndarray
    subgroups: tuple[str, ...] | None
    analysis: dict[str, Any]
    qcnorm_version: str
    baseline_id: int | None
    supersedes: int | None
    transform: str | None
    cpk: float | None
    ppk: float | None
    verdict: str | None
    in_control: bool | None
    violations: int | None
    latest_review: ReviewRecord | None
    saved_by_id: int | None = None
    saved_by_username: str | None = None
    saved_by_full_name: str | None = None




@dataclass(frozen=True, slots=True)
class User(Result):
    """An account (never holds a password or its hash)."""

    id: int
    username: str
    full_name: str
    role: str
    active: bool


@dataclass(frozen=True, slots=True)
class AuditEvent(Result):
    """One audit-trail entry: who did what, when (UTC), to which record.

    ``actor`` is the username (or the single-user label), ``action`` a short code
    (``sign_in``, ``sign_in_failed``, ``lockout``, ``account_added`` …), ``target``
    and ``target_id`` the record acted on, ``detail`` plain words. No password or
    password hash is ever part of an event.
    """

    id: int
    seq: int
    at_utc: str
    actor: str
    actor_id: int | None
    action: str
    target: str | None
    target_id: int | None
    detail: str


@dataclass(frozen=True, slots=True)
class ChainCheck(Result):
    """Outcome of :meth:`HistoryStore.verify_chain`.

    ``ok`` True when every sealed record matches its hash and none is missing;
    ``checked`` records were recomputed; ``first_bad`` names the first record that
    does not match (``"review 7"``) or None; ``detail`` says what was found in plain
    words; ``head_seq`` / ``head_hash`` are the chain head (write them down to anchor
    the record outside the database).
    """

    ok: bool
    checked: int
    first_bad: str | None
    detail: str
    head_seq: int = 0
    head_hash: str = ""
