"""qcnorm: transforms, control limits and capability for non-normal QC data.

The public face of the package. Importing qcnorm never imports streamlit.

>>> import qcnorm
>>> a = qcnorm.analyze(values, usl=1.6)          # doctest: +SKIP
>>> a.to_dict()["capability"]["ppk"]             # doctest: +SKIP
"""

from __future__ import annotations

from ._version import __version__

from .analysis import Analysis, Baseline, analyze
from .capability import Capability, capability
from .constants import ChartConstants, chart_constants
from .control import ChartBaseline, ControlChart, control_chart, limits_in_units, run_rules
from .io import Measurements, list_characteristics, read_measurements
from .distributions import fit_distribution, fit_distributions, percentile_capability
from .errors import (
    ConfigError,
    DataError,
    DomainError,
    NotFittedError,
    QcnormError,
    QcnormWarning,
    ReadError,
    StoreError,
)
from .normality import (
    anderson_darling,
    kurtosis_test,
    normality_report,
    probability_plot,
    resolution_check,
    shapiro_wilk,
    skewness_test,
)
from .selection import TransformChoice, choose_transform
from .transforms import make_transform, spread_level, transform_from_params

__all__ = [
    "__version__",
    # the whole job
    "analyze", "Analysis", "Baseline",
    # reading data
    "read_measurements", "list_characteristics", "Measurements",
    # transforms
    "choose_transform", "TransformChoice", "make_transform", "transform_from_params", "spread_level",
    # normality
    "anderson_darling", "shapiro_wilk", "skewness_test", "kurtosis_test", "resolution_check",
    "probability_plot", "normality_report",
    # control charts
    "control_chart", "run_rules", "limits_in_units", "ControlChart", "ChartBaseline",
    "chart_constants", "ChartConstants",
    # capability and distributions
    "capability", "Capability", "fit_distribution", "fit_distributions", "percentile_capability",
    # errors
    "QcnormError", "DataError", "DomainError", "NotFittedError", "ReadError", "ConfigError",
    "StoreError", "QcnormWarning",
]
