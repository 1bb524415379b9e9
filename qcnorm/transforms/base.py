"""The base of every transform: the ``Transform`` class, its ``Domain`` and shared helpers.

Conventions shared by every transform
-------------------------------------
* ``transform`` and ``log_jacobian`` refuse values outside ``domain`` with a
  :class:`~qcnorm.errors.DomainError` naming how many and where.
* ``inverse_transform`` never returns junk: a value at or beyond an end of ``image``
  returns the matching end of ``domain`` (the limit of the inverse there; it may be
  ``±inf``, which for a control limit means "no limit on that side"); NaN in gives
  NaN out. Because every transform is a continuous increasing bijection from its
  domain onto its image, the domain bound is always the limit, so no other value
  needs to become NaN.
* λ ≈ 0 (and λ ≈ 2 for Yeo–Johnson) special cases use the tolerance ``LAMBDA_TOL``.

A family subclasses ``Transform`` (hooks ``_fit``, ``_forward``, ``_inverse_inside``,
``_log_jac``, ``_domain``, ``_image``, ``_params``, ``describe``, ``n_model_params``) and
says how it is rebuilt from stored parameters (``param_keys``, ``fitted_names``,
``_from_params``); ``registry.TRANSFORMS`` lists it by name.
"""

from __future__ import annotations

import math
import threading
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from .._results import Result
from .._validation import as_float_array, check_sample
from ..errors import DomainError, NotFittedError

#: |λ| below this is treated as λ = 0 (the log member); compared with a tolerance, never ==.
LAMBDA_TOL = 1e-9
#: Values of λ a quality engineer recognises (common practice): 1/x, 1/√x, ln, √x, none, x².
CONVENIENT_LAMBDAS = (-1.0, -0.5, 0.0, 0.5, 1.0, 2.0)
#: Minimum number of values for fitting each family.
MIN_N = {"none": 3, "log": 3, "log_threshold": 10, "boxcox": 5, "yeojohnson": 5, "johnson": 20}


# --------------------------------------------------------------------------- domain


@dataclass(frozen=True, slots=True)
class Domain(Result):
    """Where a transform is defined, in measurement units.

    ``low``/``high`` may be ``-inf``/``inf``; ``*_open`` says whether the bound itself
    is excluded.
    """

    low: float
    high: float
    low_open: bool = True
    high_open: bool = True

    def contains(self, x: Any) -> np.ndarray:
        """Boolean array: which values lie inside the domain (NaN never does)."""
        arr = np.asarray(x, dtype=np.float64)
        lo = arr > self.low if self.low_open else arr >= self.low
        hi = arr < self.high if self.high_open else arr <= self.high
        return lo & hi

    def describe(self) -> str:
        """The domain in plain words, e.g. ``"x > 0"`` or ``"all real numbers"``."""
        lo_txt = None if math.isinf(self.low) else f"{_fmt(self.low)} {'<' if self.low_open else '≤'} x"
        hi_txt = None if math.isinf(self.high) else f"x {'<' if self.high_open else '≤'} {_fmt(self.high)}"
        if lo_txt and hi_txt:
            return f"{lo_txt} {'<' if self.high_open else '≤'} {_fmt(self.high)}"
        if lo_txt:
            return f"x {'>' if self.low_open else '≥'} {_fmt(self.low)}"
        if hi_txt:
            return hi_txt
        return "all real numbers"


def _fmt(v: float) -> str:
    return f"{v + 0.0:.4g}"  # no "-0"


def _positions(mask: np.ndarray, k: int = 5) -> str:
    idx = np.flatnonzero(mask)
    return ", ".join(str(i + 1) for i in idx[:k]) + (" …" if idx.size > k else "")


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool) and math.isfinite(v)


class _SharedLogs:
    """ln x and ln(1 + x) of one sorted sample, computed once for all the candidates of
    ``selection.choose_transform`` (private speed plumbing; set as ``t._shared_logs``).

    ``get(x, kind)`` gives np.log(x) ("log", only when every x > 0) or np.log1p(x) ("log1p",
    only when every x ≥ 0) — the very arrays the families would compute — when ``x`` is that
    sample; else None, and the family computes its own. The arrays are read-only.
    """

    def __init__(self, xs: np.ndarray) -> None:
        self.xs = xs
        self._ok = {"log": bool(xs.size and xs[0] > 0), "log1p": bool(xs.size and xs[0] >= 0)}
        self._arrays: dict[str, np.ndarray] = {}
        self._lock = threading.Lock()  # candidates may be fitted on two threads

    def get(self, x: np.ndarray, kind: str) -> np.ndarray | None:
        if x is not self.xs or not self._ok[kind]:
            return None
        with self._lock:
            a = self._arrays.get(kind)
            if a is None:
                a = np.log(x) if kind == "log" else np.log1p(x)
                a.flags.writeable = False
                self._arrays[kind] = a
        return a


def _shared_log(t: Any, x: np.ndarray, kind: str) -> np.ndarray | None:
    """``t._shared_logs.get(x, kind)`` when choose_transform lent one, else None."""
    sl = getattr(t, "_shared_logs", None)
    return None if sl is None else sl.get(x, kind)


# --------------------------------------------------------------------------- base class


class Transform:
    """Base class of the normalizing transforms.

    Subclasses implement ``_fit``, ``_forward``, ``_inverse_inside``, ``_log_jac``,
    ``_domain``, ``_image``, ``_params`` and ``describe``.
    """

    family: ClassVar[str] = "transform"
    label: ClassVar[str] = "transform"
    advice: ClassVar[str] = "Check the values, or choose a transform whose domain covers them."
    min_n: ClassVar[int] = 3
    #: Keys of ``params_`` that ``transform_from_params`` needs (finite numbers) to rebuild a fit.
    param_keys: ClassVar[tuple[str, ...]] = ()

    def __init__(self) -> None:
        self._fitted = False
        self._name = self.family
        self.notes_: tuple[str, ...] = ()

    # -- public API ---------------------------------------------------------------
    @property
    def name(self) -> str:
        """The family name; for Johnson, the fitted member (johnson_su / _sb / _sl)."""
        return self._name

    @property
    def is_fitted(self) -> bool:
        return self._fitted

    def fit(self, x: Any) -> Transform:
        """Estimate the parameters from the measurements ``x``; returns ``self``."""
        arr = check_sample(x, "x", f"{type(self).__name__}.fit", min_n=self.min_n)
        self.notes_ = ()
        self._fit(arr)
        self._fitted = True
        return self

    def transform(self, x: Any) -> np.ndarray:
        """Map measurements to the transformed scale (DomainError outside ``domain``)."""
        arr = self._checked(x, "transform")
        with np.errstate(all="ignore"):
            return self._forward(arr)

    def inverse_transform(self, y: Any) -> np.ndarray:
        """Map transformed values back to measurement units.

        Values at or beyond an end of ``image`` return the matching end of ``domain``
        (possibly ``±inf``: "no limit on that side"); NaN returns NaN.
        """
        self._check_fitted()
        arr = as_float_array(y, "y", f"{type(self).__name__}.inverse_transform")
        lo, hi = self.image
        dom = self.domain
        if arr.size > 1 and lo < arr.min() and arr.max() < hi:  # NaN fails both tests
            # speed: every value strictly inside the image: no masks or copies (same numbers)
            with np.errstate(all="ignore"):
                return np.clip(self._inverse_inside(arr), dom.low, dom.high)
        out = np.full(arr.shape, np.nan)
        below = arr <= lo
        above = arr >= hi
        inside = ~(below | above) & ~np.isnan(arr)
        out[below] = dom.low
        out[above] = dom.high
        if inside.any():
            with np.errstate(all="ignore"):
                vals = self._inverse_inside(arr[inside])
            out[inside] = np.clip(vals, dom.low, dom.high)
        return out

    def log_jacobian(self, x: Any) -> np.ndarray:
        """ln dT/dx at each value: the term that makes likelihoods refer to the ORIGINAL data."""
        arr = self._checked(x, "log_jacobian")
        with np.errstate(all="ignore"):
            return self._log_jac(arr)

    def in_domain(self, x: Any) -> np.ndarray:
        """Boolean array: which values the fitted transform accepts."""
        self._check_fitted()
        return self.domain.contains(x)

    @property
    def domain(self) -> Domain:
        """Where the transform is defined, in measurement units."""
        self._check_fitted()
        return self._domain()

    @property
    def image(self) -> tuple[float, float]:
        """(low, high) of the transformed values (open ends)."""
        self._check_fitted()
        return self._image()

    @property
    def params_(self) -> dict[str, float]:
        """The fitted parameters as a JSON-safe dict (keys are a stable contract)."""
        self._check_fitted()
        return {k: float(v) for k, v in self._params().items()}

    @property
    def n_model_params(self) -> int:
        """Parameters of the whole normal model of the ORIGINAL data (for AIC)."""
        raise NotImplementedError

    def describe(self) -> str:  # pragma: no cover - every subclass overrides
        raise NotImplementedError

    def __repr__(self) -> str:
        if not self._fitted:
            return f"{type(self).__name__}(unfitted)"
        inner = ", ".join(f"{k}={v:.6g}" for k, v in self._params().items())
        return f"{type(self).__name__}({self.name}: {inner})"

    # -- rebuilding from stored parameters (used by registry.transform_from_params) ---
    @classmethod
    def fitted_names(cls) -> tuple[str, ...]:
        """The names a fit of this family can carry (``name`` after ``fit``)."""
        return (cls.family,)

    @classmethod
    def _from_params(cls, name: str, vals: dict[str, float], params: Mapping[str, Any]) -> Transform:
        """An instance with the fitted attributes set from ``vals`` (the ``param_keys`` as
        checked finite floats) and optional extra keys of ``params``; the caller marks it fitted."""
        raise NotImplementedError

    # -- helpers --------------------------------------------------------------------
    def _check_fitted(self) -> None:
        if not self._fitted:
            raise NotFittedError(
                f"This {self.label} has not been fitted yet. Call fit(x) with the baseline "
                "measurements first, or rebuild it from stored parameters with "
                "transform_from_params(name, params)."
            )

    def _checked(self, x: Any, what: str) -> np.ndarray:
        self._check_fitted()
        arr = as_float_array(x, "x", f"{type(self).__name__}.{what}")
        self._raise_outside(arr, what)
        return arr

    def _raise_outside(self, arr: np.ndarray, what: str) -> None:
        dom = self._domain()
        bad = ~dom.contains(arr)
        if bad.any():
            raise DomainError(
                f"{int(bad.sum())} of {arr.size} value(s) are outside the domain of the "
                f"{self.label} ({dom.describe()}), at position(s) {_positions(bad)}; "
                f"{what} cannot use them. {self.advice}"
            )

    # -- subclass hooks -------------------------------------------------------------
    def _fit(self, x: np.ndarray) -> None:
        raise NotImplementedError

    def _forward(self, x: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def _inverse_inside(self, y: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def _log_jac(self, x: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def _domain(self) -> Domain:
        raise NotImplementedError

    def _image(self) -> tuple[float, float]:
        return (-math.inf, math.inf)

    def _params(self) -> dict[str, float]:
        raise NotImplementedError
