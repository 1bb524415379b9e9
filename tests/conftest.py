"""Shared fixtures and the skip policy.

Tests that need an outside resource (Chromium, poppler, the PostgreSQL server) skip
with a reason on a developer machine that lacks it; in CI (.ci/run sets
QCNORM_REQUIRE_BROWSER / QCNORM_REQUIRE_POSTGRES) the same condition is a failure, so
a missing install step cannot hide behind a green run.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest
from hypothesis import settings

# A fixed example budget keeps property tests predictable in CI.
settings.register_profile("qcnorm", max_examples=60, deadline=None, derandomize=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "qcnorm"))

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "tests" / "artifacts"


def skip_or_fail(reason: str, env_var: str) -> None:
    """Skip with ``reason``, unless ``env_var`` is set (CI), where it fails."""
    if os.environ.get(env_var):
        pytest.fail(f"{reason} (and {env_var} is set, so this may not be skipped)")
    pytest.skip(reason)


@pytest.fixture(scope="session", autouse=True)
def _private_history_db(tmp_path_factory):
    """Never let a test write into the user's real history database: unless a test
    sets QCNORM_DB itself, the whole session uses a throw-away SQLite file."""
    if "QCNORM_DB" in os.environ:
        yield
        return
    os.environ["QCNORM_DB"] = str(tmp_path_factory.mktemp("history") / "history.sqlite3")
    try:
        yield
    finally:
        os.environ.pop("QCNORM_DB", None)


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(20261201)


@pytest.fixture(scope="session")
def artifacts_dir() -> Path:
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    return ARTIFACTS
