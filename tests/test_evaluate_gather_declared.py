"""The kinds that apply to a characteristic and the roles its matched pairs play, worked out
once per characteristic (``evaluate_gather._declared``), against working them out anew (the
plain route: the registry's kinds filtered by the characteristic's checks, each kind's
``pairs_role`` hook asked)."""

from __future__ import annotations

import pytest

from verify import evaluate_gather as eg
from verify.checks import kinds
from verify.spec import load_spec


def _plain(ch):
    measures = "pass_fail" if ch.pass_fail else "measured"
    found = [k for k in kinds()
             if k.measures == measures and getattr(ch.checks, k.name, None) is not None]
    roles = set()
    for k in found:
        role_of = getattr(k.hook("compute"), "pairs_role", None)
        if role_of is not None and (r := role_of(k, getattr(ch.checks, k.name))) is not None:
            roles.add(r)
    return found, roles


@pytest.mark.parametrize("name", ["bushing-supplier", "closure-mould", "filler-paired",
                                  "housing-resin", "bracket-die-sql"])
def test_declared_kinds_and_pair_roles_are_the_plain_ones(demo, name):
    spec = load_spec(demo / "specs" / f"{name}.yaml")
    for _ in range(2):  # worked out, then remembered
        for ch in spec.characteristics:
            found, roles = _plain(ch)
            got_kinds, got_roles = eg._declared(ch)
            assert list(got_kinds) == found and set(got_roles) == roles
            assert eg.applicable(ch) == found
            assert eg.applicable(ch) is not eg.applicable(ch)  # a list of the caller's own


def test_declared_is_worked_out_again_for_another_registry(demo, monkeypatch):
    spec = load_spec(demo / "specs" / "filler-paired.yaml")
    ch = spec.characteristics[0]
    assert eg._declared(ch)[0]
    # a registry loaded anew (another tuple) is looked at anew: here one with no kinds
    monkeypatch.setattr(eg, "kinds", lambda: ())
    assert eg._declared(ch) == ((), frozenset())
    assert eg.applicable(ch) == []


def test_a_pair_role_is_found_where_pairs_are_declared(demo):
    # the demo's paired spec runs its checks on the pairs: the roles are not empty there
    spec = load_spec(demo / "specs" / "filler-paired.yaml")
    assert any(eg._declared(ch)[1] for ch in spec.characteristics)
