"""Many characteristics at once (issue 7): ranking, specs, bad columns, parallel = serial."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from conftest import ROOT
from qcnorm import analyze, read_measurements
from qcnorm.data import read_all
from qcnorm.batch import read_specs, run_batch
from qcnorm.errors import ReadError

DEMO = ROOT / "demo_data"


def _wide(tmp_path, n_chars=12, n=80, seed=1):
    rng = np.random.default_rng(seed)
    cols = {f"C{i:03d} [mm]": rng.lognormal(0, 0.2 + 0.05 * i, n).round(4) for i in range(n_chars)}
    df = pd.DataFrame(cols)
    df.insert(0, "Part", [f"P{i}" for i in range(n)])
    df["Broken [mm]"] = ["n/a"] * n  # a column that looks like a characteristic but holds no numbers
    df.loc[: n // 2, "Broken [mm]"] = "1.0"
    df.loc[: n // 2, "Broken [mm]"] = [f"{v:.3f}" for v in rng.normal(1, 0.1, n // 2 + 1)]
    df.loc[n // 2 + 1 :, "Broken [mm]"] = "1.000"
    df["Constant [mm]"] = "2.5"
    p = tmp_path / "many.csv"
    df.to_csv(p, index=False)
    specs = tmp_path / "specs.csv"
    specs.write_text("characteristic,lsl,usl,target,required_index,units\n"
                     + "".join(f"C{i:03d},,{3.0 + 0.2 * i},,1.33,mm\n" for i in range(n_chars)))
    return p, specs


def test_every_characteristic_has_a_row_and_bad_ones_do_not_stop_others(tmp_path):
    p, specs = _wide(tmp_path)
    res = run_batch(p, specs=specs, jobs=1)
    names = [r.characteristic for r in res.rows]
    assert len(names) == 14 and "Constant" in names
    const = next(r for r in res.rows if r.characteristic == "Constant")
    assert const.error and "equal" in const.error and const.rank == 1  # failures listed first
    assert res.n_failed == 1
    assert all(r.error is None for r in res.rows if r.characteristic.startswith("C0"))


def test_batch_row_equals_single_analysis(tmp_path):
    """The batch summary is the same analyze() a single-characteristic run gives."""
    p, specs = _wide(tmp_path)
    res = run_batch(p, specs=specs, jobs=1)
    row = next(r for r in res.rows if r.characteristic == "C003")
    m = read_measurements(p, column="C003 [mm]")
    a = analyze(m, usl=3.6)
    assert row.n == a.n and row.transform == a.transform.name
    assert row.ppk == pytest.approx(a.capability.ppk, rel=1e-12)
    assert row.cpk_lower == pytest.approx(a.capability.cpk_lower_bound, rel=1e-12)
    assert row.verdict == a.capability.verdict


def test_ranked_worst_first_by_lower_bound(tmp_path):
    p, specs = _wide(tmp_path)
    res = run_batch(p, specs=specs, jobs=1)
    ok = [r for r in res.rows if r.error is None and r.verdict != "not_assessed"]
    lows = [min(v for v in (r.cpk_lower, r.ppk_lower) if v is not None) for r in ok]
    assert lows == sorted(lows)
    assert [r.rank for r in res.rows] == list(range(1, len(res.rows) + 1))


def test_parallel_equals_serial(tmp_path):
    p, specs = _wide(tmp_path, n_chars=6)
    a = run_batch(p, specs=specs, jobs=1).frame()
    b = run_batch(p, specs=specs, jobs=2).frame()
    pd.testing.assert_frame_equal(a, b)


def test_demo_long_and_wide_give_same_summary():
    wide = run_batch(DEMO / "line3_spool_wide.csv", subgroup="Subgroup", specs=DEMO / "line3_spool_specs.csv")
    long = run_batch(DEMO / "line3_spool_long.csv", subgroup="Subgroup", specs=DEMO / "line3_spool_specs.csv")
    fw, fl = wide.frame(), long.frame()
    assert list(fw["characteristic"]) == list(fl["characteristic"])
    np.testing.assert_allclose(fw["ppk"].astype(float), fl["ppk"].astype(float), rtol=1e-12)


def test_specs_file_errors_are_clear(tmp_path):
    bad = tmp_path / "s.csv"
    bad.write_text("name,lsl\nRa,1\n")
    with pytest.raises(ReadError, match="characteristic"):
        read_specs(bad)
    bad.write_text("characteristic,lsl,usl\nRa,2,1\n")
    with pytest.raises(ReadError, match="below"):
        read_specs(bad)
    bad.write_text("characteristic,lsl,usl\nRa,abc,1\n")
    with pytest.raises(ReadError, match="row 2"):
        read_specs(bad)


def test_pdf_per_characteristic(tmp_path):
    pytest.importorskip("fpdf")
    res = run_batch(DEMO / "line3_spool_last_shift.csv", specs=DEMO / "line3_spool_specs.csv",
                    pdf_dir=tmp_path / "pdf", jobs=1)
    pdfs = sorted((tmp_path / "pdf").glob("*.pdf"))
    assert len(pdfs) == len([r for r in res.rows if r.error is None])
    assert all(p.read_bytes().startswith(b"%PDF") for p in pdfs)


# ---------------------------------------------------------------- reading in chunks (issue 13)
# The reference for every check below is the whole-file careful reader (read_mode="whole"),
# the route the batch has always used: reading in pieces must not change a figure.


def _messy_wide(tmp_path):
    """A wide file whose columns need the careful reader: censored, blank, text and comma cells."""
    rng = np.random.default_rng(7)
    n = 60
    df = pd.DataFrame({"Lot": [f"L{i // 5}" for i in range(n)]})
    for i in range(4):
        df[f"Clean{i} [µm]"] = [f"{v:.4f}" for v in rng.lognormal(0, 0.3, n)]
    msg = [f"{v:.3f}" for v in rng.gamma(3, 1, n)]
    msg[5], msg[17], msg[30] = "<0.05", "", "n/a"
    df["Messy [mg]"] = msg
    df["Spaced [mm]"] = [f" {v:.3f} " for v in rng.normal(10, 1, n)]
    df.loc[40, "Lot"] = ""  # a row without a subgroup label
    p = tmp_path / "messy_wide.csv"
    df.to_csv(p, index=False)
    return p


@pytest.mark.parametrize("chunk_cells", [1, 50, 5_000_000])
def test_chunked_wide_equals_whole_file(tmp_path, chunk_cells):
    p, specs = _wide(tmp_path)
    whole = run_batch(p, specs=specs, read_mode="whole").frame()
    chunked = run_batch(p, specs=specs, read_mode="chunked", chunk_cells=chunk_cells).frame()
    pd.testing.assert_frame_equal(whole, chunked)


def test_chunked_messy_wide_equals_whole_file(tmp_path):
    p = _messy_wide(tmp_path)
    for sub in (None, "Lot"):
        whole = run_batch(p, subgroup=sub, read_mode="whole").frame()
        chunked = run_batch(p, subgroup=sub, read_mode="chunked", chunk_cells=60).frame()
        pd.testing.assert_frame_equal(whole, chunked)
        assert set(whole["characteristic"]) >= {"Messy", "Spaced", "Clean0"}


@pytest.mark.parametrize("chunk_rows", [7, 97, 200_000])
def test_chunked_long_equals_whole_file(chunk_rows):
    kw = dict(subgroup="Subgroup", specs=DEMO / "line3_spool_specs.csv")
    whole = run_batch(DEMO / "line3_spool_long.csv", read_mode="whole", **kw).frame()
    chunked = run_batch(DEMO / "line3_spool_long.csv", read_mode="chunked", chunk_rows=chunk_rows, **kw).frame()
    pd.testing.assert_frame_equal(whole, chunked)
    assert whole["units"].notna().all()  # units from the Units column, on both routes


def test_long_file_is_spilled_one_file_per_characteristic(tmp_path):
    """The chunked route keeps one characteristic in memory at a time: rows go to scratch
    files, one per characteristic, removed when the plan is closed."""
    from qcnorm.batch_input import ReadyItem, plan_items

    plan = plan_items(DEMO / "line3_spool_long.csv", subgroup="Subgroup", read_mode="chunked", chunk_rows=50)
    try:
        assert plan.total == 6
        scratch = Path(plan.scratch)
        assert len(list(scratch.glob("*.csv"))) == 6
        first_header, first = next(plan.items)
        ref = read_all(DEMO / "line3_spool_long.csv", subgroup="Subgroup")[first_header]
        assert isinstance(first, ReadyItem) and first.units == ref.units == "µm"
        np.testing.assert_array_equal(first.values, ref.values)
        np.testing.assert_array_equal(first.subgroups, ref.subgroups)
        assert len(list(scratch.glob("*.csv"))) == 5  # read and removed one at a time
    finally:
        plan.close()
    assert not scratch.exists()


def test_folder_of_files_equals_one_file(tmp_path):
    """A folder of long files (one per week, say) gives the summary of the same rows in one file."""
    src = DEMO / "line3_spool_long.csv"
    lines = src.read_text(encoding="utf-8").splitlines(keepends=True)
    folder = tmp_path / "weeks"
    folder.mkdir()
    body = lines[1:]
    for k in range(3):
        part = body[k * len(body) // 3:(k + 1) * len(body) // 3]
        (folder / f"week{k}.csv").write_text(lines[0] + "".join(part), encoding="utf-8")
    kw = dict(subgroup="Subgroup", specs=DEMO / "line3_spool_specs.csv")
    one = run_batch(src, read_mode="whole", **kw).frame()
    many = run_batch(folder, chunk_rows=100, **kw).frame()
    pd.testing.assert_frame_equal(one, many)


def test_folder_with_mixed_layouts_is_refused_clearly(tmp_path):
    folder = tmp_path / "mixed"
    folder.mkdir()
    (folder / "a.csv").write_text("Characteristic,Value\n" + "".join(f"Ra,{1 + i / 10}\nRz,{2 + i / 7}\n"
                                                                    for i in range(20)))
    (folder / "b.csv").write_text("Characteristic,Units,Value\n" + "".join(f"Ra,um,{1 + i / 9}\n"
                                                                          for i in range(20)))
    with pytest.raises(ReadError, match="differ from an earlier file"):
        run_batch(folder)
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(ReadError, match="no .csv"):
        run_batch(empty)


def test_task_size_and_engines_do_not_change_the_summary(tmp_path):
    from qcnorm.data import export_csv

    p, specs = _wide(tmp_path, n_chars=9)
    ref = export_csv(run_batch(p, specs=specs, engine="local").frame())
    for kw in ({"engine": "local", "task_size": 4}, {"engine": "pool", "jobs": 2, "task_size": 1},
               {"engine": "pool", "jobs": 2, "task_size": 5}):
        assert export_csv(run_batch(p, specs=specs, **kw).frame()) == ref, kw


def test_progress_reaches_total_with_every_engine(tmp_path):
    p, specs = _wide(tmp_path, n_chars=5)
    for kw in ({"engine": "local"}, {"engine": "pool", "jobs": 2}):
        seen = []
        res = run_batch(p, specs=specs, progress=lambda d, t: seen.append((d, t)), **kw)
        total = len(res.rows)
        assert seen[0] == (0, total) and seen[-1] == (total, total)
        assert [d for d, _ in seen] == sorted(d for d, _ in seen)


def test_bad_options_are_clear(tmp_path):
    from qcnorm.errors import ConfigError, QcnormError

    p, specs = _wide(tmp_path, n_chars=2)
    with pytest.raises(ConfigError, match="engine must be one of"):
        run_batch(p, engine="cloud")
    with pytest.raises(ConfigError, match="chunk_rows"):
        run_batch(p, chunk_rows=0)
    with pytest.raises(QcnormError, match="read_mode"):
        run_batch(p, read_mode="fast")
    with pytest.raises(QcnormError, match="delimited text file"):
        run_batch(pd.DataFrame({"a": [1.0, 2.0]}), read_mode="chunked")


def test_chunked_keeps_a_sparse_characteristic(tmp_path):
    """A characteristic measured every 40th part (blank in the first rows) is still found."""
    rng = np.random.default_rng(11)
    n = 400
    df = pd.DataFrame({f"D{i} [mm]": rng.gamma(4, 1, n).round(3) for i in range(3)})
    sparse = np.full(n, "", dtype=object)
    sparse[39::40] = [f"{v:.3f}" for v in rng.lognormal(0, 0.3, len(sparse[39::40]))]
    df["Rare [mm]"] = sparse
    p = tmp_path / "sparse.csv"
    df.to_csv(p, index=False)
    whole = run_batch(p, read_mode="whole").frame()
    chunked = run_batch(p, read_mode="chunked").frame()
    assert "Rare" in set(whole["characteristic"])
    pd.testing.assert_frame_equal(whole, chunked)


def test_cli_folder_chunked_equals_file_whole(tmp_path, capsys):
    from qcnorm.cli import main

    folder = tmp_path / "days"
    folder.mkdir()
    lines = (DEMO / "line3_spool_long.csv").read_text(encoding="utf-8").splitlines(keepends=True)
    (folder / "a.csv").write_text(lines[0] + "".join(lines[1:2000]), encoding="utf-8")
    (folder / "b.csv").write_text(lines[0] + "".join(lines[2000:]), encoding="utf-8")
    one, many = tmp_path / "one.csv", tmp_path / "many.csv"
    assert main(["batch", str(DEMO / "line3_spool_long.csv"), "--subgroup", "Subgroup", "--engine", "local",
                 "--read", "whole", "--out", str(one)]) == 0
    assert main(["batch", str(folder), "--subgroup", "Subgroup", "--engine", "pool", "--jobs", "2",
                 "--chunk-rows", "300", "--out", str(many)]) == 0
    assert many.read_bytes() == one.read_bytes()
    assert main(["batch", str(folder), "--chunk-rows", "0"]) == 2
    assert "--chunk-rows" in capsys.readouterr().err


from qcnorm.batch import _analyse_task as _ANALYSE_TASK  # noqa: E402


def _die_on_k003(task):
    """A worker that dies (as with a crash in a C library) on the task holding C003."""
    import os as _os

    if any(name == "C003" for _, name, _, _ in task[0]):
        _os._exit(3)
    return _ANALYSE_TASK(task)


def test_pool_worker_crash_gives_error_rows_not_a_stopped_run(tmp_path, monkeypatch):
    import qcnorm.batch as batch_mod

    p, specs = _wide(tmp_path, n_chars=8)
    monkeypatch.setattr(batch_mod, "_analyse_task", _die_on_k003, raising=True)
    res = run_batch(p, specs=specs, engine="pool", jobs=2, task_size=1)
    monkeypatch.undo()
    ref = {r.characteristic: r for r in run_batch(p, specs=specs, engine="local").rows}
    assert len(res.rows) == 10  # every characteristic has a row
    bad = next(r for r in res.rows if r.characteristic == "C003")
    assert bad.error and "worker" in bad.error
    # a dead worker breaks a process pool: other rows may fail with it, but none is lost and
    # the ones that ran are the same as in this process
    done = [r for r in res.rows if not r.error]
    assert all(r.ppk == ref[r.characteristic].ppk for r in done)
    assert all("worker" in r.error for r in res.rows if r.error and r.characteristic not in ("Constant",))
