"""The batch on a Dask cluster (issue 13): a LocalCluster on 127.0.0.1, no dashboard.

The reference for every summary here is the same batch run by the process pool (and in
this process): whichever engine ran it, the summary file must be the same bytes.
"""

from __future__ import annotations

import os
import signal
import urllib.error
import urllib.request

import numpy as np
import pandas as pd
import pytest

from qcnorm.batch import run_batch
from qcnorm.cli import main
from qcnorm.data import export_csv

distributed = pytest.importorskip("distributed")


@pytest.fixture(scope="module")
def cluster():
    from qcnorm.engines import local_cluster

    c = local_cluster(2)
    try:
        yield c
    finally:
        c.close()


def _file(tmp_path, n_chars=10, n=120, seed=3):
    rng = np.random.default_rng(seed)
    cols = {f"K{i:02d} [mm]": rng.lognormal(0, 0.15 + 0.05 * i, n).round(4) for i in range(n_chars)}
    df = pd.DataFrame(cols)
    df.insert(0, "Subgroup", [f"S{i // 4:03d}" for i in range(n)])
    df["Flat [mm]"] = "3.25"  # cannot be analysed: every value equal
    p = tmp_path / "plant.csv"
    df.to_csv(p, index=False)
    specs = tmp_path / "specs.csv"
    specs.write_text("characteristic,lsl,usl,target,required_index,units\n"
                     + "".join(f"K{i:02d},0.2,{2.5 + 0.1 * i},,1.33,mm\n" for i in range(n_chars)))
    return p, specs


def test_cluster_binds_localhost_without_dashboard(cluster):
    assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
    assert all(w.address.startswith("tcp://127.0.0.1:") for w in cluster.workers.values())
    http = cluster.scheduler.http_server  # health routes only; no dashboard pages
    bound = [sock.getsockname() for sock in http._sockets.values()]
    assert bound and all(host == "127.0.0.1" and port != 8787 for host, port, *_ in bound)
    port = bound[0][1]
    with urllib.request.urlopen(f"http://127.0.0.1:{port}/health", timeout=10) as r:
        assert r.status == 200  # the server answers ...
    with pytest.raises(urllib.error.HTTPError) as no_page:
        urllib.request.urlopen(f"http://127.0.0.1:{port}/status", timeout=10)
    assert no_page.value.code == 404  # ... but has no dashboard page


def test_summary_bytes_identical_pool_and_local_cluster(tmp_path, cluster):
    p, specs = _file(tmp_path)
    pool = run_batch(p, specs=specs, subgroup="Subgroup", jobs=2, engine="pool")
    # jobs=7 asks for more workers than the cluster has: the result reports the cluster's 2
    dask = run_batch(p, specs=specs, subgroup="Subgroup", scheduler=cluster.scheduler_address, task_size=3, jobs=7)
    local = run_batch(p, specs=specs, subgroup="Subgroup", engine="local")
    assert dask.engine == "dask" and pool.engine == "pool"
    assert (dask.jobs, pool.jobs, local.jobs) == (len(cluster.workers), 2, 1)
    assert export_csv(dask.frame()) == export_csv(pool.frame()) == export_csv(local.frame())
    flat = next(r for r in dask.rows if r.characteristic == "Flat")
    assert flat.error and flat.rank == 1  # the bad one is reported, the others analysed
    assert sum(r.error is None for r in dask.rows) == 10


def test_scheduler_from_environment_and_cli_files_identical(tmp_path, cluster, monkeypatch, capsys):
    p, specs = _file(tmp_path, n_chars=4)
    out_pool, out_dask = tmp_path / "pool.csv", tmp_path / "dask.csv"
    assert main(["batch", str(p), "--specs", str(specs), "--engine", "pool", "--jobs", "2",
                 "--out", str(out_pool)]) == 0
    monkeypatch.setenv("QCNORM_SCHEDULER", cluster.scheduler_address)
    assert main(["batch", str(p), "--specs", str(specs), "--out", str(out_dask)]) == 0
    assert "(dask)" in capsys.readouterr().out
    assert out_dask.read_bytes() == out_pool.read_bytes()


def test_unreachable_scheduler_is_bad_input_not_a_traceback(tmp_path, capsys):
    p, specs = _file(tmp_path, n_chars=2)
    # port 9 on 127.0.0.1 (discard) has no scheduler: refused at once
    rc = main(["batch", str(p), "--scheduler", "tcp://127.0.0.1:9"])
    err = capsys.readouterr().err
    assert rc == 2 and "Cannot reach the Dask scheduler" in err and "Traceback" not in err


def test_worker_lost_mid_run_is_retried_and_run_completes(tmp_path, cluster):
    """Kill one worker process (SIGKILL) once the first results are in: its tasks go to the
    other worker (and the restarted one), and the summary is the same as the pool's."""
    p, specs = _file(tmp_path, n_chars=16, n=400)
    ref = export_csv(run_batch(p, specs=specs, subgroup="Subgroup", jobs=2, engine="pool").frame())
    client = distributed.Client(cluster.scheduler_address)
    try:
        pids_before = set(client.run(os.getpid).values())
        killed: list[int] = []

        def kill_one(done: int, total: int) -> None:
            if done and not killed:
                pid = sorted(pids_before)[0]
                os.kill(pid, signal.SIGKILL)
                killed.append(pid)

        res = run_batch(p, specs=specs, subgroup="Subgroup", scheduler=cluster.scheduler_address,
                        task_size=1, progress=kill_one)
        assert killed, "no worker was killed: the test did not test anything"
        assert len(res.rows) == 17 and res.n_failed == 1  # only 'Flat', which cannot be analysed
        assert export_csv(res.frame()) == ref
        client.wait_for_workers(2, timeout=300)  # the nanny restarts the killed worker (slow on a busy machine)
        pids_after = set(client.run(os.getpid).values())
        assert killed[0] not in pids_after
    finally:
        client.close()
