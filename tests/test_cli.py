"""The command line: the JSON contract, exit codes, and messy files (issue 3 and 4)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from conftest import ROOT
from qcnorm.caution import CAUTION
from qcnorm.cli import main

MESSY = ROOT / "tests" / "data" / "messy"
DEMO = ROOT / "demo_data"


def run_cli(*args: str, stdin: str | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "qcnorm", *args], capture_output=True, text=True,
                          input=stdin, cwd=ROOT, timeout=300)


def test_json_contract_keys_and_types(tmp_path):
    p = run_cli("analyze", str(DEMO / "line3_spool_wide.csv"), "--column", "Ra", "--subgroup", "Subgroup",
                "--usl", "1.6", "--json")
    assert p.returncode == 0, p.stderr
    d = json.loads(p.stdout)
    # Every key of the contract in issue 3 (add fields, never rename).
    for k in ("n", "excluded", "warnings", "transform", "normality", "control", "capability"):
        assert k in d
    assert set(d["transform"]) >= {"name", "params", "reason", "candidates"}
    assert d["transform"]["name"] in {"none", "log", "boxcox", "yeojohnson", "johnson_su", "johnson_sb", "johnson_sl"}
    for c in d["transform"]["candidates"]:
        assert set(c) >= {"name", "params", "aic", "ad_p_value"}
    for side in ("raw", "transformed"):
        assert set(d["normality"][side]) >= {"ad_statistic", "ad_p_value", "shapiro_w", "shapiro_p_value",
                                             "skewness", "excess_kurtosis"}
    c = d["control"]
    assert c["chart"] in {"individuals", "xbar_r", "xbar_s"}
    assert set(c["transformed"]) >= {"center", "ucl", "lcl", "sigma_within"}
    assert set(c["units"]) >= {"center", "ucl", "lcl"}
    assert set(c["dispersion"]) >= {"statistic", "center", "ucl", "lcl"}
    assert c["dispersion"]["statistic"] in {"moving_range", "range", "stdev"}
    for v in c["violations"]:
        assert set(v) >= {"rule", "index"}
    cap = d["capability"]
    assert set(cap) >= {"lsl", "usl", "target", "cp", "cpk", "pp", "ppk", "cpm", "cp_ci", "cpk_ci", "pp_ci",
                        "ppk_ci", "ppm_within", "ppm_overall", "ppm_observed", "verdict", "percentile"}
    assert set(cap["percentile"]) >= {"distribution", "pp", "ppk"}
    assert isinstance(d["n"], int) and d["n"] == 900
    assert cap["usl"] == 1.6 and cap["lsl"] is None and cap["cp"] is None  # one-sided: no Cp


def test_json_matches_reference_for_log_transform(tmp_path):
    """With --transform log and no subgroups the centre line in units is the geometric
    mean (scipy.stats.gmean, second opinion) and the transformed centre is mean(ln x)."""
    rng = np.random.default_rng(3)
    x = rng.lognormal(1.0, 0.4, 60)
    f = tmp_path / "v.csv"
    f.write_text("Value\n" + "\n".join(repr(float(v)) for v in x) + "\n")
    p = run_cli("analyze", str(f), "--column", "Value", "--transform", "log", "--json")
    assert p.returncode == 0, p.stderr
    d = json.loads(p.stdout)
    assert d["transform"]["name"] == "log"
    assert d["control"]["units"]["center"] == pytest.approx(stats.gmean(x), rel=1e-12)
    assert d["control"]["transformed"]["center"] == pytest.approx(np.mean(np.log(x)), rel=1e-12)
    # individuals chart: sigma = MRbar / d2(2), d2(2) = 1.128 (Montgomery App. VI table)
    mr = np.abs(np.diff(np.log(x))).mean()
    assert d["control"]["transformed"]["sigma_within"] == pytest.approx(mr / 1.128, rel=2e-3)


def test_nist_individuals_example_through_cli(tmp_path):
    """NIST e-Handbook 6.3.2 (from memory; REFERENCES.md): UCL 55.80, LCL 45.82."""
    f = tmp_path / "flow.csv"
    f.write_text("flow\n" + "\n".join(["49.6", "47.6", "49.9", "51.3", "47.8", "51.2", "52.6", "52.4", "53.6", "52.1"]))
    p = run_cli("analyze", str(f), "--transform", "none", "--chart", "individuals", "--json")
    assert p.returncode == 0, p.stderr
    u = json.loads(p.stdout)["control"]["units"]
    assert u["center"] == pytest.approx(50.81, abs=0.005)
    assert u["ucl"] == pytest.approx(55.80, abs=0.01)
    assert u["lcl"] == pytest.approx(45.82, abs=0.01)


def test_text_summary_has_caution_and_reason():
    p = run_cli("analyze", str(DEMO / "line3_spool_last_shift.csv"), "--column", "Ra", "--usl", "1.6")
    assert p.returncode == 0, p.stderr
    assert CAUTION in p.stdout
    assert "why:" in p.stdout and "Capability:" in p.stdout


@pytest.mark.parametrize("path", sorted(p.name for p in MESSY.iterdir() if p.suffix not in {".md", ".py"}))
def test_cli_on_every_messy_file_exits_0_or_2_without_traceback(path):
    p = run_cli("analyze", str(MESSY / path), "--json")
    assert p.returncode in (0, 2), (p.returncode, p.stderr)
    assert "Traceback" not in p.stderr
    if p.returncode == 2:
        assert p.stderr.startswith("qcnorm: ") and len(p.stderr.strip().splitlines()) == 1
    else:
        json.loads(p.stdout)


def test_cli_reports_excluded_rows():
    p = run_cli("analyze", str(MESSY / "non_numbers.csv"), "--transform", "none", "--json")
    # Only 3 numeric values: too few to analyse is bad input (exit 2) with a clear message,
    # or, if analysed, the excluded rows are listed. Either way nothing is silent.
    if p.returncode == 0:
        rows = {e["row"] for e in json.loads(p.stdout)["excluded"]}
        assert {3, 4, 5, 6, 7, 9} <= rows
    else:
        assert p.returncode == 2 and "value" in p.stderr.lower()


def test_cli_excluded_rows_listed_when_analysed(tmp_path):
    f = tmp_path / "m.csv"
    vals = [f"{v:.4f}" for v in np.random.default_rng(5).lognormal(0, 0.3, 40)]
    vals[4], vals[10] = "n/a", "<0.05"
    f.write_text("Ra [µm]\n" + "\n".join(vals) + "\n", encoding="utf-8")
    p = run_cli("analyze", str(f), "--json")
    assert p.returncode == 0, p.stderr
    d = json.loads(p.stdout)
    assert d["n"] == 38
    assert {e["row"] for e in d["excluded"]} == {6, 12}  # header is row 1
    assert any("censored" in w for w in d["warnings"])
    assert d["units"] == "µm"


@pytest.mark.parametrize(
    "args, needle",
    [
        (["analyze", "nope.csv"], "not found"),
        (["analyze", str(DEMO / "line3_spool_wide.csv")], "column"),
        (["analyze", str(DEMO / "line3_spool_wide.csv"), "--column", "Nope"], "Nope"),
        (["analyze", str(DEMO / "line3_spool_wide.csv"), "--column", "Ra", "--lsl", "2", "--usl", "1"], "below"),
        (["analyze", str(DEMO / "line3_spool_wide.csv"), "--column", "Ra", "--transform", "magic"], "invalid choice"),
    ],
)
def test_bad_input_exit_2_one_message(args, needle, capsys):
    rc = main(args)
    err = capsys.readouterr().err
    assert rc == 2
    assert needle.lower() in err.lower()
    assert "Traceback" not in err


def test_internal_error_exit_1_without_traceback(monkeypatch, capsys):
    import qcnorm.analysis

    def boom(*a, **k):
        raise RuntimeError("simulated bug")

    monkeypatch.setattr(qcnorm.analysis, "analyze", boom)
    rc = main(["analyze", str(DEMO / "line3_spool_last_shift.csv"), "--column", "Ra"])
    err = capsys.readouterr().err
    assert rc == 1 and "internal error" in err and "Traceback" not in err


def test_stdin_paste():
    text = "\n".join(f"{v:.3f}" for v in np.random.default_rng(9).lognormal(0, 0.3, 30)) + "\n"
    p = run_cli("analyze", "-", "--json", stdin=text)
    assert p.returncode == 0, p.stderr
    assert json.loads(p.stdout)["n"] == 30


def test_batch_command_writes_ranked_summary(tmp_path):
    out = tmp_path / "summary.csv"
    p = run_cli("batch", str(DEMO / "line3_spool_wide.csv"), "--specs", str(DEMO / "line3_spool_specs.csv"),
                "--subgroup", "Subgroup", "--out", str(out), "--jobs", "2")
    assert p.returncode == 0, p.stderr
    assert CAUTION in p.stdout
    import pandas as pd

    df = pd.read_csv(out, encoding="utf-8-sig")
    assert list(df["rank"]) == list(range(1, 7))
    assert set(df["characteristic"]) == {"Ra", "Flatness", "Residue", "Hardness", "Coating", "Bore"}


def test_too_few_values_message_names_the_rows_left_out(capsys):
    rc = main(["analyze", str(MESSY / "censored.csv")])
    err = capsys.readouterr().err
    assert rc == 2 and "Only 3 usable value(s)" in err and "row 3: censored" in err


def test_messages_use_cli_flags_not_python_keywords(capsys):
    rc = main(["analyze", str(MESSY / "long_format.csv")])
    err = capsys.readouterr().err
    assert rc == 2 and "--characteristic" in err and "characteristic=" not in err


def test_case1_model_range_in_json_and_text(tmp_path):
    """Issue 10, case 1 through the CLI: gamma(1.5) recorded to 0.1, n = 300, USL 8. The true
    fraction above 8 is scipy.stats.gamma.sf(8, 1.5) ≈ 1,130 ppm, so the verdict is never
    'meets', and the JSON and the text show the range across the disagreeing models."""
    x = np.round(np.random.default_rng(4).gamma(1.5, 1.0, 300), 1)
    f = tmp_path / "case1.csv"
    f.write_text("thickness\n" + "\n".join(f"{v:.1f}" for v in x) + "\n")
    p = run_cli("analyze", str(f), "--column", "thickness", "--usl", "8", "--json")
    assert p.returncode == 0, p.stderr
    cap = json.loads(p.stdout)["capability"]
    mr = cap["model_range"]
    assert cap["verdict"] != "meets"
    assert mr["ppm_max"] > 1e6 * stats.gamma.sf(8.0, 1.5) / 3 and mr["ppm_min"] < 100
    assert isinstance(mr["verdict_basis"], str) and mr["verdict_basis"]
    assert {m["route"] for m in mr["models"]} == {"transform", "percentile"}
    assert all(isinstance(m["adequate"], bool) and m["reason"] for m in mr["models"])
    t = run_cli("analyze", str(f), "--column", "thickness", "--usl", "8")
    assert t.returncode == 0, t.stderr
    assert "across models:" in t.stdout and "disagree" in t.stdout


def _lambda_sample_csv(tmp_path) -> tuple[Path, np.ndarray]:
    # 25 gamma(1.5) values whose Box–Cox ML λ is 0.275 with a 95 % interval of about −0.04 to 0.63
    # (holds both 0 and 0.5; 0.5 is the nearer): the case of issue 10.
    x = np.random.default_rng(3).gamma(1.5, 1.0, 300)
    x = x[x >= 0.05][:25]
    f = tmp_path / "lam.csv"
    f.write_text("Value\n" + "\n".join(repr(float(v)) for v in x) + "\n")
    return f, x


def test_exact_lambda_switch_round_trips_through_json(tmp_path, capsys):
    f, x = _lambda_sample_csv(tmp_path)
    mle = stats.boxcox_normmax(x, method="mle")  # reference: scipy
    _, _, ci = stats.boxcox(x, alpha=0.05)  # reference: scipy's likelihood-ratio interval
    out = {}
    for flag in ((), ("--exact-lambda",)):
        assert main(["analyze", str(f), "--column", "Value", "--transform", "boxcox", "--json", *flag]) == 0
        out[flag] = json.loads(capsys.readouterr().out)
    rounded, exact = out[()], out[("--exact-lambda",)]
    for d in (rounded, exact):
        p = d["transform"]["params"]
        assert p["lambda_mle"] == pytest.approx(mle, abs=2e-5)
        assert (p["lambda_ci_low"], p["lambda_ci_high"]) == pytest.approx(ci, abs=1e-4)
    assert rounded["settings"]["round_lambda"] is True and rounded["transform"]["params"]["lambda"] == 0.5
    assert "λ = 0.5 used (rounded from the maximum-likelihood estimate 0.275" in rounded["transform"]["reason"]
    assert exact["settings"]["round_lambda"] is False
    assert exact["transform"]["params"]["lambda"] == exact["transform"]["params"]["lambda_mle"]
    assert "not rounded: rounding to a convenient value was switched off" in exact["transform"]["reason"]
    # The JSON parameters rebuild the same transform (a frozen baseline stores exactly these).
    from qcnorm.transforms import transform_from_params

    for d in (rounded, exact):
        back = transform_from_params("boxcox", d["transform"]["params"])
        assert back.params_ == pytest.approx(d["transform"]["params"], abs=1e-12)
        assert back.describe() == d["transform"]["description"]


def test_zeros_switch_reaches_the_json(tmp_path, capsys):
    # gamma(1.5) recorded to 0.1 with two 0.0 readings (issue 10, case 1)
    x = np.round(np.random.default_rng(0).gamma(1.5, 1.0, 300), 1)
    f = tmp_path / "z.csv"
    f.write_text("Value\n" + "\n".join(f"{v:.1f}" for v in x) + "\n")
    got = {}
    for how in ("censor", "exclude"):
        assert main(["analyze", str(f), "--column", "Value", "--usl", "8", "--json", "--zeros", how]) == 0
        got[how] = json.loads(capsys.readouterr().out)
    assert got["censor"]["transform"]["zero_handling"]["method"] == "censored"
    assert got["censor"]["settings"]["zeros"] == "censor"
    assert got["exclude"]["transform"]["zero_handling"]["method"] == "excluded"
    ex = {c["name"]: c for c in got["exclude"]["transform"]["candidates"]}
    assert "not applicable" in ex["log"]["error"] and "zeros='censor'" in ex["log"]["error"]
    assert main(["analyze", str(f), "--column", "Value", "--zeros", "drop"]) == 2
