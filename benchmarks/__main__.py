"""python -m benchmarks [--quick] [--sizes 1e3,1e4,...] [--skip-batch]

Prints, in one run, qcnorm's time and the time of a naive route that computes the same
figures with scipy's generic routines, with the answers side by side and the ratio.
Nothing here is asserted: speed is reported, not tested.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import warnings

# One BLAS thread: on a shared 2-core machine a second OpenBLAS thread waits for a free
# core and makes timings swing (see README). Set before numpy is imported.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
from scipy import stats

from qcnorm.analysis import analyze  # noqa: E402
from qcnorm.normality import normality_report  # noqa: E402
from qcnorm.selection import choose_transform  # noqa: E402

#: The clock of every timing: CPU seconds of this process (steadier than wall time on a
#: busy machine; with one BLAS thread they agree on an idle one). ``--wall`` switches.
_CLOCK = time.process_time


def _best_of(fn, repeat: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = _CLOCK()
        out = fn()
        best = min(best, _CLOCK() - t0)
    return best, out


def naive_core(x: np.ndarray) -> dict:
    """The scipy route for the Core I figures: transforms by generic MLE, AD on each."""
    out = {}
    y, lam = stats.boxcox(x)
    out["boxcox_lambda"] = lam
    y2, lam2 = stats.yeojohnson(x)
    out["yeojohnson_lambda"] = lam2
    a, b, loc, scale = stats.johnsonsu.fit(x)
    out["johnson_su"] = (a, b)
    for name, v in (("raw", x), ("log", np.log(x)), ("boxcox", y), ("yeojohnson", y2)):
        out[f"ad_{name}"] = stats.anderson(v, dist="norm", method="interpolate").statistic
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        out["shapiro_raw"] = stats.shapiro(x).statistic
    return out


def naive_analyze(x: np.ndarray) -> dict:
    """Core route plus the generic distribution fits the percentile cross-check needs."""
    out = naive_core(x)
    out["lognorm"] = stats.lognorm.fit(x, floc=0)
    out["weibull"] = stats.weibull_min.fit(x, floc=0)
    out["gamma"] = stats.gamma.fit(x, floc=0)
    out["expon"] = stats.expon.fit(x, floc=0)
    return out


def bench_core(sizes: list[int], naive_max: int) -> None:
    print("\n== Transform selection + normality diagnostics (choose_transform + 2 normality reports)")
    print(f"{'n':>9} {'qcnorm s':>9} {'scipy s':>9} {'ratio':>7}   λ MLE Box–Cox qcnorm / scipy  AD raw qcnorm / scipy")
    rng = np.random.default_rng(7)
    for n in sizes:
        x = rng.lognormal(0.0, 0.6, n)
        rep = 3 if n <= 100_000 else 1

        def fast():
            ch = choose_transform(x, candidates="auto")
            r0 = normality_report(x)
            r1 = normality_report(ch.transform.transform(x))
            return ch, r0, r1

        tf, (ch, r0, _r1) = _best_of(fast, rep)
        bc = next(c for c in ch.candidates if c.name == "boxcox")
        if n <= naive_max:
            tn, ref = _best_of(lambda: naive_core(x), 1)
            ratio = f"{tn / tf:6.1f}x"
            ref_l, ref_ad = f"{ref['boxcox_lambda']:.5f}", f"{ref['ad_raw']:.4g}"
        else:
            tn, ratio, ref_l, ref_ad = float("nan"), "   n/a", "skipped", "skipped"
        lam_mle = getattr(bc.transform, "lambda_mle_", float("nan"))  # before rounding to a convenient λ
        print(f"{n:>9} {tf:9.3f} {tn:9.3f} {ratio:>7}   {lam_mle:.5f} / {ref_l:<12}"
              f"   {r0.ad_statistic:.4g} / {ref_ad}")


def _best_wall_cpu(fn, repeat: int) -> tuple[float, float, object]:
    """Best wall and best CPU seconds of ``repeat`` runs (analyze may use a second thread
    from 20,000 values (qcnorm.analysis.fitlane.PARALLEL_MIN_N), so the two differ: CPU counts both threads)."""
    bw, bc, out = float("inf"), float("inf"), None
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        bw, bc = min(bw, time.perf_counter() - w0), min(bc, time.process_time() - c0)
    return bw, bc, out


def bench_analyze(sizes: list[int], naive_max: int) -> None:
    print("\n== analyze(transform='auto', usl=...) vs the naive scipy route (generic fits)")
    print("   wall = elapsed seconds (what the user waits; analyze may use 2 threads from 20,000 values),")
    print("   CPU = both threads' CPU seconds; the scipy route is one thread, wall shown; ratio = wall / wall")
    print(f"{'n':>9} {'wall s':>8} {'CPU s':>8} {'scipy s':>9} {'ratio':>7}   Weibull shape qcnorm / scipy"
          "   lognormal σ qcnorm / scipy")
    rng = np.random.default_rng(11)
    for n in sizes:
        x = rng.lognormal(0.0, 0.6, n)
        rep = 5 if n <= 1_000_000 else 1
        tw, tc, a = _best_wall_cpu(lambda: analyze(x, usl=8.0), rep)
        fits = {f.name: f for f in a.distributions.fits} if a.distributions else {}
        wq = fits.get("weibull").params["shape"] if "weibull" in fits else float("nan")
        lq = fits.get("lognormal").params["sigma"] if "lognormal" in fits else float("nan")
        if n <= naive_max:
            tn, _tnc, ref = _best_wall_cpu(lambda: naive_analyze(x), 1)
            ratio = f"{tn / tw:6.1f}x"
            rw, rl = f"{ref['weibull'][0]:.5f}", f"{ref['lognorm'][0]:.5f}"
        else:
            tn, ratio, rw, rl = float("nan"), "   n/a", "skipped", "skipped"
        print(f"{n:>9} {tw:8.3f} {tc:8.3f} {tn:9.3f} {ratio:>7}   {wq:.5f} / {rw:<18} {lq:.5f} / {rl}")


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m benchmarks")
    p.add_argument("--quick", action="store_true", help="sizes 1e3..1e5 only, small batch")
    p.add_argument("--sizes", help="comma-separated sizes, e.g. 1e3,1e4")
    p.add_argument("--naive-max", type=float, default=1e6, help="largest n for the scipy route")
    p.add_argument("--skip-batch", action="store_true")
    p.add_argument("--wall", action="store_true", help="time with the wall clock instead of CPU seconds")
    args = p.parse_args(argv)
    global _CLOCK
    if args.wall:
        _CLOCK = time.perf_counter
    if args.sizes:
        sizes = [int(float(s)) for s in args.sizes.split(",")]
    else:
        sizes = [1_000, 10_000, 100_000] if args.quick else [1_000, 10_000, 100_000, 1_000_000]
    print(f"python {sys.version.split()[0]}, numpy {np.__version__}; "
          f"{'wall' if args.wall else 'CPU'} seconds; qcnorm best of 3 (selection above 1e5 and "
          f"the scipy route: single run); OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS')}")
    bench_core(sizes, int(args.naive_max))
    bench_analyze(sizes, int(args.naive_max))
    if not args.skip_batch:
        from benchmarks.batch_bench import bench_batch

        bench_batch(n_chars=100 if args.quick else 1000, n_values=500)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
