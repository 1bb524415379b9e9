"""Normality diagnostics: Anderson–Darling, Shapiro–Wilk, skewness and kurtosis tests,
a gauge-resolution check, probability-plot data, and one report that combines them.

Anderson–Darling is computed from log-probabilities so it stays finite for very large
skewed samples.

All public functions validate their input once with
:func:`qcnorm._validation.check_sample` and return frozen result dataclasses
(:class:`qcnorm._results.Result`). Soft problems (large n, coarse resolution,
approximate p-values) are carried as plain-words strings, never raised.


Modules
-------
::

    _kernels.py     shared kernels: _vdot (single-threaded long dot products), log Φ pairs,
                    validation of sorted samples
    anderson.py     Anderson–Darling (log space), its p-value
    shapiro.py      Shapiro–Wilk, Royston (1995) AS R94
    moments.py      skewness and kurtosis tests
    resolution.py   gauge resolution check
    probplot.py     probability-plot data (Blom positions, line, band)
    report.py       normality_report: all of the above on one sample, and a verdict

``qcnorm.normality`` exports every name the single module had, private kernels
included (``_vdot``, ``_log_phi_pair_sorted`` … are imported by transforms, selection
and distributions).
"""

from __future__ import annotations

from ._kernels import (  # noqa: F401
    _BLAS_DOT_MAX_N,
    _deviations,
    _log_phi_pair,
    _log_phi_pair_sorted,
    _poly,
    _sorted_sample,
    _trusted_sorted_ok,
    _two_sided_p,
    _vdot,
)
from .anderson import (  # noqa: F401
    ADResult,
    AD_MIN_N,
    _AD_METHOD,
    _AD_P_VERTEX,
    _ad_from_sorted,
    _ad_weights,
    ad_p_value,
    anderson_darling,
    anderson_darling_a2,
)
from .shapiro import (  # noqa: F401
    SW_EXACT_MAX_N,
    SW_MIN_N,
    ShapiroResult,
    _SW_C1,
    _SW_C2,
    _SW_C3,
    _SW_C4,
    _SW_C5,
    _SW_C6,
    _SW_G,
    _SW_METHOD,
    _shapiro_from_sorted,
    _sw_coefficients,
    _sw_coefficients_uncached,
    _sw_p_value,
    shapiro_wilk,
)
from .moments import (  # noqa: F401
    KURT_MIN_N,
    KurtosisResult,
    SKEW_MIN_N,
    SkewnessResult,
    _KURT_ESTIMATOR,
    _KURT_GOOD_N,
    _SKEW_ESTIMATOR,
    _central_moments,
    _kurtosis_from_moments,
    _skewness_from_moments,
    kurtosis_test,
    skewness_test,
)
from .resolution import (  # noqa: F401
    RESOLUTION_MIN_DISTINCT,
    RESOLUTION_MIN_N_FOR_COUNT,
    RESOLUTION_SQRT_N,
    RESOLUTION_STEP_TO_SD,
    ResolutionResult,
    _resolution_from_sorted,
    resolution_check,
    resolution_step_limit,
)
from .probplot import (  # noqa: F401
    ProbabilityPlot,
    _BLOM,
    _probability_plot_from_sorted,
    _thin_ranks,
    probability_plot,
)
from .report import (  # noqa: F401
    ALPHA,
    LARGE_N,
    NormalityReport,
    REPORT_MIN_N,
    SMALL_EXCESS_KURTOSIS,
    SMALL_SKEW,
    _fmt_p,
    _verdict,
    normality_report,
)

__all__ = [
    "anderson_darling_a2",
    "AD_MIN_N",
    "ADResult",
    "ad_p_value",
    "anderson_darling",
    "ShapiroResult",
    "shapiro_wilk",
    "SkewnessResult",
    "skewness_test",
    "KurtosisResult",
    "kurtosis_test",
    "ResolutionResult",
    "resolution_check",
    "ProbabilityPlot",
    "probability_plot",
    "NormalityReport",
    "normality_report",
]
