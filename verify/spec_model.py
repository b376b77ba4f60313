"""The validated, immutable spec model (format ``verify/1``).

:func:`verify.spec.load_spec` builds these objects from YAML with every default made explicit.
Nothing downstream reads YAML; everything reads these frozen dataclasses.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

DESIGNS = ("welch", "pooled", "paired")
SIDES = ("two-sided", "lower", "upper")
UNITS = ("part", "lot")
MULTIPLICITY = ("none", "holm", "bonferroni")
SPREAD_METHODS = ("f", "brown-forsythe")
SPREAD_DESIGNS = ("paired", "independent")
CAPABILITY_INDICES = ("cpk", "ppk")
CAPABILITY_JUDGES = ("estimate", "lower_bound")
DISTRIBUTIONS = ("normal", "lognormal", "weibull", "box-cox", "any")
KINDS = ("measured", "pass-fail")
RATE_SHIFT_METHODS = ("newcombe", "score")
RATE_SHIFT_TESTS = ("fisher", "boschloo")


@dataclass(frozen=True)
class Margin:
    """An equivalence margin [low, high] around 0 (low < 0 < high), in the data's unit.

    ``text`` is the margin as written in the spec ("0.02", "[-0.01, 0.03]", "0.5%").
    """

    low: float
    high: float
    text: str


@dataclass(frozen=True)
class TargetCheck:
    margin: Margin | None = None
    detect: float | None = None  # planning: the departure that must not go unseen


@dataclass(frozen=True)
class ShiftCheck:
    design: str = "welch"  # welch | pooled | paired
    margin: Margin | None = None
    detect: float | None = None


@dataclass(frozen=True)
class SpreadCheck:
    method: str = "f"  # f | brown-forsythe: which one-sided test decides
    # paired: Pitman-Morgan on the matched pairs (the default whenever data.pair is declared);
    # independent: the pairs are ignored knowingly (F-test or Brown-Forsythe)
    design: str = "independent"
    design_given: bool = False  # the spec wrote design: (an opt-out is reported as such)


@dataclass(frozen=True)
class CapabilityCheck:
    """The capability criterion: ``index`` (cpk | ppk) judged against ``min``.

    ``judge: estimate`` compares the point estimate with ``min``; ``judge: lower_bound`` compares
    its lower one-sided confidence bound at ``confidence``. ``min_cpk: x`` in a spec is short for
    ``{index: cpk, min: x}``.
    """

    min_cpk: float = 1.33  # the required minimum of ``index`` (the field keeps its first name)
    subgroup: str | None = None  # "lot": within sigma from lot subgroup ranges; None: moving range
    index: str = "cpk"  # cpk (within-process sigma) | ppk (overall sd)
    judge: str = "estimate"  # estimate | lower_bound
    confidence: float = 0.95

    @property
    def min(self) -> float:
        """The required minimum of ``index``."""
        return self.min_cpk

    @property
    def label(self) -> str:
        return "Cpk" if self.index == "cpk" else "Ppk"


@dataclass(frozen=True)
class ConformanceCheck:
    """The conformance criterion: the new process's tolerance interval (``coverage`` of the
    parts with ``confidence``) must lie within the limits.

    ``side`` is ``two-sided`` (two limits: a two-sided interval), ``lower`` or ``upper`` (a
    one-sided bound against that limit only); the spec's limits decide it when not written.
    """

    coverage: float = 0.99
    confidence: float = 0.95
    side: str = "two-sided"


@dataclass(frozen=True)
class RateCheck:
    """Pass/fail: the new process's failure rate is shown to be at most ``max`` (the exact
    one-sided upper bound at ``confidence`` is at most ``max``)."""

    max: float
    confidence: float = 0.95


@dataclass(frozen=True)
class RateShiftCheck:
    """Pass/fail: the new failure rate is no worse than the old one.

    With ``margin``: the upper end of the (1 - 2 alpha) interval for p_new - p_old (``method``
    newcombe or score) must lie below it. Without: a one-sided exact ``test`` (fisher or
    boschloo) that the new rate is higher HOLDs when significant. ``detect`` is a planning
    value: the rate difference that must not go unseen.
    """

    margin: float | None = None
    method: str = "newcombe"
    test: str = "fisher"
    detect: float | None = None


@dataclass(frozen=True)
class Checks:
    """The checks that run for one characteristic; None means the check does not run."""

    target: TargetCheck | None = None
    shift: ShiftCheck | None = None
    spread: SpreadCheck | None = None
    capability: CapabilityCheck | None = None
    conformance: ConformanceCheck | None = None
    rate: RateCheck | None = None
    rate_shift: RateShiftCheck | None = None


@dataclass(frozen=True)
class Characteristic:
    name: str
    unit: str
    column: str | None  # wide layout
    match: str | None  # long layout: the value of data.characteristic for this characteristic
    target: float | None
    limits: tuple[float | None, float | None] | None
    side: str  # two-sided | lower | upper: which departure is harmful
    checks: Checks
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
