"""The table of distribution families: name -> :class:`._base._Family`.

Adding a family = one module beside this one defining its ``_Family`` (see
``exponential.py`` for the smallest), plus its entry here. The order is the order of
fitting and of ties in the AIC ranking.
"""

from __future__ import annotations

from ._base import _Family
from .exponential import EXPONENTIAL
from .gamma import GAMMA
from .lognormal import LOGNORMAL, LOGNORMAL3
from .normal import NORMAL
from .weibull import WEIBULL

_FAMILIES: dict[str, _Family] = {
    "normal": NORMAL,
    "lognormal": LOGNORMAL,
    "lognormal3": LOGNORMAL3,
    "weibull": WEIBULL,
    "gamma": GAMMA,
    "exponential": EXPONENTIAL,
}

#: Available families and their labels.
DISTRIBUTIONS: dict[str, str] = {k: f.label for k, f in _FAMILIES.items()}
