"""Analyses: saved results with their measurements, summary columns and the history table."""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd
import sqlalchemy as sa
from sqlalchemy.engine import Connection

from ..errors import ConfigError, StoreError
from . import chain
from ._common import _clean_subgroups, _clean_values, _dumps, _now, _optional_text, _required_text, _summary, data_sha256
from .records import AnalysisRecord, ReviewRecord, User
from .reviews import ReviewsRoom
from .schema import analysis_t, baseline_t, characteristic_t, review_t

__all__ = ["AnalysesRoom"]


class AnalysesRoom(ReviewsRoom):
    """Saving and reading analyses; the per-characteristic history table."""

    def save_analysis(
        self,
        characteristic: str,
        *,
        analysis: Mapping[str, Any],
        values: Any,
        subgroups: Sequence[Any] | None = None,
        shift: str = "",
        lot: str = "",
        operator: str = "",
        note: str = "",
        qcnorm_version: str,
        baseline_id: int | None = None,
        supersedes: int | None = None,
        saved_by: User | None = None,
    ) -> int:
        """Save an analysis with its measurements; returns its id.

        In team mode ``saved_by`` (a technician or supervisor) is required and is
        recorded as the account that saved it (who may then not sign its review);
        ``operator`` stays free text (who ran the shift).

        Parameters
        ----------
        characteristic : str
            Name of a saved characteristic; the analysis points at its latest revision.
        analysis : dict
            ``Analysis.to_dict()``; kept whole as JSON, summary columns read from it.
        values, subgroups
            The measurements analysed (finite numbers) and their subgroup labels.
        baseline_id : int, optional
            The frozen baseline the data were charted against (same characteristic).
        supersedes : int, optional
            The earlier analysis this one corrects (same characteristic).
        """
        func = "HistoryStore.save_analysis"
        prepared = self._prepare_analysis(
            analysis=analysis, values=values, subgroups=subgroups, shift=shift, lot=lot,
            operator=operator, note=note, qcnorm_version=qcnorm_version, func=func,
        )
        with self._transaction("save the analysis") as conn:
            who = self._who(conn, saved_by, "save_analysis", func)
            return self._insert_analysis(conn, characteristic, prepared, baseline_id, supersedes, func, who)

    def _prepare_analysis(
        self, *, analysis: Any, values: Any, subgroups: Any, shift: Any, lot: Any, operator: Any,
        note: Any, qcnorm_version: Any, func: str,
    ) -> dict[str, Any]:
        if not isinstance(analysis, Mapping):
            raise ConfigError(f"The 'analysis' parameter of {func} must be a dict (Analysis.to_dict()). Got {type(analysis).__name__} instead.")
        arr = _clean_values(values, func)
        labels = _clean_subgroups(subgroups, arr.size, func)
        try:
            blob = _dumps(analysis)
        except (TypeError, ValueError) as exc:
            raise ConfigError(f"The 'analysis' parameter of {func} cannot be saved as JSON ({exc}).") from None
        return {
            **_summary(analysis, int(arr.size)),
            "n_values": int(arr.size),
            "values_json": json.dumps(arr.tolist()),
            "subgroups_json": None if labels is None else json.dumps(list(labels), ensure_ascii=False),
            "data_sha256": data_sha256(arr, labels),
            "analysis_json": blob,
            "shift": _optional_text(shift, "shift", func),
            "lot": _optional_text(lot, "lot", func),
            "operator": _optional_text(operator, "operator", func),
            "note": _optional_text(note, "note", func),
            "qcnorm_version": _required_text(qcnorm_version, "qcnorm_version", func),
        }

    def _insert_analysis(
        self, conn: Connection, characteristic: str, prepared: Mapping[str, Any],
        baseline_id: int | None, supersedes: int | None, func: str, who: dict[str, Any] | None = None,
    ) -> int:
        if who is None:
            who = self._who(conn, None, "save_analysis", func)
        char = self._char_row_or_raise(conn, characteristic, func)
        if baseline_id is not None:
            b = conn.execute(
                sa.select(characteristic_t.c.name)
                .join(baseline_t, baseline_t.c.characteristic_id == characteristic_t.c.id)
                .where(baseline_t.c.id == self._id(baseline_id))
            ).first()
            if b is None:
                raise StoreError(f"No baseline with id {baseline_id} in the history database {self.url}. Check the id or freeze a baseline first.")
            if b.name != char.name:
                raise ConfigError(f"Baseline {baseline_id} belongs to {b.name!r}, not {char.name!r}. Choose a baseline of the same characteristic.")
        if supersedes is not None:
            old = conn.execute(
                sa.select(characteristic_t.c.name)
                .join(analysis_t, analysis_t.c.characteristic_id == characteristic_t.c.id)
                .where(analysis_t.c.id == self._id(supersedes))
            ).first()
            if old is None:
                raise StoreError(f"Analysis {supersedes} (to be superseded) is not in the history database {self.url}. Check the id.")
            if old.name != char.name:
                raise ConfigError(f"Analysis {supersedes} belongs to {old.name!r}, not {char.name!r}: a correction must be for the same characteristic.")
        aid, _, _ = chain.append(conn, analysis_t, dict(
            characteristic_id=char.id, created_at=_now(), baseline_id=baseline_id, supersedes=supersedes,
            saved_by_id=who["id"], saved_by_username=who["username"], saved_by_full_name=who["full_name"],
            **prepared,
        ), postgres=self._is_pg)
        self._audit(conn, who, "analysis_saved", f"Analysis {aid} of {char.name!r} saved"
                    f" (shift {prepared['shift'] or '—'}, lot {prepared['lot'] or '—'}).", target="analysis", target_id=aid)
        return aid

    def _analysis_query(self) -> sa.Select[Any]:
        return sa.select(analysis_t, characteristic_t.c.name.label("char_name")).join(
            characteristic_t, analysis_t.c.characteristic_id == characteristic_t.c.id
        )

    @staticmethod
    def _analysis_record(row: Any, review: ReviewRecord | None) -> AnalysisRecord:
        values = np.asarray(json.loads(row.values_json), dtype=np.float64)
        values.flags.writeable = False
        return AnalysisRecord(
            id=row.id, characteristic=row.char_name, characteristic_id=row.characteristic_id,
            created_at=row.created_at, operator=row.operator, shift=row.shift, lot=row.lot,
            note=row.note, n=row.n, data_sha256=row.data_sha256, values=values,
            subgroups=None if row.subgroups_json is None else tuple(json.loads(row.subgroups_json)),
            analysis=json.loads(row.analysis_json), qcnorm_version=row.qcnorm_version,
            baseline_id=row.baseline_id, supersedes=row.supersedes, transform=row.transform_name,
            cpk=row.cpk, ppk=row.ppk, verdict=row.verdict,
            in_control=None if row.in_control is None else bool(row.in_control),
            violations=row.n_violations, latest_review=review, saved_by_id=row.saved_by_id,
            saved_by_username=row.saved_by_username, saved_by_full_name=row.saved_by_full_name,
        )

    def get_analysis(self, analysis_id: int) -> AnalysisRecord:
        """One saved analysis with its measurements and latest review."""
        with self._reading(f"read analysis {analysis_id}") as conn:
            row = conn.execute(self._analysis_query().where(analysis_t.c.id == self._id(analysis_id))).first()
            if row is None:
                raise StoreError(f"No analysis with id {analysis_id} in the history database {self.url}. Check the id.")
            reviews = self._latest_reviews(conn, [row.id])
        return self._analysis_record(row, reviews.get(row.id))

    def verify(self, analysis_id: int) -> bool:
        """Recompute the SHA-256 of the stored measurements; True when it matches."""
        with self._reading(f"verify analysis {analysis_id}") as conn:
            row = conn.execute(
                sa.select(analysis_t.c.values_json, analysis_t.c.subgroups_json, analysis_t.c.data_sha256)
                .where(analysis_t.c.id == self._id(analysis_id))
            ).first()
        if row is None:
            raise StoreError(f"No analysis with id {analysis_id} in the history database {self.url}. Check the id.")
        try:
            values = json.loads(row.values_json)
            labels = None if row.subgroups_json is None else json.loads(row.subgroups_json)
            return data_sha256(values, labels) == row.data_sha256
        except (ValueError, TypeError):
            return False

    def list_analyses(
        self,
        characteristic: str | None = None,
        *,
        awaiting_review: bool | None = None,
        limit: int | None = None,
    ) -> list[AnalysisRecord]:
        """Saved analyses, newest first.

        ``awaiting_review=True`` keeps analyses with no review that no later analysis
        supersedes; ``False`` keeps the others; ``None`` keeps all.
        """
        q = self._analysis_query()
        later = sa.alias(analysis_t, "later")
        reviewed = sa.exists().where(review_t.c.analysis_id == analysis_t.c.id)
        superseded = sa.exists().where(later.c.supersedes == analysis_t.c.id)
        if awaiting_review is True:
            q = q.where(~reviewed, ~superseded)
        elif awaiting_review is False:
            q = q.where(sa.or_(reviewed, superseded))
        q = q.order_by(analysis_t.c.id.desc())
        if limit is not None:
            q = q.limit(int(limit))
        with self._reading("list analyses") as conn:
            if characteristic is not None:
                char = self._char_row_or_raise(conn, characteristic, "HistoryStore.list_analyses")
                q = q.where(characteristic_t.c.name == char.name)
            rows = conn.execute(q).all()
            reviews = self._latest_reviews(conn, [r.id for r in rows])
        return [self._analysis_record(r, reviews.get(r.id)) for r in rows]

    # ---- history
    HISTORY_COLUMNS = (
        "id", "created_at", "shift", "lot", "operator", "n", "transform", "cpk", "ppk",
        "in_control", "violations", "verdict", "decision", "reviewer", "decided_at", "supersedes",
    )

    def history(self, characteristic: str) -> pd.DataFrame:
        """One row per analysis of a characteristic, oldest first, with its latest decision.

        Columns: id, created_at (UTC), shift, lot, operator, n, transform, cpk, ppk,
        in_control, violations, verdict, decision, reviewer, decided_at (UTC), supersedes.
        Superseded analyses are kept (``supersedes`` of the later row names them).
        """
        with self._reading(f"read the history of {characteristic!r}") as conn:
            char = self._char_row_or_raise(conn, characteristic, "HistoryStore.history")
            rows = conn.execute(
                sa.select(
                    analysis_t.c.id, analysis_t.c.created_at, analysis_t.c.shift, analysis_t.c.lot,
                    analysis_t.c.operator, analysis_t.c.n, analysis_t.c.transform_name,
                    analysis_t.c.cpk, analysis_t.c.ppk, analysis_t.c.in_control,
                    analysis_t.c.n_violations, analysis_t.c.verdict, analysis_t.c.supersedes,
                )
                .join(characteristic_t, analysis_t.c.characteristic_id == characteristic_t.c.id)
                .where(characteristic_t.c.name == char.name)
                .order_by(analysis_t.c.id)
            ).all()
            reviews = self._latest_reviews(conn, [r.id for r in rows])
        records = []
        for r in rows:
            rv = reviews.get(r.id)
            records.append({
                "id": r.id, "created_at": r.created_at, "shift": r.shift, "lot": r.lot,
                "operator": r.operator, "n": r.n, "transform": r.transform_name,
                "cpk": np.nan if r.cpk is None else r.cpk, "ppk": np.nan if r.ppk is None else r.ppk,
                "in_control": None if r.in_control is None else bool(r.in_control),
                "violations": r.n_violations, "verdict": r.verdict,
                "decision": rv.decision if rv else None, "reviewer": rv.reviewer if rv else None,
                "decided_at": rv.created_at if rv else None, "supersedes": r.supersedes,
            })
        frame = pd.DataFrame.from_records(records, columns=list(self.HISTORY_COLUMNS))
        frame["created_at"] = pd.to_datetime(frame["created_at"], utc=True, format="ISO8601")
        frame["decided_at"] = pd.to_datetime(frame["decided_at"], utc=True, format="ISO8601")
        frame["cpk"] = frame["cpk"].astype("float64")
        frame["ppk"] = frame["ppk"].astype("float64")
        for col in ("violations", "supersedes"):
            frame[col] = frame[col].astype("Int64")
        frame["n"] = frame["n"].astype("int64")
        return frame
