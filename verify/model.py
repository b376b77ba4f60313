"""Result objects shared by the layers: loaded measurements and the evaluation.

Data flows one way: spec + measurements -> :func:`verify.evaluate.evaluate` -> :class:`Evaluation`
-> report (workbook, JSON), audit, CLI. The report layer reads these objects and never calls a
statistics function.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Literal

from .stats._frozen import fast_init

if TYPE_CHECKING:  # pandas is heavy; only needed for annotations here
    import pandas as pd

    from .spec_model import Characteristic, Spec
    from .stats.limits import BeyondLimits

Decision = Literal["PASS", "HOLD", "PENDING"]
DECISION_ORDER = {"PASS": 0, "PENDING": 1, "HOLD": 2}

# Columns of the tidy measurements table, in this order.
MEASUREMENT_COLUMNS = (
    "source_file",  # str: the data file's path as written in the spec
    "source_row",  # int: row number as a spreadsheet user counts it (header row = 1)
    "order",  # int: production order within the file (0-based, from data.order or row order)
    "lot",  # str
    "process",  # str: "old", "new" or "" (neither: a lot in neither list, an ignored value)
    "pair",  # str or "" when no pair key
    "characteristic",  # str: the characteristic's name from the spec
    "value",  # float; NaN only where the cell was a declared missing text (then excluded)
    "excluded",  # bool
    "exclusion_reason",  # str, "" when used
)


@dataclass(frozen=True)
class DataFileInfo:
    path: str  # as written in the spec
    resolved_path: str
    sha256: str
    size: int  # bytes
    encoding: str  # "utf-8", "utf-8-sig", "windows-1252", "latin-1", "xlsx", "parquet", "sql"
    rows_read: int  # data rows in the file (excluding the header)
    rows_used: int  # rows with at least one used measurement
    rows_excluded: int
    exclusions: tuple[tuple[str, int], ...] = ()  # (reason, number of measurements)
    sheet: str | None = None
    # SQL sources: kind, url (password masked), url_env, query, params, server, rows_fetched;
    # sha256 and size are then those of the fetched rows' canonical CSV (the run's snapshot)
    origin: dict | None = None


@dataclass(frozen=True)
class Measurements:
    """One tidy table with a row per measurement, plus what loading found."""

    table: pd.DataFrame  # columns MEASUREMENT_COLUMNS
    files: tuple[DataFileInfo, ...]
    unassigned_lots: tuple[str, ...] = ()  # lots matching neither lots.old nor lots.new
    notes: tuple[str, ...] = ()  # e.g. "read as Latin-1 (not UTF-8)"
    # traceability beside ``table`` (same rows, same index): "part", "process_value" (the
    # process as written in the data), "original" and "correction" (corrected cells) and
    # "keep:<column>" (data.keep); None when the spec asks for none of them
    trace: pd.DataFrame | None = None

    def __repr__(self) -> str:
        files = ", ".join(f.path for f in self.files)
        return (f"<Measurements: {len(self.table)} measurements from {files or 'no file'}; "
                ".table for the tidy table>")

    def values(self, characteristic: str, process: str):
        """Used values of one characteristic and process, in production order (numpy array)."""
        t = self.table
        sel = t[
            (t["characteristic"] == characteristic) & (t["process"] == process) & ~t["excluded"]
        ]
        return sel.sort_values("order", kind="stable")["value"].to_numpy(dtype=float)


@fast_init
@dataclass(frozen=True)
class ProcessSummary:
    process: str  # "old" | "new"
    n: int  # units analysed (parts, or lots when unit_of_analysis is lot)
    mean: float | None
    sd: float | None
    lots: tuple[str, ...]
    n_parts: int  # measurements used, whatever the unit
    minimum: float | None = None
    maximum: float | None = None
    # parts beyond the specification limits (:class:`verify.stats.limits.BeyondLimits`: counts
    # below and above, normal-model ppm); None when the characteristic has no limits
    beyond_limits: BeyondLimits | None = None
    # lots as variance components (one-way random-effects ANOVA on the parts); None where the
    # process has fewer than 2 lots of at least 2 parts
    sd_within_lot: float | None = None
    sd_between_lot: float | None = None
    between_lot_set_to_zero: bool = False  # the between-lot estimate was negative, set to 0
    # pass-fail characteristics: parts that failed, the failure rate, and (lot, inspected,
    # failed) per lot in order of first appearance; n is then the parts inspected
    failures: int | None = None
    rate: float | None = None
    lot_counts: tuple[tuple[str, int, int], ...] = ()


class CheckDetails:
    """Base of each kind's typed, frozen result details (the dataclasses in its ``result`` hook,
    ``verify/checks/<package>/result.py``).

    A subclass is a frozen dataclass; :meth:`as_mapping` gives its fields in declared order for
    the JSON's ``extra`` object and the characteristic sheet's rows. Fields named in
    ``OMITTED_WHEN_NONE`` are left out of that mapping while they are None (a quantity that
    exists only for some designs or models, rather than one that could not be computed).
    """

    OMITTED_WHEN_NONE: tuple[str, ...] = ()
    # fields the JSON and the sheets show under names of their own (not in the mapping)
    SHOWN_APART: tuple[str, ...] = ()

    def as_mapping(self) -> dict[str, float | int | str | None]:
        from dataclasses import fields

        out = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name in self.SHOWN_APART:
                continue
            if value is None and f.name in self.OMITTED_WHEN_NONE:
                continue
            out[f.name] = value
        return out


@fast_init
@dataclass(frozen=True)
class CheckResult:
    """One check of one characteristic, with its outcome and reason in words."""

    check: str  # the kind's name (``verify.checks.kinds()``)
    method: str  # e.g. "TOST (Welch)", "one-sample t-test", "F-test, one-sided"
    hypothesis: str  # what is being shown, in words
    alternative: str | None
    margin: tuple[float, float] | None
    outcome: Decision
    reason: str
    estimate: float | None = None
    standard_error: float | None = None
    statistic: float | None = None
    df: float | None = None
    p_value: float | None = None
    p_adjusted: float | None = None  # after holm/bonferroni, difference tests only
    ci_low: float | None = None
    ci_high: float | None = None
    ci_level: float | None = None
    critical_value: float | None = None
    # planning
    power: float | None = None  # achieved power where it applies
    power_note: str | None = None  # what the power is the power *of*
    detectable_shift: float | None = None  # smallest shift detected with 80% power
    planned_n: int | None = None  # n per process the plan asks for (target power)
    design: str | None = None  # one-sample | welch | pooled | paired
    # the kind's own quantities (its ``result`` hook's frozen dataclass); None where the check
    # could not be computed
    details: CheckDetails | None = None

    def details_mapping(self) -> dict[str, float | int | str | None]:
        """The details as a mapping in declared order (empty without details): the JSON's
        ``extra`` object."""
        return {} if self.details is None else self.details.as_mapping()


@fast_init
@dataclass(frozen=True)
class DiagnosticResult:
    name: str  # "normality", "outliers", "lot effect", "lot count", "stability", "resolution", ...
    method: str
    group: str  # "old", "new", "differences", "all"
    flag: bool
    note: str
    statistic: float | None = None
    p_value: float | None = None
    extra: Mapping[str, float | int | str | None] = field(default_factory=dict)


@fast_init
@dataclass(frozen=True)
class StreamResult:
    """One stream (cavity, spindle, machine) of the new process against the old process."""

    name: str
    n: int
    mean: float | None
    sd: float | None
    decision: Decision
    checks: tuple[CheckResult, ...]


@fast_init
@dataclass(frozen=True)
class CharacteristicResult:
    name: str
    unit: str
    decision: Decision
    reasons: tuple[str, ...]  # the reasons for the decision, in words
    review: tuple[str, ...]  # "review: ..." notes from diagnostics
    processes: Mapping[str, ProcessSummary]  # "old", "new" (old may be absent)
    checks: tuple[CheckResult, ...]
    diagnostics: tuple[DiagnosticResult, ...]
    spec: Characteristic
    pairs: int | None = None  # matched pairs, paired designs
    unmatched_pairs: tuple[str, ...] = ()  # pair keys with one side only
    # the declared model of the new parts: {name, parameters {..}, loglik, gof_method,
    # gof_statistic, gof_pvalue} for a fitted one, {name} for normal and any; "error" where the
    # fit could not be computed
    distribution: Mapping[str, object] | None = None
    # per-stream checks when data.stream is declared (the characteristic decides as its worst)
    streams: tuple[StreamResult, ...] = ()


@dataclass(frozen=True)
class RunInfo:
    run_id: str
    started: str  # ISO 8601 UTC
    finished: str
    user: str
    host: str
    command: str
    tool_version: str
    git_commit: str | None
    versions: Mapping[str, str]  # python, numpy, scipy, pandas, openpyxl


@dataclass(frozen=True)
class SnapshotRecord:
    """Which data snapshots a run kept (see :mod:`verify.snapshots`).

    ``kept`` is False with ``--no-snapshot`` (or when a file changed while the run read it);
    ``note`` says so in words for the audit trail; ``files`` maps each data file's sha256 to
    its snapshot's path.
    """

    kept: bool
    note: str
    folder: str | None = None
    files: tuple[tuple[str, str], ...] = ()  # (sha256, snapshot path)

    def path_of(self, sha256: str) -> str | None:
        return dict(self.files).get(sha256)


@dataclass(frozen=True)
class RecordStanding:
    """Where a nightly run's workbook stands against its spec version's decision of record.

    ``kind`` is ``RECORD`` (this run locked the decision of record: its workbook is the one to
    sign), ``MONITORING`` (a record stands; this workbook shows it, and what these newer data
    would decide only as drift) or ``PROVISIONAL`` (no record yet). ``decision``, ``decided``
    (UTC, ISO 8601) and ``run_id`` describe the decision of record (None while provisional);
    ``drift`` is True when these data would decide differently.
    """

    kind: str
    decision: str | None = None
    decided: str | None = None
    run_id: str | None = None
    drift: bool = False


@dataclass(frozen=True)
class Evaluation:
    spec: Spec
    measurements: Measurements
    characteristics: tuple[CharacteristicResult, ...]
    decision: Decision
    reasons: tuple[str, ...]  # overall, one line per characteristic not PASS
    review: tuple[str, ...]
    rules: tuple[str, ...]  # the decision rules in words, generated from the rule objects
    caution: str
    final: bool
    run: RunInfo
    monitoring: str | None = None  # set by nightly after a decision of record is locked
    standing: RecordStanding | None = None  # set by nightly; None for ``verify run``
    snapshots: SnapshotRecord | None = None  # set when outputs are written
    # the multiplicity family: "characteristic: check" of every test that HOLDs on significance
    # and was computed; the ones that could not be computed are listed apart, counted nowhere
    family: tuple[str, ...] = ()
    family_excluded: tuple[str, ...] = ()

    def characteristic(self, name: str) -> CharacteristicResult:
        for c in self.characteristics:
            if c.name == name:
                return c
        raise KeyError(name)

    def to_frame(self):
        """One row per check (pandas DataFrame): characteristic, check, method, outcome,
        estimate, standard error, statistic, df, p-values, interval, margin, power, reason."""
        from .report.notebook import to_frame

        return to_frame(self)

    def __repr__(self) -> str:
        from .report.notebook import short_repr

        return short_repr(self)

    def _repr_html_(self) -> str:
        from .report.notebook import to_html

        return to_html(self)


def __getattr__(name: str):
    # ``from verify.model import BeyondLimits`` keeps working: the class is the statistics
    # layer's own result, imported only when asked for (scipy is heavy for ``verify check``)
    if name == "BeyondLimits":
        from .stats.limits import BeyondLimits

        return BeyondLimits
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
