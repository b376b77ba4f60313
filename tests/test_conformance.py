"""The conformance check end to end: spec keys, decision, JSON fields, recheck rows, plan.

The factors themselves are tested against published values in tests/test_stats_tolerance.py;
here the expected limits are rebuilt independently with scipy.stats.nct (one-sided) and
the reference factor k2 of ../shared/reference/tolerance/tolerance-factors.csv where needed.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from verify import plan as vplan
from verify.data import load_measurements
from verify.errors import SpecError
from verify.evaluate import evaluate
from verify.report.json_result import result_dict
from verify.report.layout import measurement_layout
from verify.report.recheck import recheck_rows
from verify.spec import load_spec


def _spec(tmp_path, new, *, limits="[9.0, 11.0]", conformance="{}", extra="", old=None):
    old = [10.0 + 0.1 * math.sin(i) for i in range(20)] if old is None else old
    rows = [f"O{i % 3},old,{float(v)!r}" for i, v in enumerate(old)]
    rows += [f"N{i % 3},new,{float(v)!r}" for i, v in enumerate(new)]
    (tmp_path / "d.csv").write_text("lot,process,x\n" + "\n".join(rows) + "\n",
                                    encoding="utf-8")
    text = ("format: verify/1\ntitle: conformance\ndata:\n  file: d.csv\n  lot: lot\n"
            "  process: process\n  old: old\n  new: new\n" + extra +
            f"characteristics:\n  - name: x\n    unit: mm\n    limits: {limits}\n"
            f"    checks:\n      conformance: {conformance}\n")
    p = tmp_path / "s.yaml"
    p.write_text(text, encoding="utf-8")
    return load_spec(p)


def _run(spec):
    ev = evaluate(spec, load_measurements(spec))
    return ev, ev.characteristic("x").checks[0]


def _values(n, mean, sd, seed):
    rng = np.random.default_rng(seed)
    return np.round(rng.normal(mean, sd, n), 5)


def test_two_sided_pass_and_the_limits_in_json(tmp_path):
    new = _values(30, 10.0, 0.1, 1)
    ev, k = _run(_spec(tmp_path, new))
    m, s = float(np.mean(new)), float(np.std(new, ddof=1))
    assert k.check == "conformance" and k.outcome == "PASS"
    assert k.details.k == pytest.approx(3.354576, rel=1e-6)  # reference file, n 30, 99/95
    assert k.ci_low == pytest.approx(m - k.details.k * s, rel=1e-12)
    assert k.ci_high == pytest.approx(m + k.details.k * s, rel=1e-12)
    j = next(c for c in result_dict(ev)["characteristics"][0]["checks"]
             if c["check"] == "conformance")
    for key in ("ci_low", "ci_high", "coverage", "confidence", "k", "method", "outcome",
                "reason"):
        assert key in j
    assert (j["coverage"], j["confidence"]) == (0.99, 0.95)
    assert "Odeh/Owen" in j["method"]
    json.dumps(j)  # serialisable


def test_hold_names_the_limit_crossed(tmp_path):
    new = _values(30, 10.6, 0.15, 2)  # mean + 3.35 sd is about 11.1 > 11
    ev, k = _run(_spec(tmp_path, new))
    assert k.outcome == "HOLD" and "above the upper limit 11" in k.reason
    assert ev.decision == "HOLD"


def test_one_limit_gives_a_one_sided_bound_with_the_noncentral_t_factor(tmp_path):
    new = _values(25, 10.0, 0.2, 3)
    spec = _spec(tmp_path, new, limits="[null, 11.0]")
    assert spec.characteristics[0].checks.conformance.side == "upper"
    ev, k = _run(spec)
    want = stats.nct.ppf(0.95, 24, stats.norm.ppf(0.99) * 5.0) / 5.0  # n 25: sqrt 5
    assert k.details.k == pytest.approx(want, rel=1e-9)
    assert k.ci_low is None
    assert k.ci_high == pytest.approx(np.mean(new) + want * np.std(new, ddof=1), rel=1e-12)
    j = result_dict(ev)["characteristics"][0]["checks"][0]
    assert j["ci_low"] is None and j["side"] == "upper"


def test_side_key_picks_one_limit_of_two(tmp_path):
    new = _values(25, 9.5, 0.2, 4)  # close to the lower limit only
    ev, k = _run(_spec(tmp_path, new, conformance="{side: upper, coverage: 0.9}"))
    assert k.ci_low is None and k.outcome == "PASS"
    assert k.details.coverage == 0.9 and k.details.coverage_confidence == 0.95


def test_zero_bounded_upper_limit_without_a_fake_lower_limit(tmp_path):
    new = np.abs(_values(30, 0.02, 0.01, 5))
    ev, k = _run(_spec(tmp_path, new, limits="[null, 0.1]", old=list(np.abs(
        _values(20, 0.02, 0.01, 6)))))
    assert k.outcome == "PASS" and k.ci_low is None and "upper limit 0.1" in k.reason


def test_pending_while_short_of_min_n_and_hold_when_harm_shown(tmp_path):
    new = _values(10, 10.0, 0.1, 7)
    ev, k = _run(_spec(tmp_path, new, extra="min_n: 30\n"))
    assert k.outcome == "PENDING" and "new: 10 of 30" in k.reason
    bad = _values(10, 11.2, 0.1, 8)  # the mean itself is beyond the upper limit
    ev, k = _run(_spec(tmp_path, bad, extra="min_n: 30\n"))
    assert k.outcome == "HOLD"


def test_too_few_parts_is_hold_with_the_reason(tmp_path):
    ev, k = _run(_spec(tmp_path, [10.0]))
    assert k.outcome == "HOLD" and "at least 2 values" in k.reason


@pytest.mark.parametrize(("limits", "conformance", "message"), [
    (None, "{}", "a conformance check needs limits"),
    ("[null, 11.0]", "{side: lower}", "side: lower needs a lower limit"),
    ("[9.0, null]", "{side: upper}", "side: upper needs an upper limit"),
    ("[9.0, 11.0]", "{coverage: 1.2}", "coverage"),
    ("[9.0, 11.0]", "{level: 0.9}", "level"),
])
def test_spec_errors_name_the_key(tmp_path, limits, conformance, message):
    with pytest.raises(SpecError, match=message):
        if limits is None:
            (tmp_path / "d.csv").write_text("lot,process,x\nA,old,1\n", encoding="utf-8")
            p = tmp_path / "s.yaml"
            p.write_text("format: verify/1\ntitle: t\ndata:\n  file: d.csv\n  lot: lot\n"
                         "  process: process\n  old: old\n  new: new\ncharacteristics:\n"
                         "  - name: x\n    unit: mm\n    checks:\n      conformance: {}\n",
                         encoding="utf-8")
            load_spec(p)
        else:
            _spec(tmp_path, [10.0, 10.1], limits=limits, conformance=conformance)


def test_recheck_rows_rebuild_the_limits(tmp_path):
    new = _values(30, 10.0, 0.1, 9)
    ev, k = _run(_spec(tmp_path, new))
    rows = recheck_rows(ev, measurement_layout(ev))
    labels = {r[0]: r for r in rows if r}
    assert labels["tolerance factor k"][1] == pytest.approx(k.details.k)
    assert "Odeh/Owen" in labels["tolerance factor k"][5]
    assert labels["lower tolerance limit"][2] == pytest.approx(k.ci_low)
    assert labels["upper tolerance limit"][1].startswith("=")


def test_plan_gives_the_smallest_n_for_the_assumed_mean_and_sd(tmp_path):
    old = list(_values(40, 10.0, 0.25, 10))
    spec = _spec(tmp_path, _values(5, 10.0, 0.25, 11), old=old)
    plan = vplan.plan_spec(spec, load_measurements(spec), vplan.Options(mean=10.0))
    (c,) = plan.rows_of("conformance")
    sd = float(np.std(old, ddof=1))
    room = 1.0 / sd
    from verify.stats.tolerance import factor_two_sided

    assert factor_two_sided(c.n_needed, 0.99, 0.95) <= room
    assert factor_two_sided(c.n_needed - 1, 0.99, 0.95) > room
    assert "n needed" in vplan.format_table(plan)
    far = vplan.plan_spec(spec, load_measurements(spec), vplan.Options(mean=10.9))
    (c_far,) = far.rows_of("conformance")
    assert c_far.n_needed is None and "no sample size" in c_far.note


def test_plan_for_distribution_free_and_lognormal_models(tmp_path):
    old = list(np.abs(_values(40, 0.03, 0.01, 12)) + 0.001)
    spec = _spec(tmp_path, _values(5, 0.03, 0.01, 13), limits="[null, 0.1]", old=old)
    text = (tmp_path / "s.yaml").read_text(encoding="utf-8")
    (tmp_path / "s.yaml").write_text(text.replace("    limits:", "    distribution: any\n"
                                                  "    limits:"), encoding="utf-8")
    spec = load_spec(tmp_path / "s.yaml")
    (c,) = vplan.plan_spec(spec, load_measurements(spec), vplan.Options()).rows_of("conformance")
    # distribution-free, one-sided 99% / 95%: 299 parts (reference file
    # nonparametric-tolerance.csv; common practice)
    assert c.n_needed == 299 and "order statistics" in c.method
    (tmp_path / "s.yaml").write_text(text.replace("    limits:", "    distribution: lognormal\n"
                                                  "    limits:"), encoding="utf-8")
    spec = load_spec(tmp_path / "s.yaml")
    (c,) = vplan.plan_spec(spec, load_measurements(spec),
                           vplan.Options(mean=0.03, sd=0.01)).rows_of("conformance")
    s2 = math.log1p((0.01 / 0.03) ** 2)
    room = (math.log(0.1) - (math.log(0.03) - s2 / 2)) / math.sqrt(s2)
    from verify.stats.tolerance import factor_one_sided

    assert factor_one_sided(c.n_needed, 0.99, 0.95) <= room
    assert factor_one_sided(c.n_needed - 1, 0.99, 0.95) > room


def test_plan_workbook_prints_the_parts_a_conformance_check_needs(tmp_path):
    # the answer (n needed) must sit inside the Plan sheet's print area: it stood in the 13th
    # column of a table printed only to the 6th
    import openpyxl
    from openpyxl.utils import column_index_from_string

    from verify.cli import main

    spec = Path(__file__).resolve().parents[1] / "specs" / "bushing-supplier.yaml"
    assert main(["plan", str(spec), "--out", str(tmp_path)]) == 0
    ws = openpyxl.load_workbook(tmp_path / "bushing-supplier-plan.xlsx").worksheets[0]
    area = str(ws.print_area).split("!")[-1].replace("$", "")
    last_col = column_index_from_string("".join(ch for ch in area.split(":")[1] if ch.isalpha()))
    (cell,) = [c for row in ws.iter_rows() for c in row if c.value == "n needed (new parts)"]
    answer = ws.cell(cell.row, cell.column + 1)
    assert isinstance(answer.value, int) and answer.value >= 2
    assert answer.column <= last_col
