"""Baselines: frozen Phase I results (transform, center, sigma, chart) with their data."""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import sqlalchemy as sa

from ..errors import ConfigError, StoreError
from . import chain
from ._common import (
    _clean_subgroups, _clean_values, _dumps, _finite_or_none, _now, _required_text, _text_or_none, data_sha256,
)
from .characteristics import CharacteristicsRoom, _by
from .records import BaselineRecord, User
from .schema import baseline_t, characteristic_t

__all__ = ["BaselinesRoom"]


class BaselinesRoom(CharacteristicsRoom):
    """Freezing and reading baselines."""

    def save_baseline(
        self,
        characteristic: str,
        *,
        baseline: Mapping[str, Any],
        values: Any,
        subgroups: Sequence[Any] | None = None,
        created_by: str | None = None,
        reason: str,
        actor: User | None = None,
    ) -> int:
        """Freeze a baseline (Phase I result) for a characteristic; returns its id.

        ``baseline`` holds the frozen transform (``{"name", "params"}`` or a name),
        ``center``, ``sigma`` and ``chart`` / ``chart_type``; it is kept whole as JSON.
        ``values`` (and ``subgroups``) are the measurements it was estimated from.
        In team mode ``actor`` must be a supervisor and ``created_by`` is the actor's
        full name; in single-user mode ``created_by`` names who froze it.
        """
        func = "HistoryStore.save_baseline"
        if not isinstance(baseline, Mapping):
            raise ConfigError(f"The 'baseline' parameter of {func} must be a dict (the frozen baseline). Got {type(baseline).__name__} instead.")
        given = None if created_by is None else _required_text(created_by, "created_by", func)
        why = _required_text(reason, "reason", func)
        arr = _clean_values(values, func)
        labels = _clean_subgroups(subgroups, arr.size, func)
        chart = baseline.get("chart_type", baseline.get("chart"))
        try:
            blob = _dumps(baseline)
        except (TypeError, ValueError) as exc:
            raise ConfigError(f"The 'baseline' parameter of {func} cannot be saved as JSON ({exc}).") from None
        with self._transaction("save the baseline") as conn:
            actor_ = self._who(conn, actor, "save_baseline", func)
            if actor_["id"] is None and given is None:
                raise ConfigError(f"The 'created_by' parameter of {func} is required in single-user mode: "
                                  "the name of who froze the baseline.")
            who = _by(actor_) if actor_["id"] is not None else given
            char = self._char_row_or_raise(conn, characteristic, func)
            bid, _, _ = chain.append(conn, baseline_t, dict(
                    characteristic_id=char.id, created_at=_now(), created_by=who, reason=why,
                    created_by_id=actor_["id"],
                    transform_name=_text_or_none(baseline.get("transform")),
                    chart_type=_text_or_none(chart, ("name", "chart")),
                    center=_finite_or_none(baseline.get("center")),
                    sigma=_finite_or_none(baseline.get("sigma")),
                    baseline_json=blob, n=int(arr.size), values_json=json.dumps(arr.tolist()),
                    subgroups_json=None if labels is None else json.dumps(list(labels), ensure_ascii=False),
                    data_sha256=data_sha256(arr, labels),
            ), postgres=self._is_pg)
            self._audit(conn, actor_, "baseline_frozen", f"Baseline {bid} of {char.name!r} frozen ({why}).",
                        target="baseline", target_id=bid)
            return bid

    def _baseline_query(self) -> sa.Select[Any]:
        return sa.select(baseline_t, characteristic_t.c.name.label("char_name")).join(
            characteristic_t, baseline_t.c.characteristic_id == characteristic_t.c.id
        )

    @staticmethod
    def _baseline_record(row: Any) -> BaselineRecord:
        values = np.asarray(json.loads(row.values_json), dtype=np.float64)
        values.flags.writeable = False
        return BaselineRecord(
            id=row.id, characteristic=row.char_name, characteristic_id=row.characteristic_id,
            created_at=row.created_at, created_by=row.created_by, reason=row.reason,
            baseline=json.loads(row.baseline_json), transform=row.transform_name,
            chart_type=row.chart_type, center=row.center, sigma=row.sigma, n=row.n,
            data_sha256=row.data_sha256, values=values,
            subgroups=None if row.subgroups_json is None else tuple(json.loads(row.subgroups_json)),
            created_by_id=row.created_by_id,
        )

    def latest_baseline(self, characteristic: str) -> BaselineRecord | None:
        """The most recently frozen baseline of a characteristic, or None."""
        found = self.list_baselines(characteristic, limit=1)
        return found[0] if found else None

    def list_baselines(self, characteristic: str, *, limit: int | None = None) -> list[BaselineRecord]:
        """Baselines of a characteristic (every revision), newest first."""
        func = "HistoryStore.list_baselines"
        with self._reading(f"list baselines of {characteristic!r}") as conn:
            char = self._char_row_or_raise(conn, characteristic, func)
            q = self._baseline_query().where(characteristic_t.c.name == char.name).order_by(baseline_t.c.id.desc())
            if limit is not None:
                q = q.limit(int(limit))
            return [self._baseline_record(r) for r in conn.execute(q)]

    def get_baseline(self, baseline_id: int) -> BaselineRecord:
        """One baseline by id; StoreError if there is none."""
        with self._reading(f"read baseline {baseline_id}") as conn:
            row = conn.execute(self._baseline_query().where(baseline_t.c.id == self._id(baseline_id))).first()
        if row is None:
            raise StoreError(f"No baseline with id {baseline_id} in the history database {self.url}. Check the id.")
        return self._baseline_record(row)

