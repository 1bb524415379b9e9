"""Helpers shared by the store's rooms: URLs, input cleaning, the data fingerprint,
timestamps, summary columns read from an analysis JSON, and plain-words database errors.
"""

from __future__ import annotations

import getpass
import hashlib
import json
import math
import os
from collections.abc import Mapping, Sequence
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np

from .._results import to_jsonable
from .._validation import as_float_array
from ..errors import ConfigError, DataError, StoreError

SQLITE_BUSY_TIMEOUT_S = 30.0


def default_db_url() -> str:
    """The history database URL: ``QCNORM_DB`` if set, else a SQLite file.

    ``QCNORM_DB`` may be an SQLAlchemy URL (``sqlite:///...``,
    ``postgresql+psycopg://user:pw@host:5432/db``) or a plain file path, which means a
    SQLite file there. Without it the file is
    ``platformdirs.user_data_dir("qcnorm")/history.sqlite3`` (the folder is created).
    """
    env = os.environ.get("QCNORM_DB", "").strip()
    if env:
        return _as_url(env)
    import platformdirs

    folder = Path(platformdirs.user_data_dir("qcnorm", appauthor=False))
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(
            f"Cannot create the history folder {folder} ({exc.strerror or exc}). "
            "Set QCNORM_DB to a file path in a folder you may write to."
        ) from None
    return "sqlite:///" + (folder / "history.sqlite3").as_posix()


def _as_url(target: str | os.PathLike[str]) -> str:
    text = os.fspath(target).strip()
    if "://" in text:
        return text
    return "sqlite:///" + Path(text).expanduser().resolve().as_posix()


def _clean_values(values: Any, func: str) -> np.ndarray:
    arr = as_float_array(values, "values", func)
    if arr.size == 0:
        raise DataError(f"The 'values' parameter of {func} holds no measurements. Nothing to save.")
    bad = np.flatnonzero(~np.isfinite(arr))
    if bad.size:
        where = ", ".join(str(i + 1) for i in bad[:5]) + (" …" if bad.size > 5 else "")
        raise DataError(
            f"The 'values' parameter of {func} must hold finite numbers. Got {bad.size} missing or "
            f"infinite value(s) instead (positions {where}). Save the measurements that were analysed."
        )
    return arr


def _clean_subgroups(subgroups: Any, n: int, func: str) -> tuple[str, ...] | None:
    if subgroups is None:
        return None
    try:
        labels = tuple(str(to_jsonable(s)) for s in list(subgroups))
    except TypeError:
        raise DataError(
            f"The 'subgroups' parameter of {func} must be a sequence of labels, one per value. "
            f"Got {type(subgroups).__name__} instead."
        ) from None
    if len(labels) != n:
        raise DataError(
            f"The 'subgroups' parameter of {func} must have one label per value. "
            f"Got {len(labels)} labels for {n} values instead."
        )
    return labels


def canonical_data_encoding(values: Any, subgroups: Sequence[Any] | None = None) -> bytes:
    """The bytes the data SHA-256 is computed over (see the module docstring).

    One line per value, ``repr(float(v))``, optionally followed by TAB and
    ``json.dumps(str(label), ensure_ascii=False)``; lines joined by ``"\\n"``; UTF-8.
    """
    arr = _clean_values(values, "canonical_data_encoding")
    labels = _clean_subgroups(subgroups, arr.size, "canonical_data_encoding")
    if labels is None:
        lines = [repr(float(v)) for v in arr]
    else:
        lines = [f"{float(v)!r}\t{json.dumps(g, ensure_ascii=False)}" for v, g in zip(arr, labels)]
    return "\n".join(lines).encode("utf-8")


def data_sha256(values: Any, subgroups: Sequence[Any] | None = None) -> str:
    """Hex SHA-256 of :func:`canonical_data_encoding`.

    References
    ----------
    National Institute of Standards and Technology (2015). Secure Hash Standard (SHS).
    FIPS PUB 180-4. (Computed with Python's ``hashlib``.)
    """
    return hashlib.sha256(canonical_data_encoding(values, subgroups)).hexdigest()


def _now() -> str:
    """Now, UTC, ISO 8601 with microseconds (every stored time is this text)."""
    return now_utc().isoformat(timespec="microseconds")


def now_utc() -> datetime:
    """The store's clock (one place, so tests can move it)."""
    return datetime.now(timezone.utc)


def os_login() -> str:
    """The operating-system login name, for single-user mode records."""
    try:
        return getpass.getuser() or "unknown"
    except Exception:  # noqa: BLE001 - no login name in some containers
        return "unknown"


def _finite_or_none(x: Any) -> float | None:
    if isinstance(x, bool) or x is None:
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _text_or_none(x: Any, keys: Sequence[str] = ("name",)) -> str | None:
    if isinstance(x, str):
        return x or None
    if isinstance(x, Mapping):
        for k in keys:
            if isinstance(x.get(k), str) and x.get(k):
                return x[k]
    return None


def _summary(analysis: Mapping[str, Any], n_values: int) -> dict[str, Any]:
    """Summary columns read defensively from an ``Analysis.to_dict()``."""
    control = analysis.get("control")
    control = control if isinstance(control, Mapping) else {}
    capability = analysis.get("capability")
    capability = capability if isinstance(capability, Mapping) else {}

    n_raw = analysis.get("n")
    n = int(n_raw) if isinstance(n_raw, (int, float)) and not isinstance(n_raw, bool) and math.isfinite(n_raw) else n_values

    vio_raw = control.get("violations", analysis.get("violations"))
    if isinstance(vio_raw, (list, tuple)):
        violations: int | None = len(vio_raw)
    elif isinstance(vio_raw, int) and not isinstance(vio_raw, bool):
        violations = vio_raw
    else:
        violations = None

    in_control: bool | None = None
    for src in (control.get("in_control"), analysis.get("in_control")):
        if isinstance(src, bool):
            in_control = src
            break
    if in_control is None and violations is not None:
        in_control = violations == 0

    verdict = _text_or_none(capability.get("verdict"), ("verdict", "label", "status", "text"))
    if verdict is None:
        verdict = _text_or_none(analysis.get("verdict"), ("verdict", "label", "status", "text"))

    return {
        "n": n,
        "transform_name": _text_or_none(analysis.get("transform")),
        "cpk": _finite_or_none(capability.get("cpk")),
        "ppk": _finite_or_none(capability.get("ppk")),
        "verdict": verdict,
        "in_control": in_control,
        "n_violations": violations,
    }


def _dumps(obj: Any) -> str:
    return json.dumps(to_jsonable(obj), ensure_ascii=False, allow_nan=False, sort_keys=True)


def _required_text(value: Any, name: str, func: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise ConfigError(
            f"The '{name}' parameter of {func} is required: a non-empty name or text. "
            f"Got {value!r} instead."
        )
    return value.strip()


def _optional_text(value: Any, name: str, func: str) -> str:
    if value is None:
        return ""
    if not isinstance(value, str):
        raise ConfigError(f"The '{name}' parameter of {func} must be text. Got {type(value).__name__} instead.")
    return value.strip()


# --------------------------------------------------------------------------- errors
def _plain_reason(exc: BaseException) -> tuple[str, str]:
    """(what happened, what to do next) for a database error, in plain words."""
    orig = getattr(exc, "orig", None) or exc
    text = str(orig).strip().splitlines()[0] if str(orig).strip() else type(orig).__name__
    low = str(orig).lower()
    if "locked" in low or "busy" in low:
        return (
            "the database was locked by another writer (waited up to "
            f"{SQLITE_BUSY_TIMEOUT_S:g} s)",
            "close other qcnorm sessions or programs using this file and try again",
        )
    if "disk is full" in low or "no space" in low or "disk full" in low:
        return ("the disk is full", "free disk space and try again; nothing was saved by this step")
    if "not a database" in low or "malformed" in low or "corrupt" in low:
        return (
            "the file is not a qcnorm history database or is damaged",
            "point QCNORM_DB at another file, or restore this one from a backup",
        )
    if "readonly" in low or "read-only" in low or "permission denied" in low:
        return ("the database may not be written by this user", "check the file and folder permissions")
    if "unable to open" in low:
        return (
            "the database file cannot be opened",
            "check that its folder exists and that you may write there",
        )
    if any(s in low for s in ("connection refused", "could not connect", "connection failed",
                              "timeout expired", "server closed", "name or service not known",
                              "could not translate host", "no route")):
        return (
            "the database server is not reachable",
            "check that the server is running and the host, port and database in the URL",
        )
    if "unique" in low or "duplicate" in low:
        return (
            "another user saved the same record at the same moment",
            "try again; nothing was saved by this step",
        )
    if "password authentication failed" in low or "authentication" in low:
        return ("the database server refused the user name or password", "check the credentials in the URL")
    if "does not exist" in low and "database" in low:
        return ("the database named in the URL does not exist on the server", "create it or fix the URL")
    return (f"the database reported a problem ({text})", "check that the database is reachable and not damaged")




def analysis_sha256(analysis: Mapping[str, Any] | str, data_sha: str) -> str:
    """The SHA-256 a review signature binds to: the stored analysis and its data.

    The bytes are the analysis as canonical JSON (keys sorted, no spaces, UTF-8; the
    same text whether given the stored JSON string or the parsed dict), a newline,
    and the data SHA-256 (:func:`data_sha256`) in lower-case hex.
    """
    parsed = json.loads(analysis) if isinstance(analysis, str) else to_jsonable(analysis)
    text = json.dumps(parsed, ensure_ascii=False, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256((text + "\n" + str(data_sha).lower()).encode("utf-8")).hexdigest()
