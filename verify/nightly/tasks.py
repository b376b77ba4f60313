"""What one spec needs and gives back: the settings of a nightly run, the
:class:`Task` a worker evaluates and the :class:`Outcome` it sends back (both picklable), and
the run's clock."""

from __future__ import annotations

from dataclasses import dataclass

from ..ledger import DataFile, Fingerprint, Record, Standing

DEFAULT_OUT = "reports/nightly"
DEFAULT_LOCK_TIMEOUT = 60.0
DEFAULT_SPEC_TIMEOUT = 600.0
QUARANTINE = "quarantine"
# what every evaluation imports (scipy.stats is not listed: evaluation uses scipy.special and
# imports scipy.stats' parts only where a check needs them; the package costs ~0.7 s to import)
HEAVY_MODULES = ("numpy", "pandas", "openpyxl", "verify.evaluate", "verify.data",
                 "verify.report.workbook", "verify.report.json_result")


@dataclass(frozen=True)
class Task:
    """One spec that must run, as handed to a worker (picklable)."""

    spec_key: str  # the spec's absolute path: its identity in the ledger
    spec_path: str  # as found under SPEC_DIR, for messages and the result
    out_dir: str
    run_id: str
    command: str
    final: bool  # --final given
    evaluate_final: bool  # --final, or the record in force was locked by --final
    fingerprint: Fingerprint
    record: Record | None  # this version's decision of record
    previous: Record | None  # the newest record of another version of the spec
    data_root: str | None
    max_data_mb: float | None = None
    snapshot: bool = True  # keep data snapshots in <out>/snapshots (--no-snapshot: False)
    # why a spec whose inputs did not change runs again (its last result's files are missing)
    rerun_reason: str | None = None


@dataclass(frozen=True)
class Outcome:
    """What a worker sends back for one spec (picklable)."""

    spec_key: str
    started: str
    finished: str
    error: str | None = None
    spec_sha256: str | None = None
    data_files: tuple[DataFile, ...] = ()
    decision: str | None = None
    characteristics: tuple[tuple[str, str], ...] = ()
    lots: tuple[tuple[str, tuple[str, ...]], ...] = ()
    plan_complete: bool | None = None
    standing: Standing | None = None
    workbook_path: str | None = None
    result_path: str | None = None
    workbook_sha256: str | None = None
    evaluation_id: str | None = None
    supersedes_reason: str | None = None
    # the outputs as temporary files; the parent renames them after the ledger entry
    tmp_workbook: str | None = None
    tmp_result: str | None = None
    # (temporary file, target) of a SQL source's snapshot, renamed with the outputs
    tmp_extras: tuple[tuple[str, str], ...] = ()


def _utc() -> str:
    from ..audit import utc_now

    return utc_now()


def _stamp(iso: str) -> str:
    """``2025-01-02T03:04:05.123Z`` -> ``20250102T030405Z`` (for file names)."""
    return iso[:19].replace("-", "").replace(":", "") + "Z"
