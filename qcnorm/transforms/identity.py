"""The identity family, "none": y = x (the plain normal model)."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from .base import Domain, Transform


class Identity(Transform):
    """No transform: y = x. The model of the data is a plain normal (2 parameters)."""

    family = "none"
    label = "identity (no transform)"

    def _fit(self, x: np.ndarray) -> None:
        pass

    def _forward(self, x):
        return x.copy()

    def _inverse_inside(self, y):
        return y.copy()

    def _log_jac(self, x):
        return np.zeros_like(x)

    def _domain(self):
        return Domain(-math.inf, math.inf)

    def _params(self):
        return {}

    @classmethod
    def _from_params(cls, name: str, vals: dict[str, float], params: Mapping[str, Any]) -> Identity:
        return cls()

    @property
    def n_model_params(self) -> int:
        return 2

    def describe(self) -> str:
        return "No transform: the measurements are used as they are."
