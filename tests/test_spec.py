"""load_spec, find_specs and the spec schema: valid specs resolve, bad ones say where and why."""

from __future__ import annotations

import dataclasses
import hashlib
import json

import pytest
import yaml
from helpers_spec import (
    BASE_SPEC,
    SAMPLE_SPECS,
    SPEC_CASES,
    SPECS,
    edit,
    line_of,
    write,
    write_spec,
)

from verify.errors import SpecError, UsageError
from verify.schema import (
    ANNOTATION_KEYWORDS,
    SUPPORTED_KEYWORDS,
    load_schema,
    schema_keywords,
    schema_text,
)
from verify.spec import find_specs, load_spec


def issues_of(path):
    with pytest.raises(SpecError) as info:
        load_spec(path)
    return info.value.issues


# -- every error kind names file, line and key path ---------------------------------------------


@pytest.mark.parametrize("case", SPEC_CASES, ids=lambda c: c.id)
def test_bad_spec_names_file_line_and_key(tmp_path, case):
    path = write_spec(tmp_path, case.text)
    issues = issues_of(path)
    hits = [i for i in issues if i.path == case.path
            and all(w in i.message for w in case.words)]
    assert hits, "\n".join(str(i) for i in issues)
    issue = hits[0]
    assert issue.file == str(path)
    assert issue.line == case.line
    text = str(issue)
    assert text.startswith(f"{path}:{case.line}")
    if case.path:
        assert f"`{case.path}`" in text


def test_all_errors_are_reported_together(tmp_path):
    text = BASE_SPEC.replace("alpha: 0.05", "alpha: 0.5").replace("[9.5, 10.5]", "[10.5, 9.5]")
    text = text.replace("shift: {margin: 0.1}", "shfit: {margin: 0.1}")
    text = text.replace("name: height", "name: width")
    issues = issues_of(write_spec(tmp_path, text))
    paths = {i.path for i in issues}
    assert {"alpha", "characteristics[0].limits", "characteristics[0].checks.shfit",
            "characteristics[1].name"} <= paths
    lines = [i.line for i in issues]
    assert lines == sorted(lines)  # reported in file order


def test_error_report_counts_problems(tmp_path):
    text = BASE_SPEC.replace("alpha: 0.05", "alpha: 0.5").replace("unit: mm\n    target",
                                                                    "unit: 5\n    target")
    with pytest.raises(SpecError) as info:
        load_spec(write_spec(tmp_path, text))
    report = info.value.report()
    assert report.startswith("2 problems:")
    assert "`alpha`" in report and "`characteristics[0].unit`" in report


def test_missing_file_is_a_spec_error(tmp_path):
    issues = issues_of(tmp_path / "nope.yaml")
    assert "not found" in issues[0].message and issues[0].file.endswith("nope.yaml")


def test_not_utf8_names_the_line(tmp_path):
    raw = BASE_SPEC.replace("Bracket", "Br\u00e4cket").encode("latin-1")
    issues = issues_of(write(tmp_path, "spec.yaml", raw))
    assert "UTF-8" in issues[0].message and issues[0].line == 2


def test_alias_expansion_is_bounded(tmp_path):
    # a "billion laughs" document: each level refers to the previous one nine times
    levels = ["a0: &a0 [x, x, x, x, x, x, x, x, x]"]
    for i in range(1, 9):
        refs = ", ".join([f"*a{i - 1}"] * 9)
        levels.append(f"a{i}: &a{i} [{refs}]")
    text = "\n".join(levels) + "\n" + BASE_SPEC.replace("old: Old Co", "old: *a8")
    issues = issues_of(write_spec(tmp_path, text))
    # the schema bounds the depth the validator walks, so the aliases are never expanded:
    # nine list items that are not text, plus the nine unknown keys a0..a8
    assert len(issues) == 18
    assert sum(i.path.startswith("data.old[") for i in issues) == 9


def test_deep_nesting_is_a_spec_error(tmp_path):
    issues = issues_of(write_spec(tmp_path, "title: " + "[" * 5000 + "]" * 5000 + "\n"))
    assert issues


def test_control_character_is_a_spec_error(tmp_path):
    issues = issues_of(write(tmp_path, "spec.yaml", BASE_SPEC.replace("Bracket", "Br\x07")))
    assert issues[0].line == 2


# -- valid specs: values and defaults -----------------------------------------------------------


@pytest.fixture
def spec(tmp_path):
    return load_spec(write_spec(tmp_path))


def test_values_as_written(spec):
    width, height = spec.characteristics
    assert spec.title == "Bracket supplier change"
    assert spec.alpha == 0.05
    assert spec.data.old == ("Old Co",) and spec.data.new == ("New Co",)
    assert width.target == 10.0 and width.limits == (9.5, 10.5)
    assert width.checks.target.margin.low == -0.2 and width.checks.target.margin.high == 0.2
    assert width.checks.shift.margin.text == "0.1"
    assert height.column == "height_mm"


def test_defaults_are_explicit(spec):
    width, height = spec.characteristics
    assert spec.unit_of_analysis == "part" and spec.multiplicity == "none"
    assert spec.data.decimal == "." and spec.data.missing == ("", "NA")
    assert spec.plan.power == 0.9 and spec.plan.true_shift == 0.0
    assert width.column == "width"  # the name, when column is left out
    assert width.side == "two-sided"
    # explicit checks: exactly the listed ones run
    assert width.checks.spread is None and width.checks.capability is None
    assert width.checks.shift.design == "welch"
    # no checks key: default checks; no target and no limits -> no target or capability check
    assert height.checks.target is None and height.checks.capability is None
    assert height.checks.shift.design == "welch" and height.checks.shift.margin is None
    assert height.checks.spread.method == "f"


def test_resolved_records_every_value_and_its_origin(spec):
    resolved = {k: (v, d) for k, v, d in spec.resolved}
    assert resolved["alpha"] == ("0.05", False)
    assert resolved["unit_of_analysis"] == ("part", True)
    assert resolved["data.missing"] == ('["", "NA"]', True)
    assert resolved["characteristics[0].column"] == ("width", True)
    assert resolved["characteristics[1].checks.shift.design"] == ("welch", True)
    assert resolved["characteristics[0].checks.shift.margin"][0] == "0.1 = [-0.1, 0.1]"
    assert resolved["characteristics[1].checks.capability"][0].startswith("off")


def test_default_checks_with_target_limits_and_pair(tmp_path):
    text = edit(BASE_SPEC, "  new: New Co\n", "  new: New Co\n  pair: serial\n")
    text = edit(text, "    checks:\n      target: {margin: 0.2}\n      shift: {margin: 0.1}\n",
                "")
    width = load_spec(write_spec(tmp_path, text)).characteristics[0]
    assert width.checks.target is not None and width.checks.target.margin is None
    assert width.checks.shift.design == "paired"
    assert width.checks.spread.method == "f"
    assert width.checks.capability.min_cpk == 1.33 and width.checks.capability.subgroup is None


def test_empty_check_entry_runs_with_defaults(tmp_path):
    text = edit(BASE_SPEC, "      shift: {margin: 0.1}\n",
                "      shift:\n      spread:\n      capability: {}\n")
    width = load_spec(write_spec(tmp_path, text)).characteristics[0]
    assert width.checks.shift.design == "welch" and width.checks.shift.margin is None
    assert width.checks.spread.method == "f"
    assert width.checks.capability.min_cpk == 1.33


@pytest.mark.parametrize(("written", "low", "high"), [
    ("0.2", -0.2, 0.2),
    ("[-0.1, 0.3]", -0.1, 0.3),
    ("2%", -0.2, 0.2),  # 2 % of |target 10|
    ('"0.5 %"', -0.05, 0.05),
])
def test_margin_forms(tmp_path, written, low, high):
    text = edit(BASE_SPEC, "target: {margin: 0.2}", f"target: {{margin: {written}}}")
    m = load_spec(write_spec(tmp_path, text)).characteristics[0].checks.target.margin
    assert m.low == pytest.approx(low, rel=1e-12) and m.high == pytest.approx(high, rel=1e-12)


def test_percent_margin_uses_absolute_target(tmp_path):
    text = edit(BASE_SPEC, "target: 10.0\n    limits: [9.5, 10.5]", "target: -10.0")
    text = edit(text, "target: {margin: 0.2}", "target: {margin: 1%}")
    m = load_spec(write_spec(tmp_path, text)).characteristics[0].checks.target.margin
    assert (m.low, m.high) == (pytest.approx(-0.1), pytest.approx(0.1)) and m.text == "1%"


def test_numbers_where_text_is_allowed_keep_their_spelling(tmp_path):
    text = edit(BASE_SPEC, "  old: Old Co\n  new: New Co\n", "  old: 01\n  new: [2.50, 3]\n")
    text = edit(text, "title: Bracket supplier change\n",
                "title: Bracket supplier change\nchange_id: 2024\n")
    spec = load_spec(write_spec(tmp_path, text))
    assert spec.data.old == ("01",) and spec.data.new == ("2.50", "3")
    assert spec.change_id == "2024"


def test_lots_lists_and_long_layout(tmp_path):
    text = edit(BASE_SPEC, "  process: supplier\n  old: Old Co\n  new: New Co\n",
                "  characteristic: char\n  value: val\n")
    text = edit(text, "    column: height_mm\n", "    match: H-01\n")
    text += "lots:\n  old: A*\n  new: [B1, B2]\n"
    spec = load_spec(write_spec(tmp_path, text))
    assert spec.lots.old == ("A*",) and spec.lots.new == ("B1", "B2")
    assert spec.data.layout == "long"
    assert spec.characteristics[0].match == "width" and spec.characteristics[1].match == "H-01"
    assert spec.characteristics[0].column is None


def test_planning_and_other_keys(tmp_path):
    text = BASE_SPEC + (
        "plan: {power: 0.8, true_shift: 0.01, pair_correlation: 0.5}\n"
        "supersedes_reason: margin corrected after the design review\n"
        "min_n: 30\nmultiplicity: holm\nunit_of_analysis: lot\n"
        "exclude:\n  - {lot: A1, characteristic: width, reason: gauge drift, by: QE-11}\n"
    )
    text = edit(text, "shift: {margin: 0.1}", "shift: {margin: 0.1, detect: 0.05}")
    spec = load_spec(write_spec(tmp_path, text))
    assert spec.plan.power == 0.8 and spec.plan.pair_correlation == 0.5
    assert spec.plan.true_shift == 0.01
    assert spec.supersedes_reason.startswith("margin corrected")
    assert spec.min_n == 30 and spec.multiplicity == "holm" and spec.unit_of_analysis == "lot"
    assert spec.characteristics[0].checks.shift.detect == 0.05
    (e,) = spec.exclude
    assert (e.lot, e.row, e.characteristic, e.by) == ("A1", None, "width", "QE-11")
    assert e.line == line_of(text, "gauge drift")


def test_text_argument_replaces_the_file(tmp_path):
    path = write_spec(tmp_path, BASE_SPEC)
    other = BASE_SPEC.replace("Bracket supplier change", "Recorded title")
    (tmp_path / "sub").mkdir()
    spec = load_spec(tmp_path / "sub" / "gone.yaml", text=other)
    assert spec.title == "Recorded title"
    assert spec.text == other
    assert spec.sha256 == hashlib.sha256(other.encode("utf-8")).hexdigest()
    assert spec.data.file == (tmp_path / "sub" / "lots.csv")
    assert load_spec(path).data.file == tmp_path / "lots.csv"


def test_sha256_matches_the_file_bytes(tmp_path):
    path = write(tmp_path, "spec.yaml", ("\ufeff" + BASE_SPEC).replace("\n", "\r\n"))
    spec = load_spec(path)
    assert spec.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert spec.title == "Bracket supplier change"


def test_spec_is_immutable(spec):
    with pytest.raises(dataclasses.FrozenInstanceError):
        spec.alpha = 0.1  # type: ignore[misc]


def test_characteristic_lines(spec):
    assert [c.line for c in spec.characteristics] == [
        line_of(BASE_SPEC, "name: width"), line_of(BASE_SPEC, "name: height")]


# -- sample specs and the schema ---------------------------------------------------------------


@pytest.mark.parametrize("name", SAMPLE_SPECS)
def test_sample_specs_load_and_point_at_the_schema(name):
    path = SPECS / name
    assert path.read_text(encoding="utf-8").splitlines()[0] == (
        "# yaml-language-server: $schema=verify-spec.schema.json")
    spec = load_spec(path)
    assert spec.characteristics and spec.data.file.exists()


def test_committed_schema_is_the_package_schema():
    committed = (SPECS / "verify-spec.schema.json").read_text(encoding="utf-8")
    assert committed == schema_text()
    assert json.loads(committed)["title"].startswith("verify spec")


def test_schema_uses_only_keywords_the_validator_knows():
    used = schema_keywords(load_schema())
    assert used <= SUPPORTED_KEYWORDS | ANNOTATION_KEYWORDS, used - SUPPORTED_KEYWORDS


def test_schema_documents_every_key():
    schema = load_schema()
    undocumented = []

    def visit(s, where):
        s = _deref(schema, s)
        for key, sub in s.get("properties", {}).items():
            if "description" not in _deref(schema, sub):
                undocumented.append(f"{where}.{key}")
            visit(sub, f"{where}.{key}")
        if isinstance(s.get("items"), dict):
            visit(s["items"], where + "[]")

    visit(schema, "")
    assert undocumented == []


def test_schema_keys_of_the_issue_are_there():
    schema = load_schema()
    top = set(schema["properties"])
    assert {"format", "title", "change_id", "alpha", "data", "lots", "unit_of_analysis",
            "min_n", "multiplicity", "exclude", "characteristics", "plan",
            "supersedes_reason"} <= top
    data = set(schema["definitions"]["data"]["properties"])
    assert {"file", "sheet", "lot", "process", "old", "new", "pair", "characteristic", "value",
            "decimal", "missing", "order", "ignore_other"} <= data
    checks = schema["definitions"]["checks"]["properties"]
    assert {"target", "shift", "spread", "capability", "conformance", "rate",
            "rate_shift"} == set(checks)
    assert "detect" in checks["target"]["properties"] and "detect" in checks["shift"][
        "properties"]


def _deref(schema, s):
    while "$ref" in s:
        node = schema
        for part in s["$ref"][2:].split("/"):
            node = node[part]
        s = node
    return s


def test_schema_defaults_match_the_loader(spec):
    schema = load_schema()
    assert schema["properties"]["alpha"]["default"] == spec.alpha
    assert schema["definitions"]["data"]["properties"]["missing"]["default"] == list(
        spec.data.missing)
    assert schema["definitions"]["plan"]["properties"]["power"]["default"] == spec.plan.power


def test_yaml_safe_loader_agrees_on_sample_values():
    # two routes: PyYAML's own safe loader and our validator read the same values
    for name in SAMPLE_SPECS:
        raw = yaml.safe_load((SPECS / name).read_text(encoding="utf-8"))
        spec = load_spec(SPECS / name)
        assert raw["title"] == spec.title
        for c_raw, c in zip(raw["characteristics"], spec.characteristics, strict=True):
            assert c_raw["name"] == c.name
            assert c_raw.get("target") == c.target
            assert (tuple(c_raw["limits"]) if "limits" in c_raw else None) == c.limits


# -- find_specs ----------------------------------------------------------------------------------


def test_find_specs_in_folders_recursively_sorted(tmp_path):
    for rel in ("b.yaml", "a.yml", "sub/c.yaml", "notes.txt", ".hidden/d.yaml"):
        p = tmp_path / rel
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text("x")
    found = find_specs([tmp_path])
    assert [p.relative_to(tmp_path).as_posix() for p in found] == ["a.yml", "b.yaml",
                                                                   "sub/c.yaml"]
    assert find_specs([tmp_path / "b.yaml", tmp_path / "b.yaml"]) == [tmp_path / "b.yaml"]


def test_find_specs_empty_or_missing_is_an_error(tmp_path):
    with pytest.raises(UsageError, match="no spec files"):
        find_specs([tmp_path])
    with pytest.raises(UsageError, match="no such file"):
        find_specs([tmp_path / "missing.yaml"])


def test_find_specs_on_the_sample_folder():
    assert [p.name for p in find_specs([SPECS])] == sorted(SAMPLE_SPECS)
