"""Many characteristics at once (issue 7): ranking, specs, bad columns, parallel = serial."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from conftest import ROOT
from qcnorm import analyze, read_measurements
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
