"""python -m benchmarks.model_range_bench [--repeat 7] [--sizes 500,1e5]

analyze()'s extra cost for the range across models (capability.model_range), side by side
with it switched off (``analyze(..., model_range=False)``). The budget (issue 10) is
at most 30 % slower. Nothing is asserted: speed is reported, not tested.

Times are process CPU time (``time.process_time``), best of ``--repeat`` runs, the two
settings interleaved so that load from other sessions hits both alike. "step alone" times
the model-range step by itself (``qcnorm.modelrange.model_range`` on the fitted objects),
and "share" is it as a fraction of analyze() without it: the steadier figure on a busy
machine, where the difference of two whole-analyze times is noisy.
"""

from __future__ import annotations

import argparse
import sys
import time

import numpy as np

from qcnorm.analysis import analyze
from qcnorm.modelrange import model_range

#: The data sets timed: name -> (generator(rng, n), USL). Seeded.
DATASETS = {
    "lognormal(1, 0.5)": (lambda r, n: r.lognormal(1.0, 0.5, n), 40.0),
    "gamma(1.5) to 0.1": (lambda r, n: np.round(r.gamma(1.5, 1.0, n), 1), 8.0),
}


def _cpu(fn) -> float:
    t0 = time.process_time()
    fn()
    return time.process_time() - t0


def bench(sizes: list[int], repeat: int) -> list[tuple[str, int, float, float, int]]:
    rows = []
    for name, (gen, usl) in DATASETS.items():
        for n in sizes:
            x = gen(np.random.default_rng(2026), n)
            analyze(x, usl=usl)  # warm-up (imports, caches)
            off, on = float("inf"), float("inf")
            for _ in range(repeat):
                off = min(off, _cpu(lambda: analyze(x, usl=usl, model_range=False)))
                on = min(on, _cpu(lambda: analyze(x, usl=usl, model_range=True)))
            a = analyze(x, usl=usl)
            k = len(a.capability.model_range.models)
            # the model-range step alone (what switching it on adds), timed in isolation
            xs = np.sort(x)
            kw = dict(candidates=a.transform_choice.candidates, distributions=a.distributions,
                      percentile=a.percentile)
            alone = min(_cpu(lambda: [model_range(xs, a.capability, a.transform, **kw) for _ in range(10)])
                        for _ in range(repeat)) / 10
            rows.append((name, n, off, on, alone, k))
    return rows


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m benchmarks.model_range_bench")
    p.add_argument("--sizes", default="500,1e5", help="comma-separated sizes (default 500,1e5)")
    p.add_argument("--repeat", type=int, default=7)
    a = p.parse_args(argv)
    sizes = [int(float(s)) for s in a.sizes.split(",")]
    print("== analyze(): model range off vs on (CPU seconds, best of", a.repeat, "runs)")
    print(f"{'data':<20} {'n':>8} {'off':>9} {'on':>9} {'extra':>8} {'step alone':>11} {'share':>7} {'models':>7}")
    for name, n, off, on, alone, k in bench(sizes, a.repeat):
        print(f"{name:<20} {n:>8} {off:>9.4f} {on:>9.4f} {100 * (on / off - 1):>7.1f}% "
              f"{alone:>11.5f} {100 * alone / off:>6.1f}% {k:>7}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
