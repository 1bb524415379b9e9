"""Batch benchmark: N characteristics x M values through run_batch, against the naive route.

``python -m benchmarks.batch_bench [--chars 1000] [--values 500] [--engines local,pool,dask]
[--memory-chars 10000] [--skip-naive]``

Printed side by side in one run:

- the naive route: the file read once per characteristic with pandas and scipy's generic
  fits on each (what a script without qcnorm would do), timed on a sample of
  characteristics and scaled;
- the previous batch route (careful reader over the whole file, one characteristic per
  task: ``read_mode="whole", task_size=1``);
- the current route with each engine (local = this process, pool = process pool,
  dask = a LocalCluster on 127.0.0.1 started for the run), for a small and a large job;
- where the time goes (reading, analysis, summary table, XLSX writing);
- peak memory (RSS) of a batch over a long file of ``--memory-chars`` characteristics,
  measured in a child process: the driver's own peak (``resource.getrusage``) and the
  peak of the driver plus its workers summed (psutil, sampled every 50 ms).

Every route's summary is compared with the first one's (same figures whatever the route).
"""

from __future__ import annotations

import argparse
import io
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd


def _values(rng: np.random.Generator, i: int, n_values: int) -> np.ndarray:
    kind = i % 4
    if kind == 0:
        return rng.lognormal(0, 0.4, n_values)
    if kind == 1:
        return rng.gamma(3.0, 1.0, n_values)
    if kind == 2:
        return rng.weibull(1.6, n_values) * 2
    return rng.normal(10, 1, n_values)


def make_file(folder: Path, n_chars: int, n_values: int, seed: int = 5) -> tuple[Path, Path]:
    """A wide CSV of skewed characteristics (lognormal, gamma, Weibull, normal) and its specs."""
    rng = np.random.default_rng(seed)
    cols = {}
    specs = []
    for i in range(n_chars):
        v = _values(rng, i, n_values)
        name = f"F{i:04d}"
        cols[f"{name} [mm]"] = np.round(v, 4)
        usl = float(np.quantile(v, 0.9995)) * (1.0 + 0.1 * (i % 7))
        specs.append((name, "", f"{usl:.4f}", "", "1.33", "mm"))
    df = pd.DataFrame(cols)
    data = folder / f"batch_{n_chars}x{n_values}.csv"
    df.to_csv(data, index=False)
    spec = folder / f"specs_{n_chars}.csv"
    spec.write_text("characteristic,lsl,usl,target,required_index,units\n" + "".join(",".join(s) + "\n" for s in specs))
    return data, spec


def make_long_file(folder: Path, n_chars: int, n_values: int, seed: int = 6) -> Path:
    """A long CSV (Subgroup, Characteristic, Units, Value), written a block at a time."""
    rng = np.random.default_rng(seed)
    path = folder / f"long_{n_chars}x{n_values}.csv"
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("Subgroup,Characteristic,Units,Value\n")
        for start in range(0, n_chars, 200):
            block = []
            for i in range(start, min(n_chars, start + 200)):
                v = np.round(_values(rng, i, n_values), 4)
                sub = np.arange(n_values) // 5
                block.append(pd.DataFrame({"Subgroup": [f"S{s:05d}" for s in sub], "Characteristic": f"L{i:05d}",
                                           "Units": "mm", "Value": v}))
            pd.concat(block).to_csv(fh, header=False, index=False)
    return path


def _naive_one(path: Path, column: str) -> None:
    from benchmarks.__main__ import naive_analyze

    x = pd.read_csv(path, usecols=[column])[column].to_numpy(dtype=float)
    naive_analyze(x)


def _summary_bytes(res) -> bytes:
    from qcnorm.data import export_csv

    return export_csv(res.frame())


def _timed(label: str, fn, ref: bytes | None, n_chars: int):
    t0 = time.perf_counter()
    res = fn()
    dt = time.perf_counter() - t0
    b = _summary_bytes(res)
    same = "" if ref is None else ("  summary identical" if b == ref else "  SUMMARY DIFFERS")
    print(f"  {label:<44} {dt:7.2f} s  ({1000 * dt / n_chars:5.1f} ms per characteristic; {res.n_failed} failed){same}")
    return dt, b


def bench_engines(n_chars: int, n_values: int, engines: list[str], folder: Path, old_route: bool = True) -> dict:
    from qcnorm.batch import run_batch

    data, spec = make_file(folder, n_chars, n_values)
    jobs = os.cpu_count() or 1
    out = {}
    print(f"\n== batch: {n_chars} characteristics x {n_values} values, wide CSV "
          f"({data.stat().st_size / 1e6:.1f} MB), {jobs} cores, load {os.getloadavg()[0]:.1f}")
    ref = None
    if old_route:
        out["previous"], ref = _timed("previous route (whole-file reader, 1 per task)",
                                      lambda: run_batch(data, specs=spec, jobs=jobs, engine="pool", read_mode="whole",
                                                        task_size=1), None, n_chars)
    for eng in engines:
        j = 1 if eng == "local" else jobs
        out[eng], b = _timed(f"engine={eng} jobs={j}", lambda: run_batch(data, specs=spec, jobs=j, engine=eng),
                             ref, n_chars)
        ref = ref or b
    return out


def profile_parts(n_chars: int, n_values: int, folder: Path) -> None:
    """Where the time of a batch goes outside analyze(), one part at a time (one process)."""
    from qcnorm.analysis import analyze
    from qcnorm.batch import run_batch
    from qcnorm.batch_input import materialize, plan_items
    from qcnorm.data import export_xlsx, read_all

    data, spec = make_file(folder, n_chars, n_values)
    print(f"\n== where the time goes ({n_chars} x {n_values}, one process)")
    t0 = time.perf_counter()
    read_all(data)
    print(f"  careful reader over the whole file (previous route)  {time.perf_counter() - t0:6.2f} s")
    t0 = time.perf_counter()
    plan = plan_items(data, read_mode="chunked")
    items = [materialize(it) for _, it in plan.items]
    print(f"  chunked reader (layout from first rows, pandas)     {time.perf_counter() - t0:6.2f} s")
    import pickle

    t0 = time.perf_counter()
    for it in items:
        pickle.loads(pickle.dumps(it))
    print(f"  pickling the values out and back, all items         {time.perf_counter() - t0:6.2f} s")
    t0 = time.perf_counter()
    for it in items[: min(200, len(items))]:
        analyze(it.values, usl=float(np.max(it.values)) * 1.2)
    per = (time.perf_counter() - t0) / min(200, len(items))
    print(f"  analyze() per characteristic                        {1000 * per:6.2f} ms "
          f"(-> {per * n_chars:.2f} s CPU for all)")
    res = run_batch(data, specs=spec, jobs=1, engine="local")
    t0 = time.perf_counter()
    df = res.frame()
    print(f"  summary table (BatchResult.frame)                   {time.perf_counter() - t0:6.2f} s")
    t0 = time.perf_counter()
    export_xlsx(df, sheet_name="summary")
    print(f"  XLSX of the summary                                 {time.perf_counter() - t0:6.2f} s")


_MEMORY_CHILD = r"""
import os, resource, sys, threading, time, json
import psutil
from qcnorm.batch import run_batch
me = psutil.Process()
peak = [0]
stop = threading.Event()
def sample():
    while not stop.is_set():
        try:
            tot = me.memory_info().rss + sum(c.memory_info().rss for c in me.children(recursive=True))
        except psutil.Error:
            continue
        peak[0] = max(peak[0], tot)
        time.sleep(0.05)
th = threading.Thread(target=sample, daemon=True); th.start()
t0 = time.perf_counter()
res = run_batch(sys.argv[1], subgroup="Subgroup", jobs=int(sys.argv[2]), engine=sys.argv[3], read_mode=sys.argv[4])
dt = time.perf_counter() - t0
stop.set(); th.join()
print(json.dumps({"seconds": dt, "rows": len(res.rows), "failed": res.n_failed,
                  "driver_peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                  "worker_peak_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024,
                  "tree_peak_mb": peak[0] / 2**20}))
"""


def bench_memory(n_chars: int, n_values: int, folder: Path, modes: list[str]) -> None:
    import json

    path = make_long_file(folder, n_chars, n_values)
    mb = path.stat().st_size / 1e6
    print(f"\n== peak memory: batch over a long CSV of {n_chars} characteristics x {n_values} values "
          f"({n_chars * n_values:,} rows, {mb:.0f} MB), pool of {os.cpu_count()} workers")
    env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1]))
    for mode in modes:
        out = subprocess.run([sys.executable, "-c", _MEMORY_CHILD, str(path), str(os.cpu_count() or 1), "pool", mode],
                             capture_output=True, text=True, env=env)
        if out.returncode:
            print(f"  read_mode={mode}: failed: {out.stderr.strip().splitlines()[-1:]}")
            continue
        r = json.loads(out.stdout.strip().splitlines()[-1])
        print(f"  read_mode={mode:<8} {r['seconds']:7.1f} s; peak RSS: driver {r['driver_peak_mb']:6.0f} MB, "
              f"largest worker {r['worker_peak_mb']:5.0f} MB, driver + workers {r['tree_peak_mb']:6.0f} MB "
              f"({r['rows']} rows, {r['failed']} failed)")


def bench_naive(n_chars: int, n_values: int, folder: Path, qcnorm_seconds: float | None) -> None:
    data, _ = make_file(folder, n_chars, n_values)
    sample = min(20, n_chars)
    cols = [f"F{i:04d} [mm]" for i in range(sample)]
    t0 = time.perf_counter()
    for c in cols:
        _naive_one(data, c)
    per = (time.perf_counter() - t0) / sample
    tail = "" if not qcnorm_seconds else f"; the fastest qcnorm route is {per * n_chars / qcnorm_seconds:.1f}x faster"
    print(f"  naive route (pandas read per column + scipy generic fits), 1 process: {per * 1000:.1f} ms per "
          f"characteristic -> about {per * n_chars:.1f} s for all ({sample} timed and scaled){tail}")


def bench_batch(n_chars: int = 1000, n_values: int = 500, engines: tuple[str, ...] = ("local", "pool", "dask"),
                small: int = 20, memory_chars: int = 0, naive: bool = True, profile: bool = True,
                memory_modes: tuple[str, ...] = ("chunked", "whole")) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        if small:
            bench_engines(small, n_values, list(engines), folder, old_route=True)
        big = bench_engines(n_chars, n_values, list(engines), folder, old_route=True)
        if naive:
            bench_naive(n_chars, n_values, folder, min(big.values()))
        if profile:
            profile_parts(n_chars, n_values, folder)
        if memory_chars:
            bench_memory(memory_chars, n_values, folder, list(memory_modes))


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m benchmarks.batch_bench")
    p.add_argument("--chars", type=int, default=1000)
    p.add_argument("--values", type=int, default=500)
    p.add_argument("--small", type=int, default=20, help="characteristics in the small job (0 = skip)")
    p.add_argument("--engines", default="local,pool,dask")
    p.add_argument("--memory-chars", type=int, default=10_000, help="0 = skip the memory run")
    p.add_argument("--memory-modes", default="chunked,whole")
    p.add_argument("--skip-naive", action="store_true")
    p.add_argument("--skip-profile", action="store_true")
    a = p.parse_args(argv)
    bench_batch(a.chars, a.values, tuple(a.engines.split(",")), a.small, a.memory_chars, not a.skip_naive,
                not a.skip_profile, tuple(a.memory_modes.split(",")))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
