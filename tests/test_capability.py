"""Capability indices, intervals, ppm and verdict (qcnorm.capability).

Each expected value names its outside source. The transform objects here are tiny
stand-ins (identity and natural log) so that these tests do not depend on
qcnorm.transforms.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

import numpy as np
import pytest
from scipy import stats

from qcnorm.capability import Capability, Interval, capability
from qcnorm.errors import ConfigError, DataError, QcnormError


@dataclass(frozen=True)
class _Domain:
    low: float
    high: float
    low_open: bool
    high_open: bool


class IdentityStandIn:
    name = "none"
    domain = _Domain(-math.inf, math.inf, True, True)

    def transform(self, v):
        return np.asarray(v, dtype=float)

    def in_domain(self, v):
        return np.isfinite(np.asarray(v, dtype=float))


class LogStandIn:
    name = "log"
    domain = _Domain(0.0, math.inf, True, True)

    def transform(self, v):
        return np.log(np.asarray(v, dtype=float))

    def in_domain(self, v):
        v = np.asarray(v, dtype=float)
        return (v > 0) & np.isfinite(v)


IDENT = IdentityStandIn()
LOG = LogStandIn()


def _cap(n=50, mean=0.0, sw=1.0, so=None, x=None, transform=IDENT, **kw):
    x = np.linspace(mean - 1, mean + 1, n) if x is None else np.asarray(x, float)
    y = transform.transform(x)
    so = sw if so is None else so
    return capability(x, y, transform, center=mean, sigma_within=sw, sigma_overall=so, **kw)


# ---------------------------------------------------------------- published examples


def test_nist_handbook_cp_cpk():
    # NIST/SEMATECH e-Handbook 6.1.6 (from memory): USL 20, LSL 8, mean 16, s 2
    # -> Cp 1.00, Cpk 0.667.
    c = _cap(mean=16.0, sw=2.0, lsl=8.0, usl=20.0)
    assert c.cp == pytest.approx(1.00, abs=1e-12)
    assert c.cpk == pytest.approx(0.667, abs=5e-4)
    assert c.cpu == pytest.approx(0.667, abs=5e-4)
    assert c.cpl == pytest.approx(1.333, abs=5e-4)
    assert c.pp == pytest.approx(1.00) and c.ppk == pytest.approx(0.667, abs=5e-4)


def test_montgomery_cp_chi_square_interval():
    # Montgomery, Introduction to SQC (from memory): USL 62, LSL 38, n 20, s 1.75
    # -> Cp 2.29, 95 % interval 1.57 to 3.01 (chi-square quantiles 8.907 and 32.852).
    c = _cap(n=20, mean=50.0, sw=1.75, lsl=38.0, usl=62.0)
    assert c.cp == pytest.approx(2.29, abs=5e-3)
    assert c.cp_ci.low == pytest.approx(1.57, abs=6e-3)  # 1.565 from the unrounded Cp
    # The book carries Cp rounded to 2.29 into the interval; do the same.
    c = _cap(n=20, mean=50.0, sw=24.0 / (6 * 2.29), lsl=38.0, usl=62.0)
    assert c.cp_ci.low == pytest.approx(1.57, abs=5e-3)
    assert c.cp_ci.high == pytest.approx(3.01, abs=5e-3)
    assert c.cp_ci.method == "chi-square"
    # the same quantiles as tabled (Montgomery, from memory) and as scipy gives them
    assert c.cp * math.sqrt(8.907 / 19) == pytest.approx(c.cp_ci.low, rel=1e-4)
    assert c.cp * math.sqrt(32.852 / 19) == pytest.approx(c.cp_ci.high, rel=1e-4)
    # Pp uses the same chi-square interval with the overall sigma
    assert c.pp_ci.low == pytest.approx(c.cp_ci.low)


def test_bissell_cpk_interval_montgomery():
    # Bissell (1990) approximation, worked in Montgomery (from memory):
    # Cpk 1.33, n 20 -> 95 % interval 0.88 to 1.78.
    c = _cap(n=20, mean=0.0, sw=1.0, lsl=-10.0, usl=3.99)
    assert c.cpk == pytest.approx(1.33, abs=1e-12)
    assert c.cpk_ci.low == pytest.approx(0.88, abs=5e-3)
    assert c.cpk_ci.high == pytest.approx(1.78, abs=5e-3)
    assert c.cpk_ci.method.startswith("Bissell")
    # one-sided lower bound uses z_0.95 = 1.645 (standard normal table, common practice)
    se = math.sqrt(1 / (9 * 20) + 1.33**2 / (2 * 19))
    assert c.cpk_lower_bound == pytest.approx(1.33 - 1.6449 * se, abs=1e-3)
    assert c.cpk_ci.low < c.cpk_lower_bound < c.cpk


@pytest.mark.parametrize("cp,ppm", [(1.00, 2700.0), (1.33, 66.0), (1.67, 0.54)])
def test_centred_process_ppm(cp, ppm):
    # Centred normal process: ppm = 2e6 * Phi(-3 Cp) (common practice):
    # Cp 1.00 -> 2700, 1.33 -> 66, 1.67 -> 0.54.
    c = _cap(mean=0.0, sw=1.0, lsl=-3 * cp, usl=3 * cp)
    assert c.cp == pytest.approx(cp)
    assert c.ppm_within == pytest.approx(ppm, rel=0.01)
    assert c.ppm_within == pytest.approx(2e6 * stats.norm.sf(3 * cp), rel=1e-10)  # scipy
    assert c.ppm_within_below == pytest.approx(c.ppm_within_above, rel=1e-12)


def test_ppm_far_tail_not_rounded_to_zero():
    # scipy.stats.norm.logsf as the second opinion: Cpk 12 is ~1e-119 ppm, not 0.
    c = _cap(mean=0.0, sw=1.0, usl=36.0)
    ref = math.exp(stats.norm.logsf(36.0) + math.log(1e6))
    assert c.ppm_within > 0
    assert c.ppm_within == pytest.approx(ref, rel=1e-9)


def test_ppm_within_vs_overall_use_their_sigmas():
    # scipy.stats.norm as reference for both sigmas.
    c = _cap(mean=10.0, sw=1.0, so=1.5, lsl=6.0, usl=13.0)
    w = 1e6 * (stats.norm.cdf(6, 10, 1.0) + stats.norm.sf(13, 10, 1.0))
    o = 1e6 * (stats.norm.cdf(6, 10, 1.5) + stats.norm.sf(13, 10, 1.5))
    assert c.ppm_within == pytest.approx(w, rel=1e-10)
    assert c.ppm_overall == pytest.approx(o, rel=1e-10)
    assert c.ppm_overall_below == pytest.approx(1e6 * stats.norm.cdf(6, 10, 1.5), rel=1e-10)


def test_observed_ppm_counts_raw_values():
    # Counting (common practice): 3 of 1000 above USL, 1 below LSL -> 3000 + 1000 ppm.
    x = np.full(1000, 5.0)
    x[:3] = 11.0
    x[3] = -1.0
    x[4] = 10.0  # on the limit is in specification
    c = capability(x, x, IDENT, lsl=0.0, usl=10.0, center=5.0, sigma_within=1.0, sigma_overall=1.0)
    assert c.ppm_observed_above == pytest.approx(3000.0)
    assert c.ppm_observed_below == pytest.approx(1000.0)
    assert c.ppm_observed == pytest.approx(4000.0)


def test_cpm_definition():
    # Cpm = (USL - LSL) / (6 sqrt(sigma^2 + (mu - T)^2)) (Montgomery, from memory):
    # NIST numbers with T = 14: 12 / (6 sqrt(8)) = 0.7071; at mu = T, Cpm equals Pp.
    c = _cap(mean=16.0, sw=2.0, lsl=8.0, usl=20.0, target=14.0)
    assert c.cpm == pytest.approx(1 / math.sqrt(2), rel=1e-12)
    c2 = _cap(mean=14.0, sw=1.0, so=2.0, lsl=8.0, usl=20.0, target=14.0)
    assert c2.cpm == pytest.approx(c2.pp)
    assert _cap(mean=16.0, sw=2.0, lsl=8.0, usl=20.0).cpm is None


def test_one_sided_spec():
    # One-sided specs (NIST 6.1.6, from memory): Cpk is CPU (or CPL); Cp undefined.
    c = _cap(mean=16.0, sw=2.0, usl=20.0)
    assert c.cp is None and c.pp is None and c.cpm is None
    assert c.cpk == pytest.approx((20 - 16) / 6)
    assert c.cpl is None
    assert c.cp_ci is None and c.cpk_ci is not None
    assert c.ppm_within_below is None
    assert c.ppm_within == pytest.approx(1e6 * stats.norm.sf(2.0), rel=1e-10)


# ------------------------------------------------------------------ under a transform


def test_log_transform_matches_lognormal_ppm():
    # Specs mapped through ln: ppm equals the lognormal tail areas (scipy.stats.lognorm).
    rng = np.random.default_rng(4)
    x = rng.lognormal(1.0, 0.4, 200)
    y = np.log(x)
    c = capability(x, y, LOG, lsl=0.8, usl=12.0, center=1.0, sigma_within=0.4, sigma_overall=0.45)
    d = stats.lognorm(s=0.45, scale=math.exp(1.0))
    assert c.ppm_overall == pytest.approx(1e6 * (d.cdf(0.8) + d.sf(12.0)), rel=1e-9)
    assert c.ppu == pytest.approx((math.log(12.0) - 1.0) / (3 * 0.45))
    assert c.lsl == 0.8 and c.lsl_transformed == pytest.approx(math.log(0.8))


def test_lsl_zero_under_log_cannot_fail():
    # ln 0 = -inf: nothing can fall below 0, so only the upper side is assessed
    # (fact of the log transform's domain).
    x = np.array([1.0, 2.0, 3.0, 2.5, 1.5])
    c = capability(x, np.log(x), LOG, lsl=0.0, usl=20.0, center=0.7, sigma_within=0.3, sigma_overall=0.35)
    assert c.lsl == 0.0  # the user's value is kept
    assert c.lsl_transformed is None and not c.lower_assessed and c.upper_assessed
    assert c.cp is None and c.pp is None and c.cpl is None
    assert c.cpk == pytest.approx(c.cpu) and c.cpu == pytest.approx((math.log(20) - 0.7) / 0.9)
    assert any("no product can fall below it" in s and "only the upper side" in s for s in c.notes)
    assert c.ppm_within_below is None


def test_usl_below_domain_is_refused():
    x = np.array([1.0, 2.0, 3.0])
    with pytest.raises(ConfigError, match="USL"):
        capability(x, np.log(x), LOG, usl=-1.0, center=0.5, sigma_within=0.3, sigma_overall=0.3)


def test_no_specs_not_assessed():
    c = _cap(mean=0.0)
    assert c.verdict == "not_assessed" and c.cpk is None and c.ppm_within is None
    assert c.ppm_observed is None
    assert "not assessed" in c.verdict_text


# ------------------------------------------------------------------------- verdict


def test_verdict_meets_marginal_fails():
    # Verdict rules of DESIGN.md on the conservative min(Cpk, Ppk) and its Bissell bound.
    meets = _cap(n=500, mean=0.0, sw=1.0, so=1.0, lsl=-6.0, usl=6.0)  # Cpk 2.0
    assert meets.verdict == "meets" and meets.verdict_lower_bound >= 1.33
    marginal = _cap(n=20, mean=0.0, sw=1.0, so=1.0, lsl=-4.2, usl=4.2)  # Cpk 1.4
    assert marginal.verdict == "marginal"
    assert marginal.verdict_point >= 1.33 > marginal.verdict_lower_bound
    assert "point estimate only" in marginal.verdict_text
    fails = _cap(n=500, mean=0.0, sw=1.0, so=1.2, lsl=-3.0, usl=3.0)
    assert fails.verdict == "fails"
    # the smaller of Cpk and Ppk is used (Ppk here: overall sigma larger)
    assert fails.verdict_index_name == "Ppk" and fails.verdict_point == pytest.approx(fails.ppk)
    assert f"{fails.ppk:.2f}" in fails.verdict_text


def test_unstable_process_says_so_first():
    c = _cap(n=500, mean=0.0, sw=1.0, lsl=-6.0, usl=6.0, stable=False)
    assert c.verdict_text.startswith("Capability is not meaningful while the process is not in statistical control")


def test_confidence_setting_changes_interval():
    # Higher confidence, wider interval (chi-square quantiles, scipy.stats.chi2).
    a = _cap(n=30, mean=0.0, lsl=-4, usl=4, confidence=0.90)
    b = _cap(n=30, mean=0.0, lsl=-4, usl=4, confidence=0.99)
    assert b.cp_ci.low < a.cp_ci.low < a.cp < a.cp_ci.high < b.cp_ci.high
    assert a.cp_ci.low == pytest.approx(a.cp * math.sqrt(stats.chi2.ppf(0.05, 29) / 29))


# -------------------------------------------------------------------- output shape


def test_summary_and_json():
    c = _cap(mean=16.0, sw=2.0, lsl=8.0, usl=20.0, target=15.0)
    df = c.summary()
    assert list(df.columns) == ["index", "estimate", "low", "high"]
    row = df.set_index("index").loc["Cp"]
    assert row["estimate"] == pytest.approx(1.0) and row["low"] == pytest.approx(c.cp_ci.low)
    d = c.to_dict()
    json.dumps(d)
    assert d["cpk_ci"]["method"].startswith("Bissell") and isinstance(d["notes"], list)
    assert isinstance(c, Capability) and isinstance(c.cp_ci, Interval)


# ---------------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    "kw,err,words",
    [
        ({"lsl": 10.0, "usl": 10.0}, ConfigError, "below the USL"),
        ({"lsl": 12.0, "usl": 10.0}, ConfigError, "swapped"),
        ({"lsl": 0.0, "usl": 10.0, "target": 11.0}, ConfigError, "target"),
        ({"usl": 10.0, "sigma_within": 0.0}, ConfigError, "sigma_within"),
        ({"usl": 10.0, "confidence": 1.5}, ConfigError, "confidence"),
        ({"usl": 10.0, "sigma_overall": -1.0}, ConfigError, "sigma_overall.*gauge resolution"),
        ({"usl": 10.0, "required_index": 0.0}, ConfigError, "required_index.*such as 1.33"),
    ],
)
def test_bad_settings(kw, err, words):
    base = {"center": 5.0, "sigma_within": 1.0, "sigma_overall": 1.0}
    base.update(kw)
    x = np.arange(10.0)
    with pytest.raises(err, match=words):
        capability(x, x, IDENT, **base)


def test_bad_data():
    with pytest.raises(DataError, match="at least 2"):
        capability([1.0], [1.0], IDENT, usl=3, center=1, sigma_within=1, sigma_overall=1)
    with pytest.raises(DataError, match="positions 2"):
        capability([1.0, np.nan, 2.0], [1.0, 1.0, 2.0], IDENT, usl=3, center=1, sigma_within=1, sigma_overall=1)
    with pytest.raises(DataError, match="3 values"):
        capability([1.0, 2.0, 3.0], [1.0, 2.0], IDENT, usl=3, center=1, sigma_within=1, sigma_overall=1)
    with pytest.raises(QcnormError):
        capability([1.0, 2.0], [1.0, 2.0], IDENT, usl="abc", center=1, sigma_within=1, sigma_overall=1)


def test_only_lsl_zero_under_log_leaves_nothing_to_assess():
    # Fact of the log domain: with LSL 0 the only given side cannot fail.
    x = np.array([1.0, 2.0, 3.0])
    c = capability(x, np.log(x), LOG, lsl=0.0, center=0.6, sigma_within=0.4, sigma_overall=0.4)
    assert c.verdict == "not_assessed" and c.cpk is None
    assert any("that side cannot fail" in s for s in c.notes)
