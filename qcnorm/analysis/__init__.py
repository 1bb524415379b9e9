"""analyze(): the whole job for one characteristic.

Data flows one way: values (or a :class:`qcnorm.data.Measurements`) -> transform
selection -> normality before/after -> control chart on the transformed scale ->
limits in measurement units -> capability (transform route) and the percentile
cross-check (distribution route) -> one frozen :class:`Analysis`.

The Analysis holds every number the app, the CLI, the PDF and the history store show;
none of them computes a statistic of its own.

The package, one module per responsibility:

- :mod:`.results` — the result classes :class:`Analysis` (``to_dict()`` is the JSON
  contract), :class:`Settings` and :class:`Baseline`;
- :mod:`.inputs` — the choices (:data:`TRANSFORM_CHOICES` …), limits such as
  :data:`MIN_N` and :data:`SMALL_N`, and the checks at the boundary;
- :mod:`.steps` — the steps: transform, normality, control chart, capability,
  distribution fits, the verdict across models, exclusions;
- :mod:`.pipeline` — :func:`analyze`, the steps in order.
"""

from __future__ import annotations

from .inputs import (
    CHART_CHOICES,
    MAX_MAGNITUDE,
    MIN_N,
    MIN_SPREAD,
    RULE_CHOICES,
    SMALL_N,
    TRANSFORM_CHOICES,
)
from .pipeline import analyze
from .results import Analysis, Baseline, Settings

__all__ = ["analyze", "Analysis", "Baseline", "Settings", "TRANSFORM_CHOICES", "CHART_CHOICES", "RULE_CHOICES"]
