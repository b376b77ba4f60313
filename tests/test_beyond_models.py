"""Parts beyond the limits: the expected ppm comes from the characteristic's declared
distribution (issue 16), and the JSON says which model gave it.

Reference values come from scipy.stats fits (a reference library used only in tests):
``scipy.stats.lognorm.fit(v, floc=0)`` and ``scipy.stats.weibull_min.fit(v, floc=0)`` (maximum
likelihood with the origin at 0), ``scipy.stats.boxcox(v)`` (the maximum-likelihood lambda),
and their tail probabilities ``cdf(lower)`` and ``sf(upper)`` at the limits.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats as sps

from verify.data import load_measurements
from verify.evaluate import evaluate
from verify.report.json_result import result_dict
from verify.spec import load_spec
from verify.stats.limits import beyond_limits

RNG = np.random.default_rng(1602)
SKEWED = RNG.lognormal(mean=-3.0, sigma=0.45, size=80)  # a gate vestige, mm: bounded at zero
WEIBULL = 0.05 * RNG.weibull(1.8, size=80)  # a runout, mm


def test_lognormal_ppm_is_scipys_lognormal_tail():
    r = beyond_limits(SKEWED, lower=0.01, upper=0.15, distribution="lognormal")
    s, _loc, scale = sps.lognorm.fit(SKEWED, floc=0)
    below = 1e6 * sps.lognorm.cdf(0.01, s, 0, scale)
    above = 1e6 * sps.lognorm.sf(0.15, s, 0, scale)
    assert r.model == "lognormal" and r.note is None
    assert r.expected_ppm_below == pytest.approx(below, rel=1e-6)
    assert r.expected_ppm_above == pytest.approx(above, rel=1e-6)
    assert r.expected_ppm == pytest.approx(below + above, rel=1e-6)
    # the normal model of the same skewed parts misstates the upper tail (why issue 16 exists)
    normal = beyond_limits(SKEWED, lower=0.01, upper=0.15)
    assert normal.model == "normal"
    assert not math.isclose(normal.expected_ppm_above, above, rel_tol=0.5)


def test_weibull_ppm_is_scipys_weibull_tail():
    r = beyond_limits(WEIBULL, lower=None, upper=0.12, distribution="weibull")
    c, _loc, scale = sps.weibull_min.fit(WEIBULL, floc=0)
    above = 1e6 * sps.weibull_min.sf(0.12, c, 0, scale)
    assert r.model == "weibull"
    assert r.expected_ppm_below == 0.0  # no lower limit: nothing below (no fake lower limit)
    # scipy's optimiser stops near 1e-5 relative in the shape: the tail agrees to ~1e-4
    assert r.expected_ppm_above == pytest.approx(above, rel=1e-3)
    assert r.expected_ppm == r.expected_ppm_above


def test_box_cox_ppm_is_the_normal_tail_of_scipys_transform():
    y, lam = sps.boxcox(SKEWED)
    r = beyond_limits(SKEWED, lower=None, upper=0.15, distribution="box-cox")
    mu, sd = y.mean(), y.std()  # normal MLE of the transformed values (divisor n)
    above = 1e6 * sps.norm.sf(sps.boxcox(np.array([0.15]), lmbda=lam)[0], mu, sd)
    assert r.model == "box-cox"
    assert r.expected_ppm_above == pytest.approx(above, rel=1e-4)


def test_any_has_no_model_and_says_why():
    r = beyond_limits(SKEWED, lower=None, upper=0.05, distribution="any")
    assert (r.model, r.expected_ppm, r.expected_ppm_above) == ("any", None, None)
    assert r.above == int(np.count_nonzero(SKEWED > 0.05))  # the parts seen still count
    assert "no model" in r.note


def test_a_fit_that_cannot_be_made_gives_no_ppm_with_the_reason():
    r = beyond_limits([-0.01, 0.02, 0.03, 0.05], lower=None, upper=0.15,
                      distribution="lognormal")
    assert r.expected_ppm is None and r.model == "lognormal"
    assert r.note.startswith("no lognormal fit: ") and "above 0" in r.note


def test_normal_stays_the_default_and_an_unknown_name_is_refused():
    v = [24.1, 25.0, 26.8, 25.2]
    assert beyond_limits(v, lower=24.5, upper=26.5) == beyond_limits(
        v, lower=24.5, upper=26.5, distribution="normal")
    with pytest.raises(ValueError, match="distribution"):
        beyond_limits(v, lower=24.5, upper=26.5, distribution="gamma")


SPEC = """\
format: verify/1
title: skewed vestige
data:
  file: d.csv
  lot: lot
  process: process
  old: old
  new: new
characteristics:
  - name: vestige
    unit: mm
    limits: [null, 0.15]
    side: upper
    distribution: {dist}
    checks:
      spread: {{}}
"""


def _spec(tmp_path, dist):
    rows = [f"L{i // 20},old,{v:.5f}" for i, v in enumerate(SKEWED[:40])]
    rows += [f"N{i // 20},new,{v:.5f}" for i, v in enumerate(SKEWED[40:])]
    (tmp_path / "d.csv").write_text("lot,process,vestige\n" + "\n".join(rows) + "\n",
                                    encoding="utf-8")
    (tmp_path / "s.yaml").write_text(SPEC.format(dist=dist), encoding="utf-8")
    return load_spec(tmp_path / "s.yaml")


@pytest.mark.parametrize("dist", ["normal", "lognormal", "weibull", "box-cox", "any"])
def test_each_process_is_modelled_by_the_declared_distribution_in_the_json(tmp_path, dist):
    spec = _spec(tmp_path, dist)
    ev = evaluate(spec, load_measurements(spec))
    j = result_dict(ev)
    # the model and note fields are declared in verify/result.schema.json
    jsonschema = pytest.importorskip("jsonschema", reason="jsonschema (test extra) missing")
    schema = json.loads((Path(__file__).parents[1] / "verify" / "result.schema.json")
                        .read_text(encoding="utf-8"))
    assert not list(jsonschema.Draft202012Validator(schema).iter_errors(
        json.loads(json.dumps(j))))
    for proc, values in (("old", SKEWED[:40]), ("new", SKEWED[40:])):
        b = j["characteristics"][0]["processes"][proc]["beyond_limits"]
        want = beyond_limits(np.round(values, 5), lower=None, upper=0.15, distribution=dist)
        assert b["model"] == dist
        assert b["expected_ppm"] == want.expected_ppm
        assert (b["note"] is None) == (dist != "any")
    json.dumps(j)
