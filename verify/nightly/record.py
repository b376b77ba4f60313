"""Ledger entries and the decision of record: the entry of an UNCHANGED spec, the
entry (and record) of an evaluated one, the workbook's view of the standing, and a record in
words."""

from __future__ import annotations

from dataclasses import replace

from .. import __version__
from ..ledger import Entry, Ledger, Record, Standing
from .tasks import Outcome, Task, _utc


def _record_standing(standing: Standing, now: str, run_id: str):
    """The workbook's view of the standing: which decision is of record, and drift."""
    from ..model import RecordStanding

    rec = standing.record if standing.kind == "MONITORING" else standing.new_record
    if standing.kind == "RECORD":
        return RecordStanding("RECORD", rec.decision, now, run_id)
    if standing.kind == "MONITORING" and rec is not None:
        return RecordStanding("MONITORING", rec.decision, rec.decided, rec.run_id,
                              drift=standing.drift)
    return RecordStanding("PROVISIONAL")


def _record_text(ledger: Ledger, record_id: int | None) -> str | None:
    if record_id is None:
        return None
    rec = ledger.record_by_id(record_id)
    return None if rec is None else rec.describe()


def _unchanged(run_id: str, key: str, now: str, last: Entry) -> Entry:
    """An UNCHANGED entry carrying the standing result ``last``."""
    standing = "MONITORING" if last.standing == "RECORD" else last.standing
    return Entry(
        run_id=run_id, spec_path=key, tool_version=__version__, started=now, finished=_utc(),
        state="UNCHANGED", spec_sha256=last.spec_sha256, data_files=last.data_files,
        decision=last.decision, characteristics=last.characteristics, final=last.final,
        plan_complete=last.plan_complete, standing=standing, record_id=last.record_id,
        drift=last.drift, drift_note=last.drift_note, monitoring=last.monitoring,
        lots=last.lots, workbook_path=last.workbook_path, result_path=last.result_path,
        workbook_sha256=last.workbook_sha256, evaluation_id=last.evaluation_id,
        based_on=last.id)


def _entry_from(run_id: str, task: Task, o: Outcome) -> tuple[Entry, Record | None]:
    fp = task.fingerprint
    if o.error is not None:
        return Entry(run_id=run_id, spec_path=task.spec_key, tool_version=fp.tool_version,
                     started=o.started, finished=o.finished, state="ERROR",
                     spec_sha256=fp.spec_sha256, data_files=o.data_files or fp.data_files,
                     final=task.final,
                     error=o.error), None
    st = o.standing
    record = None
    if st is not None and st.new_record is not None:
        record = replace(st.new_record, workbook_path=o.workbook_path, result_path=o.result_path)
    # The data files as the evaluation read them (a file appended during the run is recorded
    # as read, so the next night compares against what this result rests on).
    data_files = o.data_files or fp.data_files
    entry = Entry(
        run_id=run_id, spec_path=task.spec_key, tool_version=fp.tool_version, started=o.started,
        finished=o.finished, state="RUN", spec_sha256=o.spec_sha256, data_files=data_files,
        decision=o.decision, characteristics=dict(o.characteristics), final=task.evaluate_final,
        plan_complete=o.plan_complete, standing=st.kind if st else None,
        record_id=st.record.id if st is not None and st.record is not None else None,
        drift=bool(st and st.drift), drift_note=st.drift_note if st else None,
        monitoring=st.text if st else None, lots={p: tuple(v) for p, v in o.lots},
        workbook_path=o.workbook_path, result_path=o.result_path,
        workbook_sha256=o.workbook_sha256, evaluation_id=o.evaluation_id)
    return entry, record
