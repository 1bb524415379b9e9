"""Shewhart control charts on the transformed scale, run rules, and limits in units.

Three charts, chosen by name from :data:`CHARTS`:

* ``"individuals"`` — individual values with a moving-range chart (span 2);
* ``"xbar_r"`` — subgroup means with a range chart;
* ``"xbar_s"`` — subgroup means with a standard-deviation chart;

and ``"auto"``, which picks individuals for single values, X̄–R for subgroups of at most
9 values and X̄–S above (common practice; Montgomery, ch. 6).

Every limit is computed from a centre and a within-subgroup sigma:
point limits center ± 3σ/√n_i, range-chart limits (d2 ∓ 3d3)(n_i)·σ, s-chart limits
(c4 ∓ 3√(1−c4²))(n_i)·σ. With equal subgroup sizes in Phase I these are exactly the
textbook forms X̄̄ ± A2·R̄, D3·R̄, D4·R̄, X̄̄ ± A3·s̄, B3·s̄, B4·s̄, and the same code
serves Phase II (limits from a frozen :class:`ChartBaseline`) and unequal sizes.

Phase I: points the user marks as assignable causes (``exclude``) stay on the chart but
do not enter the centre or sigma; moving ranges touching them are dropped; they never
trigger or count in the run rules. Phase II: the centre and sigma come from the
baseline and nothing is re-estimated.

:func:`run_rules` applies rule 1 alone (the default, ``"beyond_limits"``), the Western
Electric (1956) zone rules or the Nelson (1984) tests to standardized points, vectorised
with cumulative sums; :func:`false_alarm_rate` gives the expected in-control false alarms
of each set (Markov chain of the zones, Champ & Woodall 1987).

:func:`limits_in_units` maps centre, limits and points back to measurement units with a
fitted transform's ``inverse_transform``; a limit outside what the transform can reach
is reported as missing with a note, never as a made-up number.

The package, one module per responsibility (imports run downwards, no cycles):

* :mod:`~qcnorm.control.estimators` — the chart table: chart kinds, dispersion statistic,
  sigma estimators (:data:`CHARTS`, :data:`CHART_KINDS`);
* :mod:`~qcnorm.control.results` — result types (:class:`ControlChart`, :class:`Violation` …);
* :mod:`~qcnorm.control.rules` — the rule table (:data:`RULES`, :data:`RULE_SETS`) and
  :func:`run_rules`;
* :mod:`~qcnorm.control.false_alarm` — :func:`false_alarm_rate`, probability limits;
* :mod:`~qcnorm.control.charts` — :func:`control_chart`: grouping, exclusions, Phase I/II, limits;
* :mod:`~qcnorm.control.units` — :func:`limits_in_units`.
"""

from __future__ import annotations

from .charts import control_chart
from .estimators import AUTO_XBAR_R_MAX_SIZE, CHART_KINDS, CHARTS, MIN_POINTS, RECOMMENDED_POINTS, ChartKind
from .false_alarm import (
    DISPERSION_ALPHA,
    FalseAlarmRate,
    _dispersion_tail,
    _simulate_false_alarm,
    dispersion_probability_limit,
    false_alarm_rate,
    range_cdf,
)
from .results import ChartBaseline, ControlChart, DispersionChart, Exclusion, UnitsLimits, Violation
from .rules import DEFAULT_RULES, DISPERSION_LIMITS, RULE_SETS, RULES, RunRule, run_rules
from .units import limits_in_units

__all__ = [
    "CHARTS",
    "RULE_SETS",
    "DEFAULT_RULES",
    "DISPERSION_LIMITS",
    "DISPERSION_ALPHA",
    "FalseAlarmRate",
    "false_alarm_rate",
    "dispersion_probability_limit",
    "range_cdf",
    "MIN_POINTS",
    "RECOMMENDED_POINTS",
    "AUTO_XBAR_R_MAX_SIZE",
    "Exclusion",
    "Violation",
    "DispersionChart",
    "ChartBaseline",
    "ControlChart",
    "UnitsLimits",
    "control_chart",
    "run_rules",
    "limits_in_units",
    "RULES",
    "RunRule",
    "CHART_KINDS",
    "ChartKind",
]

