"""Run rules: one table of rule definitions (:data:`RULES`) and :func:`run_rules`.

Every rule of every set is one :class:`RunRule` row: id, rule set, description, pattern
finder, window and its zone form (for the false-alarm Markov chain). :data:`RULE_SETS`,
:data:`DISPERSION_LIMITS` and :data:`DEFAULT_RULES` follow. The finders are vectorised
with cumulative sums: one O(n) pass per rule.

References
----------
Western Electric Co. (1956). Statistical Quality Control Handbook. Indianapolis.
Nelson, L.S. (1984). The Shewhart control chart — tests for special causes.
Journal of Quality Technology 16(4), 237–239.
"""

from __future__ import annotations

import functools
import gc
from collections import deque
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from itertools import chain, repeat
from operator import itemgetter
from typing import Any

import numpy as np

from ..errors import ConfigError, DataError
from .results import Violation


def _window_count(cond: np.ndarray, w: int) -> np.ndarray:
    """Number of True in the window of length ``w`` ending at each index (-1 before w−1)."""
    m = cond.size
    out = np.full(m, -1, dtype=np.int64)
    if m >= w:
        cs = np.concatenate(([0], np.cumsum(cond, dtype=np.int64)))
        out[w - 1 :] = cs[w:] - cs[: m - w + 1]
    return out


@dataclass(frozen=True)
class _Hit:
    rule: str
    ends: np.ndarray  # compressed index where the rule triggers
    starts: np.ndarray  # compressed index of the first point of the pattern
    qual: np.ndarray | None  # k-of-m rules: side (+1/-1) of the pattern per hit
    words: list[str]  # description per hit
    level: float = 0.0  # k-of-m rules: the sigma level the reported points exceed


def _pick(first: np.ndarray, a: str, b: str) -> list[str]:
    """``a`` where ``first`` is True, else ``b`` (the same two string objects, no copies)."""
    return np.array([b, a], dtype=object)[first.astype(np.intp)].tolist()


def _beyond(z: np.ndarray, rule: str, k: float) -> _Hit:
    hi, lo = z > k, z < -k
    ends = np.flatnonzero(hi | lo)
    words = _pick(z[ends] > 0, f"a point more than {k:g} sigma above the centre line",
                  f"a point more than {k:g} sigma below the centre line")
    return _Hit(rule, ends, ends, None, words)


def _k_of_m(z: np.ndarray, rule: str, k: int, m: int, level: float) -> _Hit:
    ends_all, quals = [], []
    for sign in (1.0, -1.0):
        cond = sign * z > level
        # Trigger where the window holds k of m AND the current point is one of them,
        # so that one pattern is flagged where it is completed, not again as it slides.
        hit = (_window_count(cond, m) >= k) & cond
        e = np.flatnonzero(hit)
        ends_all.append(e)
        quals.append(np.full(e.size, sign))
    ends = np.concatenate(ends_all)
    signs = np.concatenate(quals)
    order = np.argsort(ends, kind="stable")
    ends, signs = ends[order], signs[order]
    words = _pick(signs > 0, f"{k} of {m} points in a row more than {level:g} sigma above the centre line",
                  f"{k} of {m} points in a row more than {level:g} sigma below the centre line")
    return _Hit(rule, ends, np.maximum(ends - m + 1, 0), signs, words, level)


def _two_sided(rule: str, w: int, hits: tuple[np.ndarray, np.ndarray], words: tuple[str, str]) -> _Hit:
    """Merge the hits of the two directions of a run rule (ends in time order)."""
    ends = np.concatenate(hits)
    first = np.concatenate((np.ones(hits[0].size, dtype=bool), np.zeros(hits[1].size, dtype=bool)))
    order = np.argsort(ends, kind="stable")
    ends = ends[order]
    return _Hit(rule, ends, ends - w + 1, None, _pick(first[order], *words))


def _run_same_side(z: np.ndarray, rule: str, w: int) -> _Hit:
    hits = tuple(np.flatnonzero(_window_count(cond, w) == w) for cond in (z > 0, z < 0))
    return _two_sided(rule, w, hits, (f"{w} points in a row above the centre line",
                                      f"{w} points in a row below the centre line"))


def _trend(z: np.ndarray, rule: str, w: int) -> _Hit:
    d = np.diff(z)
    # diff j joins points j and j + 1
    hits = tuple(np.flatnonzero(_window_count(cond, w - 1) == w - 1) + 1 for cond in (d > 0, d < 0))
    return _two_sided(rule, w, hits, (f"{w} points in a row steadily increasing",
                                      f"{w} points in a row steadily decreasing"))


def _alternating(z: np.ndarray, rule: str, w: int) -> _Hit:
    d = np.sign(np.diff(z))
    alt = (d[:-1] * d[1:]) < 0  # alt[k]: diffs k and k+1 change direction at point k+1
    ends = np.flatnonzero(_window_count(alt, w - 2) == w - 2) + 2
    return _Hit(rule, ends, ends - w + 1, None, [f"{w} points in a row alternating up and down"] * ends.size)


def _run_cond(z: np.ndarray, rule: str, w: int, cond: np.ndarray, words: str) -> _Hit:
    ends = np.flatnonzero(_window_count(cond, w) == w)
    return _Hit(rule, ends, ends - w + 1, None, [words] * ends.size)


# Bulk construction of Violation objects. A run rule can fire at most points of a long
# unstable series (10^6 points -> over a million signals), and the frozen dataclass
# __init__ (one object.__setattr__ per field) then dominates. The objects below are
# built by setting the same four slots directly: identical Violation objects, about
# twice as fast, with the cyclic garbage collector paused while they are made.
_NEW = object.__new__
_SET_RULE, _SET_DESCRIPTION, _SET_INDEX, _SET_POINTS = (
    Violation.__dict__[f].__set__ for f in ("rule", "description", "index", "points")
)


def _make_violations(rule: str, words: list[str], index: list[int], points: Sequence[tuple[int, ...]]) -> list[Violation]:
    h = len(index)
    objs = list(map(_NEW, repeat(Violation, h)))
    for setter, values in ((_SET_RULE, repeat(rule, h)), (_SET_DESCRIPTION, words),
                           (_SET_INDEX, index), (_SET_POINTS, points)):
        deque(map(setter, objs, values), maxlen=0)
    return objs


def _window_tuples(
    starts: np.ndarray, width: int, mask: np.ndarray | None, number: Any
) -> Sequence[tuple[int, ...]]:
    """The points of each pattern as a tuple of point numbers.

    Pattern i covers compressed positions starts[i] … starts[i] + width − 1, of which
    only the columns where ``mask`` is True are kept (all when ``mask`` is None).
    ``number`` maps a compressed position to its point number (a tuple of shared int
    objects, or an int array); built column-wise, one tuple per pattern.
    """
    h = starts.size
    if isinstance(number, tuple):
        take = number.__getitem__
        if mask is None:  # contiguous windows: tuple slices of the shared ints
            return list(map(take, map(slice, starts.tolist(), (starts + width).tolist())))
        column = lambda sel, j: list(map(take, (starts[sel] + j).tolist()))  # noqa: E731
    else:
        pos = starts[:, None] + np.arange(width)[None, :]
        if mask is None:
            return list(zip(*number[pos].T.tolist()))
        column = lambda sel, j: number[starts[sel] + j].tolist()  # noqa: E731
    code = (mask.astype(np.int64) << np.arange(width)).sum(axis=1)  # kept columns, as bits
    perm, parts = [], []
    for c in np.unique(code).tolist():
        sel = np.flatnonzero(code == c)
        perm.append(sel)
        parts.append(zip(*(column(sel, j) for j in range(width) if (c >> j) & 1)))
    flat = list(chain.from_iterable(parts))
    if h == 1:
        return flat
    return itemgetter(*np.argsort(np.concatenate(perm)).tolist())(flat)


class _GcPaused:
    """Pause the cyclic garbage collector while many small objects are made (it would
    otherwise rescan them again and again); restores the previous state."""

    def __enter__(self) -> None:
        self.was = gc.isenabled()
        gc.disable()

    def __exit__(self, *exc: Any) -> None:
        if self.was:
            gc.enable()


_RuleFn = Callable[[np.ndarray], _Hit]


@dataclass(frozen=True, slots=True)
class RunRule:
    """One row of the rule table :data:`RULES`.

    Attributes
    ----------
    id : str
        The rule id reported in :class:`Violation` (``"L1"``, ``"WE1"``–``"WE4"``, ``"N1"``–``"N8"``).
    rule_set : str
        The rule set the rule belongs to (a key of :data:`RULE_SETS`).
    description : str
        The rule in plain words (the signals carry the side where it applies).
    find : callable
        The pattern finder: ``find(z, id)`` -> hits on standardized points (excluded ones
        removed).
    window : int
        Points in one pattern (1 for a point beyond the limits).
    zone : tuple or None
        The pattern in zones for the Markov chain of the false-alarm rate
        (:mod:`qcnorm.control.false_alarm`): ``("beyond", k)``, ``("k_of_m", k, m, level)``,
        ``("run_side", w)``, ``("run_within1", w)``, ``("run_beyond1", w)``; None when the
        rule looks at the values themselves (trends, alternation), which then needs a
        simulation table there.
    """

    id: str
    rule_set: str
    description: str
    find: Callable[..., _Hit]
    window: int
    zone: tuple | None

    def __call__(self, z: np.ndarray) -> _Hit:
        return self.find(z, self.id)


_WITHIN1 = "15 points in a row within 1 sigma of the centre line (either side)"
_BEYOND1 = "8 points in a row more than 1 sigma from the centre line (either side)"


def _within1(z: np.ndarray, rule: str, w: int) -> _Hit:
    return _run_cond(z, rule, w, np.abs(z) < 1.0, _WITHIN1)


def _beyond1(z: np.ndarray, rule: str, w: int) -> _Hit:
    return _run_cond(z, rule, w, np.abs(z) > 1.0, _BEYOND1)


_P = functools.partial

#: The rule table: every run rule of every rule set, in the order the rules are applied
#: and reported. The Western Electric and Nelson rules read "sigma" as the sigma of the
#: plotted point.
RULES: tuple[RunRule, ...] = (
    # Rule 1 alone: a point beyond the 3-sigma limits (Shewhart's own criterion), with the
    # dispersion chart at probability limits (see DISPERSION_LIMITS). The default: about one
    # false signal in 370 points on the location chart (2Φ(−3) = 0.0027 per point).
    RunRule("L1", "beyond_limits", "a point beyond the 3-sigma limits", _P(_beyond, k=3.0), 1, ("beyond", 3.0)),
    # Western Electric Co. (1956), Statistical Quality Control Handbook, zone rules 1-4.
    RunRule("WE1", "western_electric", "a point beyond the 3-sigma limits", _P(_beyond, k=3.0), 1,
            ("beyond", 3.0)),
    RunRule("WE2", "western_electric", "2 of 3 points in a row beyond 2 sigma on the same side",
            _P(_k_of_m, k=2, m=3, level=2.0), 3, ("k_of_m", 2, 3, 2.0)),
    RunRule("WE3", "western_electric", "4 of 5 points in a row beyond 1 sigma on the same side",
            _P(_k_of_m, k=4, m=5, level=1.0), 5, ("k_of_m", 4, 5, 1.0)),
    RunRule("WE4", "western_electric", "8 points in a row on one side of the centre line",
            _P(_run_same_side, w=8), 8, ("run_side", 8)),
    # Nelson, L.S. (1984), J. Quality Technology 16(4), 237-239, tests 1-8.
    RunRule("N1", "nelson", "a point beyond the 3-sigma limits", _P(_beyond, k=3.0), 1, ("beyond", 3.0)),
    RunRule("N2", "nelson", "9 points in a row on one side of the centre line",
            _P(_run_same_side, w=9), 9, ("run_side", 9)),
    RunRule("N3", "nelson", "6 points in a row steadily increasing or decreasing", _P(_trend, w=6), 6, None),
    RunRule("N4", "nelson", "14 points in a row alternating up and down", _P(_alternating, w=14), 14, None),
    RunRule("N5", "nelson", "2 of 3 points in a row beyond 2 sigma on the same side",
            _P(_k_of_m, k=2, m=3, level=2.0), 3, ("k_of_m", 2, 3, 2.0)),
    RunRule("N6", "nelson", "4 of 5 points in a row beyond 1 sigma on the same side",
            _P(_k_of_m, k=4, m=5, level=1.0), 5, ("k_of_m", 4, 5, 1.0)),
    RunRule("N7", "nelson", _WITHIN1, _P(_within1, w=15), 15, ("run_within1", 15)),
    RunRule("N8", "nelson", _BEYOND1, _P(_beyond1, w=8), 8, ("run_beyond1", 8)),
)

#: Rule sets by name: (rule id, finder) pairs in the order of :data:`RULES`. Each finder
#: maps standardized points (excluded ones removed) to hits.
RULE_SETS: dict[str, tuple[tuple[str, _RuleFn], ...]] = {}
for _rule in RULES:
    RULE_SETS.setdefault(_rule.rule_set, ())
    RULE_SETS[_rule.rule_set] += ((_rule.id, _rule),)
del _rule

#: The rule set used when none is chosen: rule 1 alone on the location chart, the
#: dispersion chart at probability limits. On 100 independent in-control values it signals
#: in about 27 % of runs (Western Electric + 3-sigma moving-range limits: about 65 %).
DEFAULT_RULES = "beyond_limits"

#: How each rule set places the dispersion chart's limits: "probability" = upper limit at
#: the 1 − DISPERSION_ALPHA quantile of the statistic's in-control distribution, no lower
#: limit; "three_sigma" = the textbook (d2 ± 3d3)σ and (c4 ± 3√(1−c4²))σ limits
#: (D3/D4, B3/B4), as in the Western Electric handbook and Nelson's charts.
DISPERSION_LIMITS: dict[str, str] = {
    "beyond_limits": "probability",
    "western_electric": "three_sigma",
    "nelson": "three_sigma",
}
if set(DISPERSION_LIMITS) != set(RULE_SETS):  # pragma: no cover - a table edited halfway
    raise AssertionError("every rule set needs its dispersion limits in DISPERSION_LIMITS")


def run_rules(z: Any, rules: str = "beyond_limits", *, excluded: Any = None) -> tuple[Violation, ...]:
    r"""Apply a set of run rules to standardized chart points.

    Parameters
    ----------
    z : array_like
        Standardized points z_i = (point_i − center)/σ_point_i, in time order.
    rules : {"beyond_limits", "western_electric", "nelson"}
        Rule set (see :data:`RULE_SETS`).
    excluded : array_like of bool, optional
        Mask of points that neither trigger nor count (Phase I exclusions). Non-finite
        z values are treated as excluded too.

    Returns
    -------
    tuple of Violation
        Sorted by point, then by rule order. A rule is reported at every point where
        its pattern is complete; for "k of m" rules the point itself must be one of the
        k, so a pattern is reported where it is completed rather than again as the
        window slides on.

    Notes
    -----
    "Beyond kσ" means |z| > k strictly; "in a row on one side" means z > 0 (or z < 0)
    for every point, so a point exactly on the centre line breaks the run; ties break
    trends and alternation. Excluded points are removed from the sequence and the rules
    run on the remaining points in order (the pattern may span an excluded point).

    beyond_limits: L1 one point beyond 3σ (rule 1 alone).

    Western Electric (1956): WE1 one point beyond 3σ; WE2 2 of 3 consecutive beyond 2σ
    on the same side; WE3 4 of 5 beyond 1σ on the same side; WE4 8 in a row on one side.

    Nelson (1984): N1 beyond 3σ; N2 nine in a row on one side; N3 six in a row steadily
    increasing or decreasing; N4 fourteen in a row alternating up and down; N5 2 of 3
    beyond 2σ same side; N6 4 of 5 beyond 1σ same side; N7 fifteen in a row within 1σ;
    N8 eight in a row beyond 1σ on either side.

    Each rule is one pass of cumulative sums over the series: O(n) time and memory.

    References
    ----------
    Western Electric Co. (1956). Statistical Quality Control Handbook. Indianapolis.
    Nelson, L.S. (1984). The Shewhart control chart — tests for special causes.
    Journal of Quality Technology 16(4), 237–239.

    Long by its docstring and by the bulk building of signals, kept in one loop because
    it is the hot path on long unstable series (see benchmarks/README.md).
    """
    table = RULE_SETS.get(rules) if isinstance(rules, str) else None
    if table is None:
        raise ConfigError(
            f"The 'rules' parameter of run_rules must be one of "
            f"{', '.join(repr(k) for k in RULE_SETS)}. Got {rules!r} instead."
        )
    zz = np.asarray(z, dtype=np.float64).ravel()
    keep = np.isfinite(zz)
    if excluded is not None:
        ex = np.asarray(excluded, dtype=bool).ravel()
        if ex.shape != zz.shape:
            raise DataError(
                f"The 'excluded' mask of run_rules must have one entry per point ({zz.size}). "
                f"Got {ex.size} instead."
            )
        keep &= ~ex
    if keep.all():  # speed: nothing to drop, so no mask index or copy (same points)
        orig, zc = np.arange(zz.size), zz
    else:
        orig = np.flatnonzero(keep)
        zc = zz[keep]
    if zc.size == 0:
        return ()

    # Point numbers of the compressed positions. When the signals cover many points (an
    # unstable series), they are made once as shared int objects, so that the millions of
    # point tuples do not each hold their own copies.
    number: Any = orig
    ends_all, order_all, made = [], [], []
    with _GcPaused():
        for order, (_, fn) in enumerate(table):
            hit = fn(zc)
            if hit.ends.size == 0:
                continue
            widths = hit.ends - hit.starts + 1
            if np.any(widths != widths[0]):  # pragma: no cover - every rule has a fixed length
                raise AssertionError(f"run rule {hit.rule} has patterns of different lengths")
            width = int(widths[0])
            if not isinstance(number, tuple) and hit.ends.size * width >= zc.size // 4:
                number = tuple(orig.tolist())
            # k-of-m rules report only the points of the window beyond the level on the
            # pattern's side; the other rules report the whole window.
            mask = None
            if hit.qual is not None:
                mask = hit.qual[:, None] * zc[hit.starts[:, None] + np.arange(width)[None, :]] > hit.level
            pts = _window_tuples(hit.starts, width, mask, number)
            index = orig[hit.ends]
            index_objs = (list(map(number.__getitem__, hit.ends.tolist())) if isinstance(number, tuple)
                          else index.tolist())
            made.append(_make_violations(hit.rule, hit.words, index_objs, pts))
            ends_all.append(index)
            order_all.append(np.full(hit.ends.size, order))
        if not made:
            return ()
        flat = list(chain.from_iterable(made))
        sort = np.lexsort((np.concatenate(order_all), np.concatenate(ends_all)))
        if sort.size == 1:
            return (flat[0],)
        return itemgetter(*sort.tolist())(flat)
