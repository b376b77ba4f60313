"""The protocol every kind of check keeps (issue 12): a ``compute`` hook that drafts it, a
``result`` hook with its typed frozen details, a ``rule`` hook with its sentences and review
notes, a ``report`` hook with its decision-page heading and JSON fields; and the results of the
demo specs carry those typed details (no untyped dict), shown in the JSON as ``extra``.

Expected values are the protocol's own definitions (verify/checks/__init__.py, DEVELOPERS.md)
and the demo specs under specs/.
"""

from __future__ import annotations

import dataclasses
import inspect
from pathlib import Path

import pytest

from verify import decide
from verify.checks import kinds
from verify.model import CheckDetails, CheckResult
from verify.report.json_result import result_dict
from verify.runner import prepare

ROOT = Path(__file__).resolve().parents[1]
DEMOS = sorted((ROOT / "specs").glob("*.yaml"))


@pytest.mark.parametrize("kind", kinds(), ids=lambda k: k.name)
def test_every_kind_keeps_the_protocol(kind):
    compute = kind.hook("compute")
    assert list(inspect.signature(compute.draft).parameters) == ["kind", "inp"]
    rule = kind.hook("rule")
    rules = rule.rules(kind)
    assert rules and all(callable(r.describe) for r in rules)
    assert all(isinstance(r.describe(0.05), str) and r.describe(0.05) for r in rules)
    if hasattr(rule, "review"):  # optional: review notes on a decided check
        assert list(inspect.signature(rule.review).parameters) == ["kind", "res", "spec"]
    report = kind.hook("report")
    assert isinstance(report.heading(kind), str) and report.heading(kind)
    assert callable(report.json_fields)
    result = kind.hook("result")
    details = [c for _, c in inspect.getmembers(result, inspect.isclass)
               if issubclass(c, CheckDetails) and c is not CheckDetails
               and c.__module__ == result.__name__]
    assert details, f"{kind.name}: no CheckDetails dataclass in its result hook"
    for cls in details:
        assert dataclasses.is_dataclass(cls) and cls.__dataclass_params__.frozen, cls


def test_find_is_kind_or_none():
    # the registry's definition (verify/checks/__init__.py): kind(name) or KeyError
    from verify.checks import find, kind, names

    assert [find(n) for n in names()] == [kind(n) for n in names()] == list(kinds())
    assert find("sufficiency") is None and find("") is None
    with pytest.raises(KeyError):
        kind("sufficiency")


def test_check_result_has_no_untyped_extra():
    names = {f.name for f in dataclasses.fields(CheckResult)}
    assert "extra" not in names and "details" in names


def test_rules_in_words_follow_the_registry():
    measured = decide.rules_in_words(0.05, "holm")
    with_rates = decide.rules_in_words(0.05, "holm", pass_fail=True)
    per_kind = [r.describe(0.05) for k in kinds() for r in k.hook("rule").rules(k)]
    assert list(with_rates[:len(per_kind)]) == per_kind
    # the pass-fail kinds' rules only where a characteristic is pass-fail
    pass_fail = [r.describe(0.05) for k in kinds() if k.measures == "pass_fail"
                 for r in k.hook("rule").rules(k)]
    assert len(with_rates) == len(measured) + len(pass_fail)
    assert not set(pass_fail) & set(measured)


@pytest.fixture(scope="module")
def demo_evaluations():
    return [prepare(p) for p in DEMOS]


def test_demo_results_carry_typed_details_shown_as_extra(demo_evaluations):
    seen = set()
    for ev in demo_evaluations:
        doc = result_dict(ev)
        for c, cd in zip(ev.characteristics, doc["characteristics"], strict=True):
            for r, rd in zip(c.checks, cd["checks"], strict=True):
                assert rd["check"] == r.check
                if r.details is None:
                    assert rd["extra"] == {}
                    continue
                k = next(k for k in kinds() if k.name == r.check)
                # the details come from the kind's own result hook, frozen
                assert type(r.details).__module__ == k.hook("result").__name__
                with pytest.raises(dataclasses.FrozenInstanceError):
                    setattr(r.details, dataclasses.fields(r.details)[0].name, None)
                assert rd["extra"] == r.details_mapping()
                seen.add(r.check)
    # every measured kind and both pass-fail kinds appear in the demos
    assert seen == {k.name for k in kinds()}
