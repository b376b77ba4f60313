"""The ``spec`` hook of every kind of check: its schema fragment, defaults, settings and words.

The spec format is assembled from the kinds (verify/spec_kind.py describes the protocol): these
tests hold that the assembled schema is the published one, that each kind's fragment lands at
``checks.<name>``, that the loader, the table of characteristics and ``verify check`` reach a
kind only through its hook, and that the per-characteristic ``Checks`` keep their old reading
(``ch.checks.<name>``, ``dataclasses.replace``). Expected texts are those of the published
schema ``specs/verify-spec.schema.json`` and of the loader before the split (commit b8d4ac4).
"""

from __future__ import annotations

import ast
import copy
import dataclasses
import pickle
from pathlib import Path

import pytest
from helpers_spec import SPECS

from verify import checks
from verify.schema import assemble, base_schema, load_schema, schema_text, validate
from verify.spec import load_spec
from verify.spec_kind import CheckSpec, Facts, check_specs, spec_of
from verify.spec_model import Checks

PACKAGE = Path(__file__).resolve().parents[1] / "verify"
KIND_NAMES = checks.names()


@pytest.mark.parametrize("name", KIND_NAMES)
def test_every_kind_has_a_spec_hook(name):
    kind = checks.kind(name)
    assert kind.has_hook("spec")
    spec = spec_of(name)
    assert isinstance(spec, CheckSpec)
    assert spec.name == name
    assert spec.schema.get("description")
    assert load_schema()["definitions"]["checks"]["properties"][name] == spec.schema


def test_check_specs_follow_the_registry():
    assert tuple(s.name for s in check_specs()) == KIND_NAMES
    for measures in ("measured", "pass_fail"):
        assert tuple(s.name for s in check_specs(measures)) == checks.names(measures)


def test_base_schema_holds_no_kind():
    base = base_schema()
    assert base["definitions"]["checks"]["properties"] == {}
    for spec in check_specs():
        for key in spec.definitions:
            assert key not in base["definitions"]
    assert "{check_columns}" in base["properties"]["characteristics_from"]["description"]
    assert "{check_columns}" not in schema_text()


def test_assembled_schema_is_the_published_one():
    # the published file keeps its key order: conformance after the pass-fail checks
    published = (SPECS / "verify-spec.schema.json").read_text(encoding="utf-8")
    assert schema_text() == published
    order = list(load_schema()["definitions"]["checks"]["properties"])
    assert order == ["target", "shift", "spread", "capability", "rate", "rate_shift",
                     "conformance"]
    assert list(load_schema()["definitions"]) == ["data", "exclusion", "plan", "characteristic",
                                                  "checks", "margin", "correction"]


class _Extra(CheckSpec):
    """A kind that exists only in this test: what a new kind adds to the schema."""

    name = "extra_kind"
    schema = {"description": "An extra check.", "type": ["object", "null"],
              "additionalProperties": False,
              "properties": {"level": {"description": "A level.", "type": "number"}}}
    definitions = {"extra_def": {"description": "Shared.", "type": "number"}}
    schema_order = 1000


def test_a_new_kind_adds_its_key_and_definitions():
    specs = (*check_specs(), _Extra())
    schema = assemble(base_schema(), specs)
    assert list(schema["definitions"]["checks"]["properties"])[-1] == "extra_kind"
    assert schema["definitions"]["extra_def"] == _Extra.definitions["extra_def"]
    # not run by default: the description of checks says so by itself
    assert "conformance and extra_kind run only when listed" in schema["definitions"][
        "checks"]["description"]
    import yaml

    doc = validate(yaml.compose("checks: {extra_kind: {level: x}}"),
                   {"type": "object", "properties": {
                       "checks": {"$ref": "#/definitions/checks"}},
                    "definitions": schema["definitions"]})
    assert [(p.path, p.line) for p in doc.problems] == [("checks.extra_kind.level", 1)]


def test_two_kinds_cannot_define_the_same_definition():
    class Clash(_Extra):
        name = "clash"
        definitions = {"margin": {"type": "number"}}

    with pytest.raises(ValueError, match="margin"):
        assemble(base_schema(), (*check_specs(), Clash()))


def test_default_words_agree_with_runs_by_default():
    # by_default (words in the schema) and runs_by_default (the loader's logic) say the same
    full = Facts(target=1.0, limits=(0.0, 2.0))
    for spec in check_specs():
        assert spec.runs_by_default(full) == (spec.by_default is not None), spec.name
    description = load_schema()["definitions"]["checks"]["description"]
    assert description.endswith(
        "Left out: target (when a target is given), shift, spread, and capability (when "
        "limits are given); conformance runs only when listed. A pass-fail characteristic "
        "runs rate and rate_shift (left out: rate_shift).")


def test_schema_defaults_are_the_settings_defaults():
    # each default the schema documents is the default of the kind's settings dataclass
    props = load_schema()["definitions"]["checks"]["properties"]
    built = {}
    for spec in check_specs():
        hook = checks.kind(spec.name).hook("spec")
        for cls_name in hook.__all__:
            cls = getattr(hook, cls_name)
            if dataclasses.is_dataclass(cls):
                for f in dataclasses.fields(cls):
                    if f.default is not dataclasses.MISSING:
                        built[(spec.name, f.name)] = f.default
    compared = 0
    for name, sub in props.items():
        for key, value in sub.get("properties", {}).items():
            if "default" in value:
                field_name = "min_cpk" if key == "min" else key
                assert built[(name, field_name)] == value["default"], (name, key)
                compared += 1
    assert compared >= 10


# -- the Checks of a characteristic -----------------------------------------------------------


def test_checks_read_by_attribute_get_and_iteration():
    spec = load_spec(SPECS / "bushing-supplier.yaml")
    ch = spec.characteristics[0].checks
    running = list(ch)
    assert running == [n for n in KIND_NAMES if getattr(ch, n) is not None]
    assert running == [n for n, _ in ch.items()]
    for name in KIND_NAMES:
        assert ch.get(name) is getattr(ch, name)
        assert (name in ch) == (getattr(ch, name) is not None)
    assert len(ch) == len(running)
    with pytest.raises(KeyError):
        ch["no_such_check"]
    assert ch.get("no_such_check") is None


def test_checks_are_frozen_and_keep_dataclass_manners():
    spec = load_spec(SPECS / "filler-paired.yaml")
    ch = spec.characteristics[0].checks
    first = next(iter(ch))
    with pytest.raises(dataclasses.FrozenInstanceError):
        setattr(ch, first, None)
    fewer = dataclasses.replace(ch, **{first: None})
    assert first not in fewer and len(fewer) == len(ch) - 1
    assert pickle.loads(pickle.dumps(ch)) == ch
    assert copy.deepcopy(ch) == ch and hash(copy.deepcopy(ch)) == hash(ch)
    assert Checks(**dict(ch.items())) == ch
    with pytest.raises(TypeError):
        Checks(no_such_check=1)


def test_settings_classes_stay_importable_from_spec_model():
    import verify.spec_model as sm

    for name in ("Margin", "TargetCheck", "ShiftCheck", "SpreadCheck", "CapabilityCheck",
                 "ConformanceCheck", "RateCheck", "RateShiftCheck"):
        cls = getattr(sm, name)
        assert cls.__module__.startswith("verify.checks.")
    with pytest.raises(AttributeError):
        sm.NoSuchThing  # noqa: B018


# -- the spec modules name no check ---------------------------------------------------------

SPEC_MODULES = ("spec.py", "spec_build.py", "spec_semantics.py", "spec_yaml.py", "spec_kind.py",
                "spec_model.py", "spec_table.py", "schema.py", "schema_walk.py",
                "pass_fail_counts.py")


@pytest.mark.parametrize("module", SPEC_MODULES)
def test_spec_modules_name_no_check(module):
    tree = ast.parse((PACKAGE / module).read_text(encoding="utf-8"))
    named = [(n.lineno, n.value) for n in ast.walk(tree)
             if isinstance(n, ast.Constant) and n.value in KIND_NAMES]
    # the characteristic's key for its nominal value is spelled like a check, once
    allowed = [(n.lineno, n.value.value) for n in ast.walk(tree) if isinstance(n, ast.Assign)
               and any(isinstance(t, ast.Name) and t.id == "TARGET_KEY" for t in n.targets)]
    assert named == allowed


@pytest.mark.parametrize("module", SPEC_MODULES + ("cli.py",))
def test_spec_modules_stay_small(module):
    lines = (PACKAGE / module).read_text(encoding="utf-8").count("\n")
    assert lines <= 600, f"{module}: {lines} lines"
