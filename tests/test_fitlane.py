"""The distribution fits as a second lane (qcnorm/analysis/fitlane.py).

The reference is the one-thread route: the same analyze() with QCNORM_THREADS=1, and the
public fit_distributions(), which fits every family in one loop. A second thread may only
change the wall time, never a figure, a warning or an order.
"""

from __future__ import annotations

import json
import threading

import numpy as np
import pytest
from scipy import stats

from qcnorm import analyze
from qcnorm.analysis import fitlane
from qcnorm.analysis.board import TaskBoard
from qcnorm.distributions import fit_distributions


def _dump(a) -> str:
    return json.dumps(a.to_dict(), sort_keys=True, default=str)


def _both(monkeypatch, x, **kw):
    monkeypatch.setenv("QCNORM_THREADS", "1")
    one = analyze(x, **kw)
    monkeypatch.setenv("QCNORM_THREADS", "2")
    two = analyze(x, **kw)
    return one, two


N = fitlane.PARALLEL_MIN_N + 1_000


@pytest.mark.parametrize(
    "case",
    ["lognormal", "gamma_read_to_0.1_with_zeros", "negatives", "normal_two_sided"],
)
def test_two_threads_give_the_one_thread_answer(monkeypatch, case):
    rng = np.random.default_rng(20261203)
    if case == "lognormal":
        x, kw = rng.lognormal(0.0, 0.6, N), {"usl": 8.0}
    elif case == "gamma_read_to_0.1_with_zeros":
        x, kw = np.round(rng.gamma(1.5, 1.0, N), 1), {"usl": 8.0}
        assert np.count_nonzero(x == 0.0) > 0  # the censored-zero route is exercised
    elif case == "negatives":  # positive families skipped with a reason
        x, kw = rng.normal(0.0, 1.0, N) ** 3, {"usl": 20.0}
    else:
        x, kw = rng.normal(10.0, 1.0, N), {"lsl": 6.0, "usl": 14.0}
    one, two = _both(monkeypatch, x, **kw)
    assert _dump(one) == _dump(two)
    assert one.distributions is not None
    names = [f.name for f in one.distributions.fits] + [s[0] for s in one.distributions.skipped]
    assert sorted(names) == sorted(["normal", "lognormal", "lognormal3", "weibull", "gamma", "exponential"])
    if case == "negatives":
        assert {s[0] for s in one.distributions.skipped} >= {"lognormal", "weibull", "gamma", "exponential"}


def test_lane_ranking_equals_fit_distributions(monkeypatch):
    """The merged ranking of the two groups is fit_distributions' own ranking (same
    families, same AIC order, same skipped list in the table's order)."""
    rng = np.random.default_rng(5)
    x = rng.weibull(1.7, N) * 3.0
    monkeypatch.setenv("QCNORM_THREADS", "2")
    a = analyze(x, usl=12.0)
    ref = fit_distributions(x)
    assert [f.name for f in a.distributions.fits] == [f.name for f in ref.fits]
    for f, g in zip(a.distributions.fits, ref.fits):
        assert f.aic == pytest.approx(g.aic, rel=1e-12)
        assert f.params == pytest.approx(g.params, rel=1e-12)
    # the best family is the one that generated the data, and its shape is scipy's MLE
    # (scipy.stats.weibull_min.fit with floc=0 as the outside reference)
    assert a.distributions.best.name == "weibull"
    c, _loc, _scale = stats.weibull_min.fit(x, floc=0.0)
    assert a.distributions.best.params["shape"] == pytest.approx(c, rel=1e-4)


def test_small_samples_and_qcnorm_threads_1_stay_in_one_thread(monkeypatch):
    seen: list[str] = []
    real = fitlane._fit_group

    def spy(*args):
        seen.append(threading.current_thread().name)
        return real(*args)

    monkeypatch.setattr(fitlane, "_fit_group", spy)
    rng = np.random.default_rng(1)
    monkeypatch.delenv("QCNORM_THREADS", raising=False)
    analyze(rng.lognormal(0.0, 0.5, 500), usl=8.0)
    monkeypatch.setenv("QCNORM_THREADS", "1")
    analyze(rng.lognormal(0.0, 0.5, N), usl=8.0)
    assert seen and all(name == threading.main_thread().name for name in seen)
    seen.clear()
    monkeypatch.setenv("QCNORM_THREADS", "2")
    analyze(rng.lognormal(0.0, 0.5, N), usl=8.0)
    assert len(seen) == 5  # four families one by one, then normal + lognormal together


def test_task_board_helper_thread_and_order():
    """Tasks posted on a threaded board are run by its helper thread when nobody helps;
    run_all returns results in the order given and raises a task's exception."""
    board = TaskBoard(threaded=True, name="qcnorm-test")
    try:
        fut = board.post(lambda: threading.current_thread().name)
        assert fut.result(timeout=60) == "qcnorm-test"
        assert board.run_all([lambda i=i: i * i for i in range(7)]) == [i * i for i in range(7)]
        with pytest.raises(ZeroDivisionError):
            board.run_all([lambda: 1, lambda: 1 / 0])
    finally:
        board.close()
    serial = TaskBoard(threaded=False)
    order: list[int] = []
    serial.post(order.append, 1)
    serial.run_all([lambda: order.append(2), lambda: order.append(3)])
    assert order == [1, 2, 3]  # without threads: at once, in the order posted


@pytest.mark.parametrize("value, n, expected", [
    ("1", N, False), ("0", N, False), ("two", N, False), ("2", N, True), ("2", 500, False),
])
def test_threads_allowed(monkeypatch, value, n, expected):
    monkeypatch.setenv("QCNORM_THREADS", value)
    assert fitlane.threads_allowed(n) is expected


def test_a_failing_main_lane_stops_the_thread(monkeypatch):
    """An error in the transform step still reaches the caller, and the fit thread is shut
    down (no thread left behind)."""
    import qcnorm.analysis.pipeline as pipeline

    def boom(*a, **k):
        raise RuntimeError("transform step failed")

    monkeypatch.setattr(pipeline, "_transform_step", boom)
    monkeypatch.setenv("QCNORM_THREADS", "2")
    before = {t.name for t in threading.enumerate()}
    with pytest.raises(RuntimeError, match="transform step failed"):
        analyze(np.random.default_rng(2).lognormal(0.0, 0.5, N), usl=8.0)
    for t in threading.enumerate():
        if t.name.startswith("qcnorm-fits") and t.name not in before:
            t.join(timeout=30)
            assert not t.is_alive()


def test_every_family_is_posted_exactly_once():
    """The lane's two groups cover the family table exactly (a new family must be added to
    the lane's scheduling order, or it would never be fitted in analyze())."""
    from qcnorm.distributions.registry import _FAMILIES

    posted = fitlane._OWN_AD + fitlane._SHARED_AD
    assert sorted(posted) == sorted(_FAMILIES) and len(set(posted)) == len(posted)
