"""Expected in-control false alarms of a rule set, and the dispersion probability limits.

:func:`false_alarm_rate` gives P(at least one signal in n points) and the ARL of a rule set
(dispersion chart included) for an in-control process: exact for rule 1 and the zone rules
(Markov chain of the zones, Champ & Woodall 1987), jointly with the moving-range chart by a
Markov chain in the previous value, and from a seeded simulation table for Nelson's tests.
:func:`dispersion_probability_limit` and :func:`range_cdf` give the probability limits of
the range, moving-range and s charts.

References
----------
Champ, C.W. & Woodall, W.H. (1987). Exact results for Shewhart control charts with
supplementary runs rules. Technometrics 29(4), 393–399.
Pearson, E.S. & Hartley, H.O. Biometrika Tables for Statisticians, vol. 1 (the range).
"""

from __future__ import annotations

import functools
import math
import numbers
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .._results import Result
from ..constants import c4, d2, d3
from ..errors import ConfigError
from .estimators import _DISPERSION_STATISTIC
from .rules import DEFAULT_RULES, DISPERSION_LIMITS, RULE_SETS, RULES, run_rules

#: Upper-tail probability of a dispersion chart's probability limit: 0.001 per point, the
#: "action limit" of British practice (common practice; from memory: BS 2564 factors
#: D'.001 = 4.65, 5.06, 5.31, 5.48 for n = 2 … 5).
DISPERSION_ALPHA = 0.001

# The zone rules of each set, taken from the rule table, for the Markov chain of
# :func:`false_alarm_rate`: rule 1 is the chain's outer edge (±3 sigma), so only the other
# zone patterns enter; a set with a rule that has no zone form (Nelson's tests 3 and 4 look
# at the values themselves) needs a simulation table (_SIMULATED) instead.
_ZONE_RULES: dict[str, tuple[tuple, ...]] = {
    name: tuple(r.zone for r in RULES if r.rule_set == name and r.zone is not None and r.zone[0] != "beyond")
    for name in RULE_SETS
}

# Nelson's eight tests together, by seeded simulation: P(at least one signal within N
# independent N(0, 1) points, known centre and sigma), from
# _simulate_false_alarm("nelson", _NELSON_GRID, reps=100_000, seed=20261203); binomial
# SE ≤ 0.0016. Between entries log-survival is interpolated linearly; beyond the last,
# its slope between the last two entries continues (a geometric tail).
_NELSON_GRID = (1, 2, 3, 5, 10, 15, 25, 50, 75, 100, 150, 250)
_NELSON_TABLE: tuple[float, ...] = (
    0.0028, 0.0052, 0.0096, 0.0223, 0.0744, 0.1352, 0.2523, 0.4803, 0.6392, 0.7509, 0.8804, 0.9724,
)
_NELSON_SIM = "seeded simulation table (100,000 runs, seed 20261203) of Nelson's eight tests"

# Rule sets whose false-alarm figures come from a simulation table (every other set is
# exact, from the zone chain).
_SIMULATED = {"nelson"}
if {r.rule_set for r in RULES if r.zone is None} - _SIMULATED:  # pragma: no cover
    raise AssertionError("a rule set with a rule that has no zone form needs a simulation table "
                         "in qcnorm/control/false_alarm.py")

_SURVIVAL_STEPS = 400  # survival computed exactly up to here, then its geometric tail


@dataclass(frozen=True, slots=True)
class FalseAlarmRate(Result):
    """Expected false alarms of a rule set on a process that is in control.

    Attributes
    ----------
    rules : str
        The rule set.
    chart : str
        The chart kind ("individuals", "xbar_r", "xbar_s"); the dispersion chart is included.
    n : int
        Number of points (values for individuals, subgroups otherwise).
    per_point : float
        Long-run false signals per point, 1/ARL.
    over_n : float
        Probability of at least one false signal among ``n`` points.
    arl : float
        In-control average run length: points until the first false signal, on average.
    method : str
        How the figures were obtained, with sources.
    """

    rules: str
    chart: str
    n: int
    per_point: float
    over_n: float
    arl: float
    method: str

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> FalseAlarmRate | None:
        """Rebuild from :meth:`to_dict` output (e.g. a stored analysis); None if incomplete."""
        if not isinstance(d, Mapping):
            return None
        try:
            return cls(rules=str(d["rules"]), chart=str(d.get("chart") or "individuals"), n=int(d["n"]),
                       per_point=float(d["per_point"]), over_n=float(d["over_n"]), arl=float(d["arl"]),
                       method=str(d.get("method") or ""))
        except (KeyError, TypeError, ValueError):
            return None

    def plain_words(self) -> str:
        """The figures in one sentence for a technician."""
        what = "values" if self.chart == "individuals" else "subgroups"
        pct = 100.0 * self.over_n
        if pct >= 99.5:
            share = "almost every such run"
        else:
            share = "about " + (f"{pct:.0f} %" if pct >= 1.0 else f"{pct:.1f} %") + " of such runs"
        words = (f"With these rules, a stable process charted over {self.n:,} {what} would still raise at "
                 f"least one signal in {share} (about one false signal in {self.arl:,.0f} {what})")
        expected = self.expected_count()
        if expected is not None and expected >= 2.0:  # a long run: the count of chance signals helps
            words += (f"; about {expected:,.0f} signals are expected from chance alone over these {what}, "
                      f"so compare the count of signals with that, and look for their causes")
        return words + "."

    def expected_count(self) -> float | None:
        """Signals expected from chance over the ``n`` points, counted as the chart counts them
        (each point beyond a limit, on either chart): n·2Φ(−3) for rule 1 plus, when the
        dispersion chart at its 0.1 % probability limit is included, 0.001 per dispersion
        value (n − 1 moving ranges, or n subgroup ranges/SDs). Only for "beyond_limits":
        signals of the zone rules come in runs, so no simple count is stated for them."""
        if self.rules != "beyond_limits":
            return None
        count = self.n * math.erfc(3.0 / math.sqrt(2.0))  # 2Φ(−3)
        if "probability limit" in self.method:  # the dispersion chart was included
            count += (self.n - 1 if self.chart == "individuals" else self.n) * DISPERSION_ALPHA
        return count


def _zone_chain(spec: tuple[tuple, ...]):
    """Transient part of the Markov chain of rule 1 plus the zone rules in ``spec``.

    States: the zones of the last few points and the current run lengths; every new point
    falls in one of six zones between −3σ and 3σ (beyond ±3σ is a rule-1 signal).
    Returns (Q as CSR matrix, index of the start state).
    """
    from scipy.sparse import csr_matrix
    from scipy.stats import norm

    edges = np.array([-3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0])
    probs = np.diff(norm.cdf(edges))
    reps = (edges[:-1] + edges[1:]) / 2.0  # a value inside each zone decides every condition
    hist_len = max([r[2] - 1 for r in spec if r[0] == "k_of_m"], default=0)
    runs = [r for r in spec if r[0] != "k_of_m"]
    start = ((), (0,) * len(runs))
    index = {start: 0}
    todo = [start]
    rows: list[int] = []
    cols: list[int] = []
    vals: list[float] = []
    while todo:
        state = todo.pop()
        hist, counts = state
        i = index[state]
        for zone, p in enumerate(probs):
            v = reps[zone]
            signal = False
            for r in spec:
                if r[0] == "k_of_m" and len(hist) >= r[2] - 1:
                    k, m, level = r[1], r[2], r[3]
                    window = [reps[h] for h in hist[len(hist) - (m - 1):]] + [v]
                    for sign in (1.0, -1.0):
                        if sign * v > level and sum(sign * w > level for w in window) >= k:
                            signal = True
            new_counts = []
            for r, c in zip(runs, counts):
                w = r[1]
                if r[0] == "run_side":
                    c = (c + 1 if c > 0 else 1) if v > 0 else (c - 1 if c < 0 else -1)
                elif r[0] == "run_within1":
                    c = c + 1 if abs(v) < 1.0 else 0
                else:  # run_beyond1
                    c = c + 1 if abs(v) > 1.0 else 0
                signal = signal or abs(c) >= w
                new_counts.append(c)
            if signal:
                continue
            nxt = ((hist + (zone,))[-hist_len:] if hist_len else (), tuple(new_counts))
            j = index.get(nxt)
            if j is None:
                j = index[nxt] = len(index)
                todo.append(nxt)
            rows.append(i)
            cols.append(j)
            vals.append(float(p))
    m = len(index)
    return csr_matrix((vals, (rows, cols)), shape=(m, m)), 0


def _survival_tail(surv: np.ndarray) -> tuple[np.ndarray, float]:
    surv = np.asarray(surv, dtype=np.float64)
    surv.setflags(write=False)
    lam = float(surv[-1] / surv[-2]) if surv[-2] > 0 else 0.0
    return surv, lam


#: Rule sets whose zone-chain survival is precomputed in ``_alarm_tables`` (Nelson uses its
#: simulation table, which costs nothing to build).
ALARM_TABLE_ZONE_RULES = ("beyond_limits", "western_electric")


def alarm_table_mr_keys() -> list[tuple[float, float, int]]:
    """(k, bound, cells) of the moving-range chains precomputed in ``_alarm_tables``: the
    3-sigma moving-range limit d2 + 3·d3 and the 0.1 % probability limit, both with rule 1."""
    ks = (d2(2) + 3.0 * d3(2), dispersion_probability_limit("moving_range", 2))
    return [(round(k, 12), 3.0, 600) for k in ks]


# speed: the chains below cost 0.1–0.4 s of CPU at the first chart of every process (each CLI
# call, each batch worker). Their results are stored in ``_alarm_tables`` (generated by
# ``python -m qcnorm.control._alarm_tables_gen``; tests/test_false_alarm_tables.py recomputes
# every table and compares) and read from there; the computation stays for other keys.
@functools.lru_cache(maxsize=None)
def _zone_survival(rules: str) -> tuple[np.ndarray, float]:
    """S(t) = P(no signal in t points), t = 0 … _SURVIVAL_STEPS, and the tail ratio."""
    from ._alarm_tables import ZONE_SURVIVAL

    stored = ZONE_SURVIVAL.get(rules)
    if stored is not None and len(stored) == _SURVIVAL_STEPS + 1:
        return _survival_tail(np.array(stored, dtype=np.float64))
    return _zone_survival_computed(rules)


def _zone_survival_computed(rules: str) -> tuple[np.ndarray, float]:
    """:func:`_zone_survival` from the Markov chain of the zones (no table)."""
    q, start = _zone_chain(_ZONE_RULES[rules])
    u = np.zeros(q.shape[0])
    u[start] = 1.0
    qt = q.T.tocsr()
    surv = np.empty(_SURVIVAL_STEPS + 1)
    surv[0] = 1.0
    for t in range(1, _SURVIVAL_STEPS + 1):
        u = qt @ u
        surv[t] = u.sum()
    return _survival_tail(surv)


@functools.lru_cache(maxsize=None)
def _mr_survival(k: float, bound: float, cells: int = 600) -> tuple[np.ndarray, float]:
    """:func:`_mr_survival_computed`, read from the precomputed tables when stored there."""
    from ._alarm_tables import MR_SURVIVAL

    stored = MR_SURVIVAL.get((k, bound, cells))
    if stored is not None and len(stored) == _SURVIVAL_STEPS + 1:
        return _survival_tail(np.array(stored, dtype=np.float64))
    return _mr_survival_computed(k, bound, cells)


def _mr_survival_computed(k: float, bound: float, cells: int = 600) -> tuple[np.ndarray, float]:
    """Individuals chart: S(t) = P(no |z| > bound and no moving range > k in t values).

    The previous value is the state (a Markov chain on the real line), discretised into
    ``cells`` equal cells on [−bound, bound]; the transition mass is exact in the new value
    (normal cdf differences) with the previous value at its cell's midpoint.
    """
    from scipy.stats import norm

    edges = np.linspace(-bound, bound, cells + 1)
    mid = (edges[:-1] + edges[1:]) / 2.0
    mass = np.diff(norm.cdf(edges))
    lo = np.maximum(edges[None, :-1], mid[:, None] - k)
    hi = np.minimum(edges[None, 1:], mid[:, None] + k)
    kern = np.where(hi > lo, norm.cdf(hi) - norm.cdf(lo), 0.0)  # kern[j, i]: from cell j into cell i
    u = mass.copy()
    surv = np.empty(_SURVIVAL_STEPS + 1)
    surv[0], surv[1] = 1.0, u.sum()
    for t in range(2, _SURVIVAL_STEPS + 1):
        u = u @ kern
        surv[t] = u.sum()
    return _survival_tail(surv)


@functools.lru_cache(maxsize=None)
def _nelson_table_survival() -> tuple[np.ndarray, float]:
    surv = np.array([_nelson_survival(t) for t in range(_SURVIVAL_STEPS + 1)])
    lam = math.exp((math.log1p(-_NELSON_TABLE[-1]) - math.log1p(-_NELSON_TABLE[-2]))
                   / (_NELSON_GRID[-1] - _NELSON_GRID[-2]))
    surv.setflags(write=False)
    return surv, lam


def _nelson_survival(n: int) -> float:
    grid = np.array(_NELSON_GRID, dtype=np.float64)
    log_s = np.log1p(-np.asarray(_NELSON_TABLE))
    if n <= 0:
        return 1.0
    if n >= grid[-1]:
        return float(np.exp(log_s[-1] + (n - grid[-1]) * (log_s[-1] - log_s[-2]) / (grid[-1] - grid[-2])))
    return float(np.exp(np.interp(n, np.concatenate(([0.0], grid)), np.concatenate(([0.0], log_s)))))


def range_cdf(w: Any, size: int) -> np.ndarray:
    r"""CDF of the range of ``size`` independent N(0, 1) values (the relative range R/σ).

    F(w) = size ∫ φ(z) [Φ(z + w) − Φ(z)]^(size−1) dz, by the trapezoid rule on a fine grid
    (Pearson & Hartley, Biometrika Tables for Statisticians, vol. 1, table of the range).
    """
    from scipy.stats import norm

    z = np.linspace(-9.0, 9.0, 6001)
    ww = np.atleast_1d(np.asarray(w, dtype=np.float64))
    inner = np.clip(norm.cdf(z[None, :] + ww[:, None]) - norm.cdf(z)[None, :], 0.0, 1.0)
    f = size * norm.pdf(z)[None, :] * inner ** (size - 1)
    out = np.trapezoid(f, z, axis=1)
    out[ww <= 0] = 0.0
    return np.clip(out, 0.0, 1.0)


@functools.lru_cache(maxsize=None)
def dispersion_probability_limit(statistic: str, size: int, alpha: float = DISPERSION_ALPHA) -> float:
    """Upper probability limit of a dispersion statistic, in units of sigma.

    ``statistic`` "moving_range" (span 2) or "range": the 1 − alpha quantile of the
    relative range of ``size`` values (for 2 values, √2·Φ⁻¹(1 − alpha/2), since
    MR/σ = √2·|Z|); "stdev": σ·√(χ²_{1−alpha}(size − 1)/(size − 1)).
    """
    from scipy.optimize import brentq
    from scipy.stats import chi2, norm

    if statistic == "stdev":
        return float(math.sqrt(chi2.ppf(1.0 - alpha, size - 1) / (size - 1)))
    if size == 2:
        return float(math.sqrt(2.0) * norm.isf(alpha / 2.0))
    return float(brentq(lambda w: range_cdf(w, size)[0] - (1.0 - alpha), 0.1, 12.0, xtol=1e-10))


@functools.lru_cache(maxsize=None)
def _dispersion_tail(statistic: str, size: int, kind: str) -> float:
    """In-control probability that one dispersion value lies outside its limits."""
    from scipy.stats import chi2

    if kind == "probability":
        return DISPERSION_ALPHA
    if statistic == "stdev":
        c = c4(size)
        spread = 3.0 * math.sqrt(1.0 - c * c)
        scale = size - 1
        p = float(chi2.sf((c + spread) ** 2 * scale, scale))
        if c - spread > 0:
            p += float(chi2.cdf((c - spread) ** 2 * scale, scale))
        return p
    c, spread = d2(size), 3.0 * d3(size)
    p = float(1.0 - range_cdf(c + spread, size)[0])
    if c - spread > 0:
        p += float(range_cdf(c - spread, size)[0])
    return p


def _with_moving_range(rules: str, kind: str, surv: np.ndarray, tail: float, limit_words: str,
                       parts: list[str]) -> tuple[np.ndarray, float]:
    """Survival of the individuals chart with its moving-range chart (see false_alarm_rate)."""
    k = (dispersion_probability_limit("moving_range", 2) if kind == "probability"
         else d2(2) + 3.0 * d3(2))
    joint, jl = _mr_survival(round(k, 12), 3.0)
    if rules == "beyond_limits":
        parts.append(f"moving-range chart at its {limit_words}, computed jointly with rule 1 "
                     "(Markov chain in the previous value)")
        return joint, jl
    r1, r1l = _zone_survival("beyond_limits")
    parts.append(f"moving-range chart at its {limit_words}, combined assuming its signals "
                 "are unrelated to the zone rules beyond rule 1 (approximate)")
    return surv * joint / r1, tail * jl / r1l


def _with_subgroup_dispersion(chart: str, kind: str, sizes: np.ndarray, surv: np.ndarray, tail: float,
                              limit_words: str, parts: list[str]) -> tuple[np.ndarray, float]:
    """Survival of an X̄ chart with its R or s chart: independent for normal data, so the
    survivals multiply (one value outside with the mean tail over the subgroup sizes)."""
    stat = _DISPERSION_STATISTIC[chart]
    sizes = sizes[sizes >= 2]
    if not sizes.size:
        return surv, tail
    kinds, counts = np.unique(sizes, return_counts=True)
    qs = np.array([_dispersion_tail(stat, int(s), kind) for s in kinds])
    q_mean = float(np.sum(qs * counts) / counts.sum())
    parts.append(f"{'range' if stat == 'range' else 's'} chart at its {limit_words} "
                 "(independent of the subgroup means for normal data)")
    return surv * (1.0 - q_mean) ** np.arange(_SURVIVAL_STEPS + 1), tail * (1.0 - q_mean)


def false_alarm_rate(
    rules: str = DEFAULT_RULES,
    n: int = 100,
    *,
    chart: str = "individuals",
    subgroup_sizes: Any = None,
    dispersion: bool = True,
) -> FalseAlarmRate:
    r"""Expected false alarms of a rule set when the process is in control.

    Parameters
    ----------
    rules : str
        A key of :data:`RULE_SETS`.
    n : int
        Number of points charted (values for individuals, subgroups otherwise).
    chart : {"individuals", "xbar_r", "xbar_s"}
    subgroup_sizes : array_like of int, optional
        Size of each subgroup (X̄ charts); the dispersion chart's tail depends on it.
        Default: 5 for every subgroup.
    dispersion : bool
        Include the dispersion chart's signals (as the ``in_control`` verdict does).

    Returns
    -------
    FalseAlarmRate
        ``per_point`` = 1/ARL, ``over_n`` = P(at least one signal in n points), ``arl``.

    Notes
    -----
    For independent N(μ, σ²) values with μ and σ known (Phase II; Phase I limits estimated
    from the same data alarm a little less often).

    * Rule 1 and the zone rules (Western Electric; Nelson's tests 1, 2, 5–8): exact, from
      the Markov chain of the zones (Champ & Woodall 1987): S(t) = e₀ Qᵗ 1, and beyond
      400 points the geometric tail of the chain's survival. Rule 1 alone: 2Φ(−3) = 0.0027
      per point, ARL 370.4 (Montgomery). Western Electric rules 1–4: ARL ≈ 91.75 (Champ &
      Woodall 1987).
    * Nelson's eight tests: tests 3 and 4 depend on the values, not the zones; the figures
      come from a seeded simulation table (_NELSON_TABLE), interpolated on log-survival.
    * Individuals + moving range: with rule 1 alone, the two charts are computed jointly
      (the previous value as the state of a Markov chain, discretised on 600 cells). With
      zone rules, the moving-range part multiplies the zone-rule survival by
      P(no MR signal | no rule-1 signal) — an approximation that treats the MR signals as
      unrelated to the zone rules beyond rule 1.
    * X̄–R / X̄–S: the subgroup mean is independent of the range and s of normal data, so
      the survivals multiply exactly; one R or s value lies outside its limits with the
      probability from the range distribution (:func:`range_cdf`) or χ².

    References
    ----------
    Champ, C.W. & Woodall, W.H. (1987). Exact results for Shewhart control charts with
    supplementary runs rules. Technometrics 29(4), 393–399.
    Montgomery, D.C. Introduction to Statistical Quality Control, ch. 5–6 (ARL₀ = 370).
    Nelson, L.S. (1984). J. Quality Technology 16(4), 237–239.

    Long only by this reference docstring; the dispersion chart is added by
    _with_moving_range / _with_subgroup_dispersion.
    """
    if not isinstance(rules, str) or rules not in RULE_SETS:
        raise ConfigError(
            f"The 'rules' parameter of false_alarm_rate must be one of "
            f"{', '.join(repr(k) for k in RULE_SETS)}. Got {rules!r} instead."
        )
    if chart not in _DISPERSION_STATISTIC:
        raise ConfigError(
            f"The 'chart' parameter of false_alarm_rate must be one of "
            f"{', '.join(repr(c) for c in _DISPERSION_STATISTIC)}. Got {chart!r} instead."
        )
    if isinstance(n, bool) or not isinstance(n, numbers.Integral) or n < 1:
        raise ConfigError(f"The 'n' parameter of false_alarm_rate must be a positive whole number. Got {n!r} instead.")
    n = int(n)
    kind = DISPERSION_LIMITS[rules]
    parts: list[str] = []
    if rules in _SIMULATED:
        surv, tail = _nelson_table_survival()
        parts.append(_NELSON_SIM)
    else:
        surv, tail = _zone_survival(rules)
        parts.append("rule 1, 2Φ(−3) per point" if rules == "beyond_limits"
                     else "Markov chain of the zone rules (Champ & Woodall 1987)")
    limit_words = ("probability limit (0.1 % per point)" if kind == "probability"
                   else "3-sigma limits")
    if dispersion and chart == "individuals":
        surv, tail = _with_moving_range(rules, kind, surv, tail, limit_words, parts)
    elif dispersion:
        sizes = np.full(n, 5) if subgroup_sizes is None else np.asarray(subgroup_sizes, dtype=np.int64).ravel()
        surv, tail = _with_subgroup_dispersion(chart, kind, sizes, surv, tail, limit_words, parts)
    over = 1.0 - (float(surv[n]) if n <= _SURVIVAL_STEPS else float(surv[-1] * tail ** (n - _SURVIVAL_STEPS)))
    arl = float(surv.sum() + (surv[-1] * tail / (1.0 - tail) if tail < 1.0 else math.inf))
    method = ("; ".join(parts) + "; in-control process with known centre and sigma (limits estimated "
              "from the same data, Phase I, alarm somewhat less often)")
    return FalseAlarmRate(rules=rules, chart=chart, n=n, per_point=1.0 / arl,
                          over_n=min(max(over, 0.0), 1.0), arl=arl, method=method)


def _simulate_false_alarm(
    rules: str, grid: Sequence[int], *, reps: int, seed: int, chart_mr: float | None = None
) -> tuple[np.ndarray, float]:
    """P(at least one signal within N points) for N in ``grid`` and a censored ARL estimate,
    by simulating ``reps`` runs of independent N(0, 1) points with known centre and sigma
    through :func:`run_rules` (and a moving-range limit ``chart_mr`` in sigma, if given).

    Used to build the Nelson table and, in the tests, to check the exact figures.
    """
    rng = np.random.default_rng(seed)
    length = int(max(grid))
    first = np.full(reps, np.inf)
    for r in range(reps):
        z = rng.standard_normal(length)
        hits = [v.index for v in run_rules(z, rules)]
        if chart_mr is not None:
            big = np.flatnonzero(np.abs(np.diff(z)) > chart_mr)
            if big.size:
                hits.append(int(big[0]) + 1)
        if hits:
            first[r] = min(hits) + 1  # points needed to see the first signal
    probs = np.array([np.mean(first <= g) for g in grid])
    return probs, float(np.mean(np.minimum(first, length)))
