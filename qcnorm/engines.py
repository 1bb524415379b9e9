"""Where the batch's per-characteristic work runs: this process, a process pool, or Dask.

Engines (names of our own):

``local``  every task in this process, one after the other;
``pool``   a :class:`concurrent.futures.ProcessPoolExecutor` on this machine;
``dask``   a Dask distributed cluster: the one at ``scheduler`` (an address such as
           ``tcp://10.0.0.5:8786``), or a ``LocalCluster`` on 127.0.0.1 started for the
           run (no dashboard) when no address is given.

Work goes out in *tasks*, each a list of characteristics, so a worker gets many
characteristics per round trip. At most a few tasks per worker are in flight, so the
driver never holds the whole plant. Results come back as tasks complete (progress is
reported then), in any order; the caller puts them in order.

A task whose worker is lost is run again by the Dask scheduler (``retries=`` for
tasks that raise); a task that fails on every try is reported as failed rows, one per
characteristic, and never stops the others.
"""

from __future__ import annotations

import logging
import os
import uuid
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from .errors import ConfigError

__all__ = ["ENGINES", "SCHEDULER_ENV", "choose_engine", "run_tasks", "DASK_RETRIES"]

ENGINES = ("auto", "local", "pool", "dask")
SCHEDULER_ENV = "QCNORM_SCHEDULER"
DASK_RETRIES = 3
_IN_FLIGHT_PER_WORKER = 3


def choose_engine(engine: str | None, scheduler: str | None, jobs: int, n_tasks: int) -> str:
    """The engine to use: as asked, else Dask when an address is given, else local/pool.

    The default without an address is the process pool: on the project's 2-core machine a
    LocalCluster was slower for small and large jobs alike (its start and the workers'
    own imports cost seconds; a forked pool inherits the imports), see benchmarks/README.md.
    """
    engine = (engine or "auto").lower()
    if engine not in ENGINES:
        raise ConfigError(f"engine must be one of {', '.join(ENGINES)}. Got {engine!r} instead.")
    if engine != "auto":
        return engine
    if scheduler:
        return "dask"
    return "local" if jobs <= 1 or n_tasks <= 1 else "pool"


def scheduler_address(scheduler: str | None) -> str | None:
    """The scheduler address given, else ``QCNORM_SCHEDULER``, else None."""
    if scheduler:
        return scheduler.strip()
    env = os.environ.get(SCHEDULER_ENV, "").strip()
    return env or None


def run_tasks(func: Callable[[Any], Any], tasks: Iterable[Any], *, engine: str, jobs: int,
              scheduler: str | None = None, on_fail: Callable[[Any, BaseException], Any],
              info: dict | None = None) -> Iterator[tuple[Any, Any]]:
    """Run ``func(task)`` for every task; yield ``(task, result)`` as tasks complete.

    ``on_fail(task, exc)`` gives the result of a task that could not be run at all
    (its worker kept dying, or it could not be sent). ``info["workers"]``, when a dict is
    given, receives the number of workers that ran the tasks (on a Dask cluster, the
    cluster's own count, not this machine's cores).
    """
    if info is not None:
        info["workers"] = 1 if engine == "local" else max(1, jobs)
    if engine == "local":
        for t in tasks:
            try:
                yield t, func(t)
            except Exception as exc:  # noqa: BLE001 - reported as failed rows
                yield t, on_fail(t, exc)
        return
    if engine == "pool":
        yield from _run_pool(func, tasks, jobs, on_fail)
        return
    if engine == "dask":
        yield from _run_dask(func, tasks, jobs, scheduler, on_fail, info=info)
        return
    raise ConfigError(f"engine must be one of {', '.join(ENGINES[1:])}. Got {engine!r} instead.")


def _run_pool(func, tasks, jobs, on_fail):
    """The process pool. A worker that dies breaks the whole pool (that is how
    ProcessPoolExecutor works): its tasks and the ones not yet sent become failed rows."""
    it = iter(tasks)
    limit = max(1, jobs) * _IN_FLIGHT_PER_WORKER
    with ProcessPoolExecutor(max_workers=max(1, jobs)) as ex:
        pending: dict[Any, Any] = {}
        broken: BaseException | None = None

        def send(t) -> None:
            nonlocal broken
            if broken is None:
                try:
                    pending[ex.submit(func, t)] = t
                    return
                except BrokenProcessPool as exc:
                    broken = exc
            failed.append(t)

        failed: list[Any] = []
        for t in it:
            send(t)
            if len(pending) >= limit:
                break
        while pending or failed:
            while failed:
                t = failed.pop(0)
                yield t, on_fail(t, broken)
            if not pending:
                break
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for f in done:
                t = pending.pop(f)
                try:
                    res = f.result()
                except Exception as exc:  # noqa: BLE001
                    if isinstance(exc, BrokenProcessPool):
                        broken = broken or exc
                    res = on_fail(t, exc)
                yield t, res
                nxt = next(it, None)
                if nxt is not None:
                    send(nxt)
        for t in it:  # left over after the pool broke
            yield t, on_fail(t, broken)


def local_cluster(jobs: int):
    """A LocalCluster on 127.0.0.1: one single-threaded worker process per job, no dashboard."""
    from distributed import LocalCluster

    # dashboard_address=None turns the dashboard off; the scheduler still serves its small
    # health/metrics HTTP routes, which we keep on 127.0.0.1 and a free port (not 8787).
    return LocalCluster(n_workers=max(1, jobs), threads_per_worker=1, processes=True, host="127.0.0.1",
                        dashboard_address=None, scheduler_port=0, silence_logs=logging.ERROR,
                        scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"})


def _run_dask(func, tasks, jobs, scheduler, on_fail, *, client=None, info: dict | None = None):
    try:
        from distributed import Client, as_completed
    except ImportError:  # pragma: no cover - dask is in requirements.txt
        raise ConfigError("The dask engine needs dask[distributed]: pip install 'dask[distributed]'.") from None
    cluster = None
    own = client is None
    if own:
        if scheduler:
            try:
                client = Client(scheduler, timeout="20s")
            except (OSError, TimeoutError) as exc:
                raise ConfigError(
                    f"Cannot reach the Dask scheduler at {scheduler} ({exc}). Check the address (tcp://host:8786), "
                    f"that 'dask scheduler' runs there, or unset {SCHEDULER_ENV} to run on this machine.") from None
        else:
            cluster = local_cluster(jobs)
            client = Client(cluster)
    try:
        yield from _dask_loop(client, as_completed, func, tasks, on_fail, info)
    finally:
        if own:
            client.close()
            if cluster is not None:
                cluster.close()


def _dask_loop(client, as_completed, func, tasks, on_fail, info: dict | None = None):
    n_workers = max(1, len(client.scheduler_info().get("workers", {})))
    if info is not None:
        info["workers"] = n_workers
    limit = n_workers * _IN_FLIGHT_PER_WORKER
    run = uuid.uuid4().hex[:8]
    it = iter(tasks)
    pending: dict[str, Any] = {}
    ac = as_completed()
    count = 0

    def submit(t) -> None:
        nonlocal count
        key = f"qcnorm-batch-{run}-{count}"
        count += 1
        f = client.submit(func, t, key=key, pure=False, retries=DASK_RETRIES)
        pending[f.key] = t
        ac.add(f)

    for t in it:
        submit(t)
        if len(pending) >= limit:
            break
    for f in ac:
        t = pending.pop(f.key)
        try:
            res = f.result()
        except Exception as exc:  # noqa: BLE001 - a task that failed on every try
            res = on_fail(t, exc)
        f.release()
        yield t, res
        nxt = next(it, None)
        if nxt is not None:
            submit(nxt)
