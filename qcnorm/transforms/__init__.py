"""Normalizing transforms: fit / transform / inverse_transform.

Every transform here is monotone increasing on its domain and has an exact inverse, so
control limits and specification limits can be mapped to the transformed scale and back.

::

    Transform                 base class (fit returns self; fitted values end in "_")
     ├── Identity   "none"        y = x                               identity.py
     ├── Log        "log"         y = ln(x + shift)                   log.py
     │                            (optional fitted threshold)
     ├── BoxCox     "boxcox"      y = ((x + shift)^λ − 1)/λ           power.py
     ├── YeoJohnson "yeojohnson"  Yeo & Johnson (2000)                power.py
     └── Johnson    "johnson"     SU / SB / SL by the Slifker–Shapiro johnson.py
                                  percentile method

The package, one module per responsibility (imports only point down this list):

    base.py           Transform, Domain, MIN_N, LAMBDA_TOL, CONVENIENT_LAMBDAS, small helpers
    lambda_search.py  maximum-likelihood λ and its 95 % likelihood-ratio interval
    zeros.py          readings of 0 below the gauge step: censored normal fit, zero stand-ins
    identity.py, log.py, power.py, johnson.py   one file per family
    spreadlevel.py    spread_level(x, subgroups): Tukey's cross-check of λ
    registry.py       TRANSFORMS (the one table of names), make_transform, transform_from_params

``make_transform(name, **options)`` builds an unfitted transform from one dict of names;
``transform_from_params(name, params)`` rebuilds a fitted one from stored parameters
(a frozen baseline); ``spread_level(x, subgroups)`` is Tukey's cross-check of λ.
Conventions shared by every transform are in :mod:`qcnorm.transforms.base`.

Minimum sample sizes (``MIN_N``): none 3, log 3 (log with fitted threshold 10),
boxcox 5, yeojohnson 5, johnson 20.
"""

from __future__ import annotations

from .base import CONVENIENT_LAMBDAS, LAMBDA_TOL, MIN_N, Domain, Transform
from .identity import Identity
from .johnson import SL_TOLERANCE, Z_GRID, Johnson, sample_quantile, slifker_shapiro
from .lambda_search import HALF_CHI2_95, LAMBDA_BOUNDS
from .log import Log
from .power import BoxCox, YeoJohnson
from .registry import TRANSFORMS, make_transform, transform_from_params
from .spreadlevel import SpreadLevel, spread_level
from .zeros import CensoredNormalFit, censored_normal_fit, substitute_zero_readings

__all__ = [
    "Domain",
    "Transform",
    "Identity",
    "Log",
    "BoxCox",
    "YeoJohnson",
    "Johnson",
    "SpreadLevel",
    "TRANSFORMS",
    "MIN_N",
    "LAMBDA_TOL",
    "CONVENIENT_LAMBDAS",
    "make_transform",
    "transform_from_params",
    "spread_level",
    "substitute_zero_readings",
    "censored_normal_fit",
    "sample_quantile",
    "slifker_shapiro",
]
