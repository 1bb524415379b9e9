"""Batch benchmark: N characteristics x M values through run_batch, against the naive route.

The naive route reads the file once per characteristic with pandas and runs the scipy
generic fits on each (what a script without qcnorm would do); it is timed on a sample of
characteristics and scaled, so the run stays short.
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd


def make_file(folder: Path, n_chars: int, n_values: int, seed: int = 5) -> tuple[Path, Path]:
    """A wide CSV of skewed characteristics (lognormal, gamma, Weibull, normal) and its specs."""
    rng = np.random.default_rng(seed)
    cols = {}
    specs = []
    for i in range(n_chars):
        kind = i % 4
        if kind == 0:
            v = rng.lognormal(0, 0.4, n_values)
        elif kind == 1:
            v = rng.gamma(3.0, 1.0, n_values)
        elif kind == 2:
            v = rng.weibull(1.6, n_values) * 2
        else:
            v = rng.normal(10, 1, n_values)
        name = f"F{i:04d}"
        cols[f"{name} [mm]"] = np.round(v, 4)
        usl = float(np.quantile(v, 0.9995)) * (1.0 + 0.1 * (i % 7))
        specs.append((name, "", f"{usl:.4f}", "", "1.33", "mm"))
    df = pd.DataFrame(cols)
    data = folder / f"batch_{n_chars}x{n_values}.csv"
    df.to_csv(data, index=False)
    spec = folder / "specs.csv"
    spec.write_text("characteristic,lsl,usl,target,required_index,units\n" + "".join(",".join(s) + "\n" for s in specs))
    return data, spec


def _naive_one(path: Path, column: str) -> None:
    from benchmarks.__main__ import naive_analyze

    x = pd.read_csv(path, usecols=[column])[column].to_numpy(dtype=float)
    naive_analyze(x)


def bench_batch(n_chars: int = 1000, n_values: int = 500) -> None:
    from qcnorm.batch import run_batch

    print(f"\n== batch: {n_chars} characteristics x {n_values} values (python -m qcnorm batch)")
    with tempfile.TemporaryDirectory() as tmp:
        data, spec = make_file(Path(tmp), n_chars, n_values)
        for jobs in (1, os.cpu_count() or 1):
            t0 = time.perf_counter()
            res = run_batch(data, specs=spec, jobs=jobs)
            dt = time.perf_counter() - t0
            print(f"  qcnorm jobs={jobs}: {dt:6.2f} s  ({1000 * dt / n_chars:.1f} ms per characteristic; "
                  f"{res.n_failed} failed)")
        sample = min(20, n_chars)
        cols = [f"F{i:04d} [mm]" for i in range(sample)]
        t0 = time.perf_counter()
        for c in cols:
            _naive_one(data, c)
        per = (time.perf_counter() - t0) / sample
        print(f"  naive route (pandas read per column + scipy generic fits), 1 process: "
              f"{per * 1000:.1f} ms per characteristic -> about {per * n_chars:.1f} s for all "
              f"({sample} timed and scaled); qcnorm with jobs={jobs} is {per * n_chars / max(dt, 1e-9):.1f}x faster")


if __name__ == "__main__":
    bench_batch()
