"""python -m benchmarks.stages [--n 1e6] [--repeat 3]

Where each millisecond of one ``analyze(x, usl=8)`` goes (x = lognormal(0, 0.6)), in one
thread (QCNORM_THREADS=1, so the stages add up), CPU seconds under cProfile:

1. the steps of analyze() (inclusive time of each step's entry function);
2. every qcnorm module's inclusive time, counted where it is entered from outside the
   module (so a family's fit, log-likelihood and A² pair are one row);
3. the floor: one pass of each elementary operation over n doubles, best of 7, so the
   rows above can be read as "so many passes".

Nothing is asserted; the figures go in benchmarks/README.md.
"""

from __future__ import annotations

import argparse
import cProfile
import os
import pstats
import time

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ["QCNORM_THREADS"] = "1"

import numpy as np  # noqa: E402
from scipy import special  # noqa: E402

from qcnorm.analysis import analyze  # noqa: E402

#: analyze()'s steps: (label, module path suffix, function name).
_STEPS = (
    ("sort (once, shared)", "~", "<method 'sort' of 'numpy.ndarray' objects>"),
    ("transform: choose_transform", "qcnorm/selection.py", "choose_transform"),
    ("· candidates' fits", "qcnorm/transforms/base.py", "fit"),
    ("· candidates' scores (map, Jacobian, A²)", "qcnorm/_scoring.py", "_evaluate"),
    ("normality reports", "qcnorm/normality/report.py", "normality_report"),
    ("control chart", "qcnorm/control/charts.py", "control_chart"),
    ("limits in units", "qcnorm/control/units.py", "limits_in_units"),
    ("capability", "qcnorm/capability/compute.py", "capability"),
    ("distribution fits (6 families)", "qcnorm/distributions/fitting.py", "_fit_each"),
    ("model range", "qcnorm/modelrange.py", "model_range"),
    ("all A² log Φ pairs (inside the rows above)", "qcnorm/normality/_kernels.py", "_log_phi_pair_sorted"),
)


def _key_matches(key, suffix: str, name: str) -> bool:
    file, _line, fn = key
    return fn == name and (suffix == "~" or file.replace("\\", "/").endswith(suffix))


def _steps(st: pstats.Stats) -> list[tuple[str, float, int]]:
    rows = []
    for label, suffix, name in _STEPS:
        ct, nc = 0.0, 0
        for key, (_cc, ncalls, _tt, cum, _callers) in st.stats.items():
            if _key_matches(key, suffix, name):
                ct += cum
                nc += ncalls
        rows.append((label, ct, nc))
    return rows


def _modules(st: pstats.Stats) -> list[tuple[str, float]]:
    """Inclusive CPU seconds per qcnorm module, counted at calls from outside it."""
    out: dict[str, float] = {}
    for (file, _line, _fn), (_cc, _nc, _tt, _ct, callers) in st.stats.items():
        f = file.replace("\\", "/")
        if "/qcnorm/" not in f:
            continue
        mod = "qcnorm/" + f.split("/qcnorm/", 1)[1]
        for (cfile, _cl, _cfn), val in callers.items():
            if cfile.replace("\\", "/") != f:
                out[mod] = out.get(mod, 0.0) + val[3]
    return sorted(out.items(), key=lambda kv: -kv[1])


def _floor(n: int) -> list[tuple[str, float]]:
    rng = np.random.default_rng(0)
    x = rng.lognormal(0.0, 0.6, n)
    z = (np.log(x) - 0.0) / 0.6
    ops = (
        ("sort", lambda: np.sort(x)),
        ("log", lambda: np.log(x)),
        ("exp", lambda: np.exp(z)),
        ("expm1", lambda: np.expm1(z)),
        ("log1p", lambda: np.log1p(x)),
        ("power x**0.3", lambda: np.power(x, 0.3)),
        ("ndtr", lambda: special.ndtr(z)),
        ("gammainc(1.5, x)", lambda: special.gammainc(1.5, x)),
        ("sum", lambda: x.sum()),
    )
    res = []
    for name, fn in ops:
        best = float("inf")
        for _ in range(7):
            t0 = time.process_time()
            fn()
            best = min(best, time.process_time() - t0)
        res.append((name, best))
    return res


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m benchmarks.stages")
    p.add_argument("--n", type=float, default=1e6)
    p.add_argument("--repeat", type=int, default=3, help="profiled runs; each row is its minimum")
    args = p.parse_args(argv)
    n = int(args.n)
    x = np.random.default_rng(1).lognormal(0.0, 0.6, n)
    analyze(x, usl=8.0)  # warm-up (imports, tables)
    best_total, step_rows, mod_rows = float("inf"), {}, {}
    for _ in range(args.repeat):
        pr = cProfile.Profile(time.process_time)
        t0 = time.process_time()
        pr.enable()
        analyze(x, usl=8.0)
        pr.disable()
        best_total = min(best_total, time.process_time() - t0)
        st = pstats.Stats(pr)
        for label, ct, nc in _steps(st):
            step_rows[label] = min(step_rows.get(label, (float("inf"), nc)), (ct, nc))
        for mod, ct in _modules(st):
            mod_rows[mod] = min(mod_rows.get(mod, float("inf")), ct)
    print(f"analyze(lognormal(0, 0.6), usl=8) at n = {n:,}, one thread, CPU ms "
          f"(min of {args.repeat} profiled runs; profiling adds a little)")
    print(f"\n{'step':<46}{'ms':>8}{'calls':>7}")
    for label, (ct, nc) in step_rows.items():
        print(f"{label:<46}{ct * 1e3:8.1f}{nc:7d}")
    print(f"{'total (profiled)':<46}{best_total * 1e3:8.1f}")
    print(f"\n{'module (inclusive, entered from outside)':<46}{'ms':>8}")
    for mod, ct in sorted(mod_rows.items(), key=lambda kv: -kv[1])[:25]:
        print(f"{mod:<46}{ct * 1e3:8.1f}")
    print(f"\nfloor: one pass over {n:,} doubles, CPU ms, best of 7")
    for name, t in _floor(n):
        print(f"  {name:<20}{t * 1e3:8.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
