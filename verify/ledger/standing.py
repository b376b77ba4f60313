"""The decision of record: where a run stands against the record of its spec version
(:func:`judge`, a pure function) and the drift between a record and a newer run."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from .rows import Record


@dataclass(frozen=True)
class Standing:
    """Where one run stands against the decision of record of its spec version.

    ``kind`` is ``PROVISIONAL`` (no record yet: the plan is not complete), ``RECORD`` (this run
    locks the record: ``new_record`` is to be written with its entry) or ``MONITORING`` (a
    record stands; ``drift`` says whether these data would decide differently). ``text`` is
    the line the workbook prints (:attr:`verify.model.Evaluation.monitoring`).
    """

    kind: str
    text: str
    drift: bool = False
    drift_note: str | None = None
    record: Record | None = None
    new_record: Record | None = None


def drift_between(record: Record, decision: str, characteristics: Mapping[str, str]) -> list[str]:
    """The differences between a record's decisions and a newer run's, in words."""
    out = []
    if decision != record.decision:
        out.append(f"overall {record.decision} -> {decision}")
    for name in list(record.characteristics) + [
            n for n in characteristics if n not in record.characteristics]:
        old, new = record.characteristics.get(name), characteristics.get(name)
        if old != new:
            out.append(f"{name} {old or '(absent)'} -> {new or '(absent)'}")
    return out


def judge(*, spec_path: str, spec_sha256: str, run_id: str, now: str, decision: str,
          characteristics: Mapping[str, str], plan_complete: bool, min_n: int | None,
          shortfall: str | None, final: bool, record: Record | None,
          previous: Record | None, supersedes_reason: str | None = None) -> Standing:
    """Decide this run's standing against the decision of record (a pure function).

    Parameters
    ----------
    record
        The decision of record of this spec version (same path and sha256), if locked.
    previous
        The newest record of an earlier version of the spec (another sha256), if any.
    plan_complete
        Every process of every characteristic has reached ``min_n`` (always true without one).
    final
        The run was given ``--final``: the trial is declared complete.

    Examples
    --------
    >>> s = judge(spec_path="a.yaml", spec_sha256="ab", run_id="r1", now="2025-01-02T02:00:00Z",
    ...           decision="PASS", characteristics={"bore": "PASS"}, plan_complete=True,
    ...           min_n=30, shortfall=None, final=False, record=None, previous=None)
    >>> s.kind, s.new_record.basis
    ('RECORD', 'every process reached min_n')
    """
    if record is not None:
        changes = drift_between(record, decision, characteristics)
        text = f"monitoring; decision of record: {record.describe()}"
        if changes:
            note = "; ".join(changes)
            text += (f"; drift: these data would decide {decision} ({note}); the decision of "
                     "record stands")
            return Standing("MONITORING", text, drift=True, drift_note=note, record=record)
        return Standing("MONITORING", text + "; no drift: these data decide the same",
                        record=record)
    previous = previous if previous is not None and previous.spec_sha256 != spec_sha256 else None
    if plan_complete or final:
        if plan_complete:
            basis = ("every process reached min_n" if min_n is not None
                     else "first run (the spec sets no min_n)")
        else:
            basis = "--final: the trial was declared complete"
        new = Record(spec_path=spec_path, spec_sha256=spec_sha256, run_id=run_id, decided=now,
                     decision=decision, characteristics=dict(characteristics), basis=basis,
                     final=final, supersedes=previous.id if previous is not None else None,
                     supersedes_reason=supersedes_reason if previous is not None else None)
        text = f"decision of record: {decision}, locked by this run ({run_id}, {now[:10]}): {basis}"
        if previous is not None:
            text += f"; supersedes the record of the earlier spec version, {previous.describe()}"
            if supersedes_reason:
                text += f" (supersedes_reason: {supersedes_reason})"
        return Standing("RECORD", text, new_record=new)
    text = "provisional: no decision of record yet"
    if shortfall:
        text += f" ({shortfall})"
    if previous is not None:
        text += (f"; the spec was edited after the decision of record {previous.describe()}, "
                 "which this version's record will supersede")
    return Standing("PROVISIONAL", text)
