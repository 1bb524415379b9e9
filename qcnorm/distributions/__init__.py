"""Non-normal distribution fits and percentile-method capability.

Families (name -> parameters, all JSON-safe floats):

==============  ==========================================  ==========================
name            params                                      support
==============  ==========================================  ==========================
``normal``      ``mean``, ``sigma``                         all reals
``lognormal``   ``mu``, ``sigma`` (of ln x)                 x > 0
``lognormal3``  ``mu``, ``sigma`` (of ln(x − threshold)),   x > threshold (estimated)
                ``threshold``
``weibull``     ``shape``, ``scale``                        x > 0
``gamma``       ``shape``, ``scale``                        x > 0
``exponential`` ``scale``                                   x > 0
==============  ==========================================  ==========================

Every family is fitted by maximum likelihood with closed forms or a few Newton /
bracketed root-finding steps on a one-dimensional profile equation; scipy's generic
``fit`` is not used (it is 10–100 times slower). scipy.stats distributions serve only
as building blocks for cdf / ppf / logpdf of the fitted model.

The percentile method (ISO 22514-2; Clements 1989) turns a fitted distribution into
Pp / Ppk from its 0.135 %, 50 % and 99.865 % quantiles.

The package, one module per responsibility:

- :mod:`.registry` — the family table; one module per family (:mod:`.normal`,
  :mod:`.lognormal` with the 3-parameter lognormal, :mod:`.weibull`, :mod:`.gamma`,
  :mod:`.exponential`) built on :mod:`._base`;
- :mod:`.results` — :class:`DistributionFit`, :class:`DistributionRanking`,
  :class:`PercentileCapability`;
- :mod:`.fitting` — :func:`fit_distribution`, :func:`fit_distributions`;
- :mod:`.adtest` — Anderson–Darling p-values for estimated parameters;
- :mod:`.quantiles` — closed-form quantiles and tails (fast path);
- :mod:`.percentile` — :func:`percentile_capability`.
"""

from __future__ import annotations

from .fitting import FIT_MIN_N, fit_distribution, fit_distributions
from .percentile import percentile_capability
from .registry import DISTRIBUTIONS
from .results import DistributionFit, DistributionRanking, PercentileCapability

__all__ = [
    "DistributionFit",
    "DistributionRanking",
    "PercentileCapability",
    "DISTRIBUTIONS",
    "FIT_MIN_N",
    "fit_distribution",
    "fit_distributions",
    "percentile_capability",
]
