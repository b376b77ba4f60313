"""The validated, immutable spec model (format ``verify/1``).

:func:`verify.spec.load_spec` builds these objects from YAML with every default made explicit.
Nothing downstream reads YAML; everything reads these frozen dataclasses.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field, fields, make_dataclass
from functools import cache
from pathlib import Path

SIDES = ("two-sided", "lower", "upper")
UNITS = ("part", "lot")
MULTIPLICITY = ("none", "holm", "bonferroni")
DISTRIBUTIONS = ("normal", "lognormal", "weibull", "box-cox", "any")
KINDS = ("measured", "pass-fail")
# the characteristic's key for its nominal value; the same word names a check kind, so code
# outside the kind's package reads the key through this name (the shape test allows it here)
TARGET_KEY = "target"


class _ChecksBase:
    """Reading of :class:`Checks` as a mapping of the checks that run."""

    __slots__ = ()

    def items(self) -> Iterator[tuple[str, object]]:
        """(name, settings) of each check that runs, in registry order."""
        for name in self._names():
            value = getattr(self, name)
            if value is not None:
                yield name, value

    def get(self, name: str, default: object = None) -> object:
        """The settings of check ``name``; ``default`` when it does not run."""
        value = getattr(self, name, None) if name in self._names() else None
        return default if value is None else value

    def __getitem__(self, name: str) -> object:
        value = self.get(name)
        if value is None:
            raise KeyError(name)
        return value

    def __iter__(self) -> Iterator[str]:
        return (name for name, _value in self.items())

    def __len__(self) -> int:
        return sum(1 for _ in self.items())

    def __contains__(self, name: object) -> bool:
        return isinstance(name, str) and self.get(name) is not None

    def keys(self) -> list[str]:
        return list(self)

    def values(self) -> list[object]:
        return [v for _n, v in self.items()]

    @classmethod
    def _names(cls) -> tuple[str, ...]:
        # the field names, found once per class (dataclasses.fields builds its tuple per call,
        # and get() is asked thousands of times per layout)
        names = cls.__dict__.get("_field_names")
        if names is None:
            names = tuple(f.name for f in fields(cls))
            type.__setattr__(cls, "_field_names", names)
        return names


@cache
def _checks_class() -> type:
    """One field per registered kind (None: the check does not run), in registry order."""
    from .checks import names

    cls = make_dataclass(
        "Checks", [(name, object, field(default=None)) for name in names()],
        bases=(_ChecksBase,), frozen=True)
    cls.__module__ = __name__  # pickled by name, as verify.spec_model.Checks
    cls.__doc__ = (
        "The checks that run for one characteristic; None means the check does not run.\n\n"
        "A frozen dataclass with one field per kind of check (``checks.<name>``, "
        "``dataclasses.replace``), read as a mapping too: ``get(name)``, ``name in checks``, "
        "and iteration over the names of the checks that run, in registry order.")
    return cls


@dataclass(frozen=True)
class Characteristic:
    name: str
    unit: str
    column: str | None  # wide layout
    match: str | None  # long layout: the value of data.characteristic for this characteristic
    target: float | None
    limits: tuple[float | None, float | None] | None
    side: str  # two-sided | lower | upper: which departure is harmful
    checks: _ChecksBase  # a Checks: one field per kind of check (see Checks)
    line: int | None = None  # line in the spec, for messages
    # normal | lognormal | weibull | box-cox | any: the model of the new parts behind
    # capability and conformance (the location and spread tests stay as they are)
    distribution: str = "normal"
    # pass-fail characteristics: per-part results (fail_texts / pass_texts read from column or
    # match) or per-lot counts (counts = (inspected column, failed column))
    kind: str = "measured"  # measured | pass-fail
    fail_texts: tuple[str, ...] = ()
    pass_texts: tuple[str, ...] = ()
    counts: tuple[str, str] | None = None

    @property
    def pass_fail(self) -> bool:
        return self.kind == "pass-fail"

    @property
    def inspected_name(self) -> str:
        """The characteristic name of the tidy rows holding per-lot inspected counts."""
        return f"{self.name} (inspected)"

    @property
    def lower(self) -> float | None:
        return None if self.limits is None else self.limits[0]

    @property
    def upper(self) -> float | None:
        return None if self.limits is None else self.limits[1]


@dataclass(frozen=True)
class DataSpec:
    file: Path  # resolved against the spec's folder
    file_text: str  # as written in the spec
    lot: str
    sheet: str | None = None
    process: str | None = None
    old: tuple[str, ...] = ()
    new: tuple[str, ...] = ()
    pair: str | None = None
    characteristic: str | None = None  # long layout
    value: str | None = None  # long layout
    order: str | None = None  # optional production-order column; default: source row order
    decimal: str = "."
    missing: tuple[str, ...] = ("", "NA")
    ignore_other: bool = False
    stream: str | None = None  # column naming the stream (cavity, spindle) of a new part
    part: str | None = None  # the part-serial column (traceability, duplicates, by-part keys)
    keep: tuple[str, ...] = ()  # extra columns carried to the sheet and the JSON
    encoding: str | None = None  # text files: declared encoding; None: detected
    formula_cells: str = "error"  # xlsx: "error" or "saved-results"
    filters: tuple[tuple[str, str, object], ...] = ()  # parquet: (column, operator, value)
    source: str = "file"  # "file" or "sql"
    url: str | None = None  # sql: a URL without password, as written
    url_env: str | None = None  # sql: name of the environment variable holding the URL
    query: str | None = None  # sql: the SELECT statement
    params: tuple[tuple[str, object], ...] = ()  # sql: bound parameters, sorted by name

    @property
    def layout(self) -> str:
        return "long" if self.characteristic is not None else "wide"


@dataclass(frozen=True)
class LotLists:
    old: tuple[str, ...]
    new: tuple[str, ...]


@dataclass(frozen=True)
class Exclusion:
    reason: str
    by: str
    lot: str | None = None
    row: int | None = None
    line: int | None = None  # line in the spec, for messages
    characteristic: str | None = None  # only this characteristic's measurements; None: all
    part: str | None = None  # a part serial (data.part)


@dataclass(frozen=True)
class Correction:
    """One corrected data cell: the file is untouched; the original text stays on record."""

    column: str
    value: float
    reason: str
    by: str
    row: int | None = None
    part: str | None = None
    characteristic: str | None = None  # long layout with part: which measurement of the part
    line: int | None = None  # line in the spec, for messages


@dataclass(frozen=True)
class PlanSettings:
    """Planning inputs recorded in the spec (used by ``verify plan`` and achieved power)."""

    power: float = 0.9
    true_shift: float = 0.0
    pair_correlation: float | None = None


@dataclass(frozen=True)
class Spec:
    path: Path
    text: str  # the spec file's text, verbatim
    sha256: str
    title: str
    data: DataSpec
    characteristics: tuple[Characteristic, ...]
    format: str = "verify/1"
    change_id: str | None = None
    alpha: float = 0.05
    lots: LotLists | None = None
    unit_of_analysis: str = "part"
    min_n: int | None = None  # planned units of the new process (and of the old, see below)
    min_n_old: int | None = None  # per-process plan {old, new}; None: the old plan is min_n
    multiplicity: str = "none"
    exclude: tuple[Exclusion, ...] = ()
    corrections: tuple[Correction, ...] = ()
    plan: PlanSettings = field(default_factory=PlanSettings)
    supersedes_reason: str | None = None
    # key path -> (value, came_from_default); for the workbook's and the audit's parameter list
    resolved: tuple[tuple[str, str, bool], ...] = ()
    # the table named by characteristics_from (verify.spec_table.CharacteristicsTable), if any
    characteristics_table: object | None = None

    def planned(self, process: str) -> int | None:
        """The planned units for ``process`` ("old", "new" or "pairs"); None: no plan.

        Pairs must reach the larger of the two plans (each pair is one unit of each process).
        """
        if self.min_n is None:
            return None
        old = self.min_n if self.min_n_old is None else self.min_n_old
        return {"old": old, "new": self.min_n}.get(process, max(old, self.min_n))

    @property
    def min_n_text(self) -> str | None:
        """The plan as the spec wrote it: "30" or "old 20, new 30"."""
        if self.min_n is None:
            return None
        if self.min_n_old is None:
            return str(self.min_n)
        return f"old {self.min_n_old}, new {self.min_n}"

    @property
    def stem(self) -> str:
        return self.path.stem

    def __repr__(self) -> str:
        return (f"<Spec {self.title!r} ({self.path.name}): {len(self.characteristics)} "
                f"characteristics, data {self.data.file_text}>")

    def characteristic(self, name: str) -> Characteristic:
        for c in self.characteristics:
            if c.name == name:
                return c
        raise KeyError(name)


def __getattr__(name: str) -> object:
    """The kinds' spec dataclasses (``Margin``, ``ShiftCheck``, ...) live in their ``spec``
    hooks (``verify.checks.<package>.spec``); they stay importable from here."""
    if name == "Checks":
        # built on first use, not when this module loads: the registry's discovery imports
        # the kind packages, and one of them importing this module must not meet a half-made one
        return _checks_class()
    from .checks import kinds

    for k in kinds():
        hook = k.hook("spec")
        if name in getattr(hook, "__all__", ()):
            return getattr(hook, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
