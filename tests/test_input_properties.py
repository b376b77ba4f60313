"""Property tests: valid specs keep their values; garbage never ends in a traceback."""

from __future__ import annotations

import math
import string
from pathlib import Path

import yaml
from helpers_spec import BASE_CSV, BASE_SPEC
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from verify.data import load_measurements
from verify.errors import DataError, SpecError
from verify.model import MEASUREMENT_COLUMNS, Measurements
from verify.spec import SpecLoader, load_spec
from verify.spec_model import Spec


class _Dumper(yaml.SafeDumper):
    """Quotes every string that YAML 1.1 or the spec loader's YAML 1.2 core schema would read
    as something other than text (for example 0E0, a number in YAML 1.2 only)."""


_Dumper.yaml_implicit_resolvers = {
    k: list(v) for k, v in yaml.SafeDumper.yaml_implicit_resolvers.items()}
for _first, _entries in SpecLoader.yaml_implicit_resolvers.items():
    _Dumper.yaml_implicit_resolvers.setdefault(_first, []).extend(_entries)

SETTINGS = settings(max_examples=60, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture,
                                           HealthCheck.too_slow])

# -- generated valid specs ------------------------------------------------------------------

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
positive = st.floats(min_value=1e-6, max_value=1e3, allow_nan=False, allow_infinity=False)
# no control characters or line/paragraph separators: YAML folds those into line breaks
_chars = st.characters(blacklist_categories=("Cs", "Cc", "Zl", "Zp"))
text = st.text(_chars, min_size=1, max_size=30)
names = st.from_regex(r"\A[A-Za-z][A-Za-z0-9_.-]{0,20}\Z")


@st.composite
def margins(draw):
    kind = draw(st.sampled_from(["number", "pair", "percent"]))
    if kind == "number":
        m = draw(positive)
        return m, (-m, m)
    if kind == "pair":
        low, high = -draw(positive), draw(positive)
        return [low, high], (low, high)
    pct = draw(st.integers(min_value=1, max_value=50))
    return f"{pct}%", pct  # resolved against the target below


@st.composite
def characteristics(draw, name):
    target = draw(finite)
    below, above = draw(positive), draw(positive)
    lower = draw(st.one_of(st.none(), st.just(target - below)))
    upper = draw(st.one_of(st.none(), st.just(target + above)))
    if lower is None and upper is None:
        lower = target - below
    c = {"name": name, "unit": draw(text), "target": target, "limits": [lower, upper],
         "side": draw(st.sampled_from(["two-sided", "lower", "upper"]))}
    margin, expected = draw(margins())
    if isinstance(expected, int) and expected / 100 * abs(target) == 0:  # 0 or subnormal
        margin, expected = 1.0, (-1.0, 1.0)
    c["checks"] = {"target": {"margin": margin},
                   "shift": {"margin": margin, "design": draw(st.sampled_from(["welch",
                                                                               "pooled"]))},
                   "capability": {"min_cpk": draw(st.floats(0.5, 3.0))}}
    return c, expected


@st.composite
def specs(draw):
    n = draw(st.integers(min_value=1, max_value=4))
    chosen = draw(st.lists(names, min_size=n, max_size=n, unique=True))
    chars = [draw(characteristics(nm)) for nm in chosen]
    doc = {
        "format": "verify/1",
        "title": draw(text),
        "alpha": draw(st.floats(min_value=1e-4, max_value=0.2)),
        "data": {"file": "lots.csv", "lot": draw(text), "process": draw(text),
                 "old": draw(st.lists(text, min_size=1, max_size=3, unique=True)),
                 "new": [draw(text) + "\u2192new"],
                 "missing": draw(st.lists(st.text(_chars, max_size=5), max_size=3))},
        "characteristics": [c for c, _ in chars],
    }
    if draw(st.booleans()):
        doc["min_n"] = draw(st.integers(min_value=2, max_value=10_000))
    if draw(st.booleans()):
        doc["change_id"] = draw(text)
    return doc, [e for _, e in chars]


@SETTINGS
@given(specs())
def test_generated_valid_specs_keep_their_values(tmp_path, drawn):
    doc, expected_margins = drawn
    doc["data"]["old"] = [o for o in doc["data"]["old"] if o not in doc["data"]["new"]] or ["o"]
    path = tmp_path / "spec.yaml"
    path.write_text(yaml.dump(doc, Dumper=_Dumper, sort_keys=False, allow_unicode=True),
                    encoding="utf-8")
    spec = load_spec(path)
    assert spec.title == doc["title"] and spec.alpha == doc["alpha"]
    assert spec.data.lot == doc["data"]["lot"] and spec.data.process == doc["data"]["process"]
    assert spec.data.old == tuple(doc["data"]["old"]) and spec.data.new == tuple(
        doc["data"]["new"])
    assert spec.data.missing == tuple(doc["data"]["missing"])
    assert spec.min_n == doc.get("min_n") and spec.change_id == doc.get("change_id")
    for c, raw, expected in zip(spec.characteristics, doc["characteristics"], expected_margins,
                                strict=True):
        assert (c.name, c.unit, c.target, c.side) == (raw["name"], raw["unit"], raw["target"],
                                                      raw["side"])
        assert c.limits == tuple(raw["limits"]) and c.column == raw["name"]
        m = c.checks.target.margin
        if isinstance(expected, int):  # percent of |target|
            half = expected / 100 * abs(raw["target"])
            assert math.isclose(m.high, half, rel_tol=1e-12) and m.low == -m.high
        else:
            assert (m.low, m.high) == expected
        assert c.checks.shift.margin == m
        assert c.checks.shift.design == raw["checks"]["shift"]["design"]
        assert c.checks.capability.min_cpk == raw["checks"]["capability"]["min_cpk"]
        assert c.checks.spread is None  # explicit checks: only those listed
    # the recorded text is the file's text
    assert spec.text == path.read_text(encoding="utf-8")


# -- garbage spec text ------------------------------------------------------------------------

yaml_alphabet = st.sampled_from(list(":-[]{},#&*!|>'\"%@`?\t\n ") + list(string.ascii_letters)
                                + list("0123456789.") + ["\u00e9", "\ufeff", "\x85"])


def _load_or_error(path: Path, text: str | None = None) -> None:
    try:
        result = load_spec(path, text=text)
    except SpecError as exc:
        assert exc.issues and all(i.file == str(path) for i in exc.issues)
        assert str(exc)
    else:
        assert isinstance(result, Spec)


@SETTINGS
@given(st.text(yaml_alphabet, max_size=200))
def test_garbage_yaml_is_a_spec_error(tmp_path, garbage):
    _load_or_error(tmp_path / "g.yaml", text=garbage)


@SETTINGS
@given(st.binary(max_size=200))
def test_garbage_bytes_are_a_spec_error(tmp_path, garbage):
    path = tmp_path / "g.yaml"
    path.write_bytes(garbage)
    _load_or_error(path)


@SETTINGS
@given(st.data())
def test_mutated_specs_are_valid_or_a_spec_error(tmp_path, data):
    text = BASE_SPEC
    for _ in range(data.draw(st.integers(1, 4))):
        i = data.draw(st.integers(0, len(text) - 1))
        action = data.draw(st.sampled_from(["delete", "insert", "replace"]))
        ch = data.draw(yaml_alphabet)
        if action == "delete":
            text = text[:i] + text[i + 1:]
        elif action == "insert":
            text = text[:i] + ch + text[i:]
        else:
            text = text[:i] + ch + text[i + 1:]
    _load_or_error(tmp_path / "m.yaml", text=text)


# -- garbage data ---------------------------------------------------------------------------

cell = st.one_of(
    st.text(st.sampled_from(list(",;\t\"\n\r .-+eE/") + list("0123456789") + list("NAinf")
                            + ["\u00e9", "\x00"]), max_size=8),
    st.sampled_from(["n/a", "NA", "", "inf", "-1e400", "12,3", "Old Co", "New Co"]),
)


def _measure_or_error(spec_path: Path) -> None:
    spec = load_spec(spec_path)
    try:
        m = load_measurements(spec)
    except DataError as exc:
        assert exc.issues and str(exc)
    else:
        assert isinstance(m, Measurements)
        assert tuple(m.table.columns) == MEASUREMENT_COLUMNS
        used = m.table[~m.table["excluded"]]
        assert used["value"].map(math.isfinite).all()


@SETTINGS
@given(st.lists(st.lists(cell, min_size=1, max_size=6), max_size=12))
def test_garbage_csv_is_a_data_error_or_a_table(tmp_path, rows):
    header = "lot,supplier,width,height_mm\n"
    body = "\n".join(",".join(r) for r in rows)
    (tmp_path / "lots.csv").write_text(header + body, encoding="utf-8")
    (tmp_path / "spec.yaml").write_text(BASE_SPEC, encoding="utf-8")
    _measure_or_error(tmp_path / "spec.yaml")


@SETTINGS
@given(st.binary(max_size=300))
def test_garbage_bytes_as_csv(tmp_path, garbage):
    (tmp_path / "lots.csv").write_bytes(garbage)
    (tmp_path / "spec.yaml").write_text(BASE_SPEC, encoding="utf-8")
    _measure_or_error(tmp_path / "spec.yaml")


@SETTINGS
@given(st.data())
def test_mutated_csv_is_a_data_error_or_a_table(tmp_path, data):
    text = BASE_CSV
    for _ in range(data.draw(st.integers(1, 5))):
        i = data.draw(st.integers(0, len(text) - 1))
        ch = data.draw(st.sampled_from(list(",;\"\n x.-") + ["NA", "inf", "1e9"]))
        text = text[:i] + ch + text[i + 1:]
    (tmp_path / "lots.csv").write_text(text, encoding="utf-8")
    (tmp_path / "spec.yaml").write_text(BASE_SPEC, encoding="utf-8")
    _measure_or_error(tmp_path / "spec.yaml")


@settings(max_examples=20, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.binary(min_size=1, max_size=300))
def test_garbage_xlsx_is_a_data_error(tmp_path, garbage):
    (tmp_path / "lots.xlsx").write_bytes(b"PK\x03\x04" + garbage)
    (tmp_path / "spec.yaml").write_text(BASE_SPEC.replace("lots.csv", "lots.xlsx"),
                                        encoding="utf-8")
    _measure_or_error(tmp_path / "spec.yaml")
