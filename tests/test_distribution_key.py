"""The `distribution:` key end to end: capability by the percentile method, conformance on
the fitted model or from distribution-free limits, the fit in the JSON and the diagnostics,
and the spec errors. Expected numbers are recomputed here with scipy.stats."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from verify.data import load_measurements
from verify.errors import SpecError
from verify.evaluate import evaluate
from verify.report.json_result import result_dict
from verify.report.layout import measurement_layout
from verify.report.recheck import recheck_rows
from verify.spec import load_spec


def _spec(tmp_path, new, *, distribution, checks, limits="[null, 0.1]", old=None, extra=""):
    rng = np.random.default_rng(3)
    old = rng.lognormal(math.log(0.02), 0.5, 40) if old is None else old
    rows = [f"O{i % 4},old,{float(v)!r}" for i, v in enumerate(old)]
    rows += [f"N{i % 4},new,{float(v)!r}" for i, v in enumerate(new)]
    (tmp_path / "d.csv").write_text("lot,process,x\n" + "\n".join(rows) + "\n",
                                    encoding="utf-8")
    text = ("format: verify/1\ntitle: flatness\ndata:\n  file: d.csv\n  lot: lot\n"
            "  process: process\n  old: old\n  new: new\n" + extra +
            f"characteristics:\n  - name: x\n    unit: mm\n    limits: {limits}\n"
            f"    distribution: {distribution}\n    checks:\n"
            + "".join(f"      {c}\n" for c in checks))
    p = tmp_path / "s.yaml"
    p.write_text(text, encoding="utf-8")
    return load_spec(p)


def _eval(spec, final=False):
    ev = evaluate(spec, load_measurements(spec), final=final)
    return ev, {k.check: k for k in ev.characteristic("x").checks}


def _skewed(n, seed, median=0.02, sdlog=0.6):
    return np.random.default_rng(seed).lognormal(math.log(median), sdlog, n)


def test_zero_bounded_lognormal_capability_by_the_percentile_method(tmp_path):
    new = _skewed(50, 1)
    spec = _spec(tmp_path, new, distribution="lognormal",
                 checks=["capability: {min: 1.33}", "conformance: {}"])
    ev, k = _eval(spec)
    cap = k["capability"]
    s, _, scale = stats.lognorm.fit(new, floc=0)
    xm = stats.lognorm.ppf(0.5, s, 0, scale)
    xh = stats.lognorm.ppf(0.99865, s, 0, scale)
    assert cap.estimate == pytest.approx((0.1 - xm) / (xh - xm), rel=1e-5)
    assert cap.details.ppl is None  # no lower limit, and none invented
    assert cap.details.expected_ppm_above == pytest.approx(
        1e6 * stats.lognorm.sf(0.1, s, 0, scale), rel=1e-4)
    assert "percentile" in cap.method
    conf = k["conformance"]
    assert conf.ci_low is None and conf.details.side == "upper"
    logs = np.log(new)
    k1 = stats.nct.ppf(0.95, 49, stats.norm.ppf(0.99) * math.sqrt(50)) / math.sqrt(50)
    assert conf.ci_high == pytest.approx(math.exp(logs.mean() + k1 * logs.std(ddof=1)),
                                         rel=1e-9)
    j = result_dict(ev)["characteristics"][0]
    assert j["distribution"]["name"] == "lognormal"
    assert j["distribution"]["parameters"]["sdlog"] == pytest.approx(s, rel=1e-6)
    assert "gof_pvalue" in j["distribution"]
    fits = [g for g in ev.characteristic("x").diagnostics if g.name == "distribution fit"]
    assert len(fits) == 1 and "Shapiro-Wilk on ln x" in fits[0].method


def test_normal_theory_overstates_a_skewed_characteristic(tmp_path):
    # the same data judged normal and lognormal: the normal Cpk is the larger
    new = _skewed(60, 2, sdlog=0.7)
    _, normal = _eval(_spec(tmp_path, new, distribution="normal",
                            checks=["capability: {min: 1.0}"]))
    _, logn = _eval(_spec(tmp_path, new, distribution="lognormal",
                          checks=["capability: {min: 1.0}"]))
    assert normal["capability"].estimate > logn["capability"].estimate


def test_weibull_and_box_cox_run(tmp_path):
    new = _skewed(40, 4)
    for name in ("weibull", "box-cox"):
        ev, k = _eval(_spec(tmp_path, new, distribution=name,
                            checks=["capability: {min: 1.0}", "conformance: {}"]))
        assert k["capability"].details.distribution == name
        assert k["conformance"].outcome in ("PASS", "HOLD")
        assert k["conformance"].ci_high is not None


def test_any_uses_order_statistics_and_waits_for_enough_parts(tmp_path):
    conf = "conformance: {coverage: 0.95, confidence: 0.95}"
    few = _skewed(40, 5)
    ev, k = _eval(_spec(tmp_path, few, distribution="any", checks=[conf]))
    assert k["conformance"].outcome == "PENDING"
    assert "need at least 59 parts, there are 40" in k["conformance"].reason
    ev, k = _eval(_spec(tmp_path, few, distribution="any", checks=[conf]), final=True)
    assert k["conformance"].outcome == "HOLD"
    enough = _skewed(59, 6)
    ev, k = _eval(_spec(tmp_path, enough, distribution="any", checks=[conf]))
    assert k["conformance"].ci_high == pytest.approx(enough.max())
    assert k["conformance"].outcome == "PASS" and k["conformance"].details.n_required == 59


def test_any_leaves_capability_out_by_default(tmp_path):
    (tmp_path / "d.csv").write_text("lot,process,x\nA,old,1\nB,new,2\n", encoding="utf-8")
    p = tmp_path / "s.yaml"
    p.write_text("format: verify/1\ntitle: t\ndata:\n  file: d.csv\n  lot: lot\n"
                 "  process: process\n  old: old\n  new: new\ncharacteristics:\n"
                 "  - name: x\n    unit: mm\n    limits: [0, 5]\n    distribution: any\n",
                 encoding="utf-8")
    assert load_spec(p).characteristics[0].checks.capability is None


@pytest.mark.parametrize(("distribution", "checks", "message"), [
    ("any", ["capability: {}"], "distribution: any has none"),
    ("lognormal", ["capability: {judge: lower_bound}"], "normal model only"),
    ("weibull", ["capability: {subgroup: lot}"], "remove subgroup"),
    ("gamma", ["capability: {}"], "distribution"),
])
def test_spec_errors(tmp_path, distribution, checks, message):
    with pytest.raises(SpecError, match=message):
        _spec(tmp_path, [0.01, 0.02], distribution=distribution, checks=checks)


def test_values_at_zero_make_a_fitted_model_hold_with_the_reason(tmp_path):
    new = np.concatenate([[0.0], _skewed(20, 7)])
    ev, k = _eval(_spec(tmp_path, new, distribution="lognormal",
                        checks=["capability: {}", "conformance: {}"]))
    assert k["capability"].outcome == "HOLD" and "above 0" in k["capability"].reason
    assert k["conformance"].outcome == "HOLD"


def test_recheck_rebuilds_lognormal_limits_and_percentile_indices(tmp_path):
    new = _skewed(30, 8)
    ev, k = _eval(_spec(tmp_path, new, distribution="lognormal",
                        checks=["capability: {}", "conformance: {}"]))
    rows = {r[0]: r for r in recheck_rows(ev, measurement_layout(ev)) if r}
    assert "GEOMEAN(" in rows["new: mean of ln x"][1]
    assert rows["upper tolerance limit"][1].startswith("=EXP(")
    assert rows["upper tolerance limit"][2] == pytest.approx(k["conformance"].ci_high)
    assert rows["Ppk (percentile)"][2] == pytest.approx(k["capability"].estimate)
