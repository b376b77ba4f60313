"""Every test fits the structure of the data (issue 11), through the whole engine.

Sources: the paired spread test is Pitman (1939, Biometrika 31:9-12) and Morgan (1939,
Biometrika 31:13-19): with pairs, var(new) = var(old) exactly when the differences and sums are
uncorrelated, so the F-test (which assumes independent samples) is the wrong test. Holm (1979)
and Bonferroni adjust the p-values of a family of tests; the family is the set of checks that
HOLD on significance. Brown and Forsythe (1974) test spread by a t-test on absolute deviations
from the medians; its estimate and interval are those of that t-test. Bissell (1990) gives the
lower bound of Cpk / Ppk. Expected p-values are recomputed with scipy (an outside library).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats

from verify.data import load_measurements
from verify.errors import SpecError
from verify.evaluate import evaluate
from verify.report.json_result import result_dict
from verify.spec import load_spec

HEAD = ("format: verify/1\ntitle: structure case\ndata:\n  file: d.csv\n  lot: lot\n"
        "  process: process\n  old: old\n  new: new\n")


def _load(tmp_path, rows, body, header="lot,process,pair,x"):
    (tmp_path / "d.csv").write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    p = tmp_path / "s.yaml"
    p.write_text(HEAD + body, encoding="utf-8")
    return load_spec(p)


def _run(tmp_path, rows, body, **kw):
    spec = _load(tmp_path, rows, body)
    return evaluate(spec, load_measurements(spec), **kw)


def _check(ev, name, check):
    c = ev.characteristic(name)
    return next(r for r in c.checks if r.check == check)


# --- 1. paired structure decides the spread test --------------------------------------------


def _split_pairs(seed=11, n=30):
    """The issue's case: 30 split pairs, new = 1.15 x old + a little noise."""
    rng = np.random.default_rng(seed)
    old = rng.normal(50.0, 2.0, n)
    new = 1.15 * old - 7.5 + rng.normal(0.0, 0.15, n)
    rows = [f"L{i % 3},old,P{i},{v:.5f}" for i, v in enumerate(old)]
    rows += [f"L{i % 3},new,P{i},{v:.5f}" for i, v in enumerate(new)]
    return old, new, rows


@pytest.mark.parametrize("shift", ["shift: {design: welch}", None])
def test_declared_pairs_decide_the_spread_test_whatever_the_shift_design(tmp_path, shift):
    old, new, rows = _split_pairs()
    old, new = np.round(old, 5), np.round(new, 5)
    checks = "      spread:\n" + (f"      {shift}\n" if shift else "")
    ev = _run(tmp_path, rows, "  pair: pair\ncharacteristics:\n  - name: x\n    unit: mm\n"
              f"    checks:\n{checks}")
    sp = _check(ev, "x", "spread")
    # the F-test on these correlated samples sees nothing (the F p of about 0.2)
    f_p = stats.f.sf(np.var(new, ddof=1) / np.var(old, ddof=1), 29, 29)
    assert f_p > 0.05
    # Pitman-Morgan = the Pearson test of corr(d, s), one-sided (scipy, independent route)
    ref = stats.pearsonr(new - old, new + old, alternative="greater")
    assert "Pitman-Morgan" in sp.method and sp.design == "paired"
    assert sp.p_value == pytest.approx(ref.pvalue, rel=1e-6, abs=1e-300)
    assert sp.p_value < 1e-10 and sp.outcome == "HOLD"
    assert ev.characteristic("x").pairs == 30


def test_independent_design_opts_out_knowingly(tmp_path):
    old, new, rows = _split_pairs()
    ev = _run(tmp_path, rows, "  pair: pair\ncharacteristics:\n  - name: x\n    unit: mm\n"
              "    checks:\n      spread: {design: independent}\n")
    sp = _check(ev, "x", "spread")
    assert sp.method.startswith("F-test") and sp.design == "two-sample"
    assert "pairs ignored" in sp.reason and "design: independent" in sp.reason
    assert sp.outcome == "PASS"  # the F-test's verdict, chosen knowingly
    assert ev.characteristic("x").pairs is None  # the units are the parts again


def test_sufficiency_counts_pairs_for_a_paired_spread(tmp_path):
    rng = np.random.default_rng(4)
    old = rng.normal(50.0, 2.0, 12)
    new = 0.95 * old + 2.5 + rng.normal(0.0, 0.3, 12)  # no larger spread: nothing to HOLD on
    rows = [f"L{i % 3},old,P{i},{v:.5f}" for i, v in enumerate(old)]
    rows += [f"L{i % 3},new,P{i},{v:.5f}" for i, v in enumerate(new)]
    rows += [f"L{k},new,Q{k},50.0" for k in range(9)]  # 9 new parts without an old half
    ev = _run(tmp_path, rows, "  pair: pair\nmin_n: 20\ncharacteristics:\n  - name: x\n"
              "    unit: mm\n    checks:\n      shift: {design: welch}\n      spread:\n")
    c = ev.characteristic("x")
    # 21 new parts but only 12 pairs: the pairs are the units while the spread runs on them
    assert c.processes["new"].n == 21
    assert c.decision == "PENDING" and c.reasons[0] == "pairs: 12 of 20 planned"


@pytest.mark.parametrize("body, key, words", [
    ("characteristics:\n  - name: x\n    unit: mm\n    checks:\n      spread: {design: paired}\n",
     "characteristics[0].checks.spread.design", "needs data.pair"),
    ("  pair: pair\ncharacteristics:\n  - name: x\n    unit: mm\n    checks:\n"
     "      spread: {method: brown-forsythe}\n",
     "characteristics[0].checks.spread.method", "design: independent"),
    ("characteristics:\n  - name: x\n    unit: mm\n    limits: [0, 1]\n    checks:\n"
     "      capability: {min_cpk: 1.33, min: 1.5}\n",
     "characteristics[0].checks.capability.min_cpk", "not both"),
    ("characteristics:\n  - name: x\n    unit: mm\n    limits: [0, 1]\n    checks:\n"
     "      capability: {index: ppk, min_cpk: 1.33}\n",
     "characteristics[0].checks.capability.min_cpk", "write min"),
    ("min_n: {old: 20}\ncharacteristics:\n  - name: x\n    unit: mm\n",
     "min_n", "new"),
])
def test_spec_errors_name_the_key(tmp_path, body, key, words):
    with pytest.raises(SpecError) as err:
        _load(tmp_path, ["A,old,1,1.0"], body)
    text = str(err.value)
    assert key in text and words in text


# --- 3. multiplicity: one family, its real size, degenerate checks listed --------------------


def test_family_holds_difference_and_spread_tests_and_leaves_degenerate_ones_out(tmp_path):
    rng = np.random.default_rng(5)
    rows = []
    for proc, shift in (("old", 0.0), ("new", 0.4)):
        for i in range(25):
            rows.append(f"{proc}{i % 3},{proc},{i},{10 + shift + rng.normal(0, 1):.4f},"
                        f"{5 + rng.normal(0, 0.5):.4f},3.0")
    body = ("characteristics:\n"
            "  - {name: a, unit: mm, checks: {shift: {design: welch}, spread: {}}}\n"
            "  - {name: b, unit: mm, checks: {shift: {design: welch}, spread: {}}}\n"
            "  - {name: z, unit: mm, checks: {shift: {design: welch}, spread: {}}}\n"
            "multiplicity: holm\n")
    (tmp_path / "d.csv").write_text("lot,process,pair,a,b,z\n" + "\n".join(rows) + "\n",
                                    encoding="utf-8")
    (tmp_path / "s.yaml").write_text(HEAD + body, encoding="utf-8")
    spec = load_spec(tmp_path / "s.yaml")
    ev = evaluate(spec, load_measurements(spec))
    # z is constant: neither its shift nor its spread can be computed
    assert ev.family == ("a: shift", "a: spread", "b: shift", "b: spread")
    assert ev.family_excluded == ("z: shift", "z: spread")
    members = [_check(ev, n, k) for n in "ab" for k in ("shift", "spread")]
    ps = np.array([r.p_value for r in members])
    # Holm (1979) step-down over the m = 4 computed tests, recomputed here
    order = np.argsort(ps)
    holm = np.empty(4)
    running = 0.0
    for rank, i in enumerate(order):
        running = max(running, (4 - rank) * ps[i])
        holm[i] = min(1.0, running)
    for r, expect in zip(members, holm, strict=True):
        assert r.p_adjusted == pytest.approx(expect, rel=1e-12)
    # intervals and power use alpha / m with the m actually adjusted (4, not 6)
    shift_a = _check(ev, "a", "shift")
    assert shift_a.ci_level == pytest.approx(1 - 0.05 / 4)
    assert "alpha/4" in shift_a.power_note
    assert _check(ev, "a", "spread").ci_level == pytest.approx(1 - 2 * 0.05 / 4)
    assert _check(ev, "z", "shift").outcome == "HOLD" and _check(ev, "z", "shift").p_adjusted \
        is None
    doc = result_dict(ev)
    assert doc["multiplicity"] == {"method": "holm", "family": list(ev.family),
                                   "family_size": 4, "left_out": ["z: shift", "z: spread"]}
    json.dumps(doc)


# --- 4. Brown-Forsythe reports its own estimate and interval -----------------------------------


def test_brown_forsythe_estimate_and_interval_belong_to_its_test(tmp_path):
    rng = np.random.default_rng(8)
    old = np.round(rng.normal(10, 1.0, 30), 4)
    new = np.round(rng.normal(10, 1.6, 30), 4)
    rows = [f"A,old,{i},{v}" for i, v in enumerate(old)] + [f"B,new,{i},{v}"
                                                            for i, v in enumerate(new)]
    ev = _run(tmp_path, rows, "characteristics:\n  - name: x\n    unit: mm\n    checks:\n"
              "      spread: {method: brown-forsythe}\n")
    sp = _check(ev, "x", "spread")
    za, zb = np.abs(old - np.median(old)), np.abs(new - np.median(new))
    # the estimate is the difference of mean absolute deviations (new - old) and the interval
    # is the pooled t interval on them (Brown & Forsythe 1974), both from scipy's t here
    est = zb.mean() - za.mean()
    t = stats.ttest_ind(zb, za, alternative="greater")
    assert sp.estimate == pytest.approx(est, rel=1e-12)
    assert sp.p_value == pytest.approx(t.pvalue, rel=1e-9)
    ci = stats.ttest_ind(zb, za).confidence_interval(0.90)
    assert (sp.ci_low, sp.ci_high) == pytest.approx((ci.low, ci.high), rel=1e-9)
    # decision and interval never contradict: HOLD exactly when the lower end is above 0
    assert (sp.outcome == "HOLD") == (sp.ci_low > 0)
    assert "mean absolute deviation new - old" in sp.reason and "descriptive" in sp.reason
    assert sp.details.sd_ratio_descriptive == pytest.approx(np.std(new, ddof=1)
                                                             / np.std(old, ddof=1))


# --- 5. capability criteria ---------------------------------------------------------------------


def _cap_rows(seed=3, n=30, sd=0.1):
    rng = np.random.default_rng(seed)
    return [f"L{i // 6},new,{i},{v:.5f}" for i, v in enumerate(rng.normal(10.0, sd, n))]


@pytest.mark.parametrize("cfg, index, judge, minimum", [
    ("{min_cpk: 1.2}", "cpk", "estimate", 1.2),
    ("{index: ppk, min: 1.67}", "ppk", "estimate", 1.67),
    ("{index: ppk, min: 1.0, judge: lower_bound, confidence: 0.9}", "ppk", "lower_bound", 1.0),
    ("{min: 1.0, judge: lower_bound}", "cpk", "lower_bound", 1.0),
])
def test_capability_criterion_keys(tmp_path, cfg, index, judge, minimum):
    ev = _run(tmp_path, _cap_rows(), "characteristics:\n  - name: x\n    unit: mm\n"
              f"    limits: [9.55, 10.45]\n    checks:\n      capability: {cfg}\n")
    cap = _check(ev, "x", "capability")
    e = cap.details_mapping()
    assert (e["index"], e["judge"], e["min"]) == (index, judge, minimum)
    value = e["cpk"] if index == "cpk" else e["ppk"]
    assert cap.estimate == value
    # Ppk's bound is Bissell's on n - 1 df; Cpk's on the effective df of the moving ranges
    z = stats.norm.ppf(e["confidence"])
    df = 29 if index == "ppk" else e["bound_df"]
    assert e["lower_bound"] == pytest.approx(
        value - z * np.sqrt(1 / (9 * 30) + value**2 / (2 * df)), rel=1e-12)
    judged = value if judge == "estimate" else e["lower_bound"]
    assert cap.outcome == ("PASS" if judged >= minimum else "HOLD")
    doc = next(k for k in result_dict(ev)["characteristics"][0]["checks"]
               if k["check"] == "capability")
    assert (doc["index"], doc["judge"], doc["min"]) == (index, judge, minimum)
    assert doc["lower_bound"] == e["lower_bound"]


def test_lower_bound_judgement_can_hold_what_the_estimate_passes(tmp_path):
    body = ("characteristics:\n  - name: x\n    unit: mm\n    limits: [9.6, 10.4]\n"
            "    checks:\n      capability: CFG\n")
    rows = _cap_rows(seed=1, n=30, sd=0.09)
    probe = _check(_run(tmp_path, rows, body.replace("CFG", "{min: 0.5}")), "x", "capability")
    minimum = round((probe.estimate + probe.details.lower_bound) / 2, 3)  # between the two
    est = _run(tmp_path, rows, body.replace("CFG", f"{{min: {minimum}}}"))
    lb = _run(tmp_path, rows, body.replace("CFG", f"{{min: {minimum}, judge: lower_bound}}"))
    c_est, c_lb = _check(est, "x", "capability"), _check(lb, "x", "capability")
    assert c_est.estimate >= minimum > c_lb.details.lower_bound
    assert c_est.outcome == "PASS" and c_lb.outcome == "HOLD"
    assert "lower 95% bound" in c_lb.reason


# --- 6. per-process plans -----------------------------------------------------------------------


def _two_process_rows(n_old, n_new, seed=2):
    rng = np.random.default_rng(seed)
    rows = [f"O{i % 3},old,{i},{v:.4f}" for i, v in enumerate(rng.normal(10, 1, n_old))]
    rows += [f"N{i % 3},new,{i},{v:.4f}" for i, v in enumerate(rng.normal(10, 1, n_new))]
    return rows


def test_min_n_per_process_names_the_short_process(tmp_path):
    body = ("min_n: {old: 20, new: 30}\ncharacteristics:\n  - name: x\n    unit: mm\n"
            "    checks:\n      shift: {margin: 3}\n")
    ev = _run(tmp_path, _two_process_rows(29, 25), body)
    c = ev.characteristic("x")
    assert c.decision == "PENDING" and c.reasons[0] == "new: 25 of 30 planned"
    ev = _run(tmp_path, _two_process_rows(19, 30), body)
    assert ev.characteristic("x").reasons[0] == "old: 19 of 20 planned"
    ev = _run(tmp_path, _two_process_rows(20, 30), body)
    assert ev.characteristic("x").decision == "PASS"


def test_historical_old_data_accepted_as_they_are(tmp_path):
    # old 0: 29 historical parts never leave the spec PENDING (the case)
    body = ("min_n: {old: 0, new: 30}\ncharacteristics:\n  - name: x\n    unit: mm\n"
            "    checks:\n      shift: {margin: 3}\n")
    ev = _run(tmp_path, _two_process_rows(29, 30), body)
    assert ev.characteristic("x").decision == "PASS"
    assert ("min_n.old", "0", False) in ev.spec.resolved
    assert ev.spec.min_n_text == "old 0, new 30"


# --- verify check says which test runs on which structure ------------------------------------


def test_verify_check_names_the_structure_and_the_new_keys(tmp_path):
    from verify.cli import describe_plan

    _, _, rows = _split_pairs(n=12)
    spec = _load(tmp_path, rows,
                 "  pair: pair\nmin_n: {old: 0, new: 20}\ncharacteristics:\n"
                 "  - name: x\n    unit: mm\n    limits: [40, 70]\n    checks:\n"
                 "      shift: {design: welch}\n      spread:\n"
                 "      capability: {index: ppk, min: 1.67, judge: lower_bound}\n"
                 "  - name: y\n    column: x\n    unit: mm\n    checks:\n"
                 "      spread: {design: independent}\n")
    text = "\n".join(describe_plan(spec, load_measurements(spec)))
    assert "min_n old 0, new 20" in text
    assert "pairs: 12 matched, 0 unmatched; fewer than min_n 20 (the pairs are the units)" in text
    assert "Pitman-Morgan on the matched pairs, one-sided, design paired" in text
    assert "design independent: the declared pairs are ignored" in text
    assert "lower 95% bound of new Ppk at least 1.67 (overall sd; index ppk, judge " \
           "lower_bound)" in text
