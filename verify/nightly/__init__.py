"""``verify nightly``: run every spec under a folder on the latest lot data, unattended.

For each spec found (as ``verify run`` finds them), a nightly run

1. **fingerprints** its inputs: the sha256 of the spec file, of each data file (and of the
   characteristics table a spec names with ``characteristics_from``), and the tool
   version. When they match the spec's last result in the ledger the spec is skipped and
   recorded as ``UNCHANGED``; this path reads no data and imports neither scipy nor pandas
   (a spec's data path comes from the ledger). A new or edited spec runs whatever its data
   are, so its data files are fingerprinted by the evaluation that reads them (the entry names
   the files it read); where a data root is given, or the evaluation fails, they are read by
   a light YAML parse of the spec first (``fingerprints.fingerprint``, ``defer``).
2. **runs** the others through the same evaluation as ``verify run``
   (:func:`verify.runner.prepare`) in ``--jobs`` worker processes, each importing the heavy
   libraries once, and writes ``<out>/<spec-stem>/<run id>-<DECISION>.xlsx`` and ``.json``
   (never overwritten) and ``<out>/<spec-stem>/latest.json``. A worker writes temporary files
   only; the parent renames them into place after the ledger entry that names them is
   written, so a result file never exists without its entry.

Isolation: everything that touches a spec's files, the fingerprint's hashing included, runs in
a worker process (:mod:`verify.isolation`) under ``--spec-timeout``; a spec whose files hang,
grow without end or kill their worker is ``ERROR`` with the reason, and the others run. Workers
stop when the parent dies. At start, under the lock, a run removes temporary files left by a
killed run and moves result files that no ledger entry names into ``<out>/quarantine/<run>/``,
saying so. A spec whose last result's files are not in place (killed between its entry and
their renaming) is evaluated again instead of passing as ``UNCHANGED``, and a ``latest.json``
out of step with the standing result is copied again from it.
3. **locks the decision of record** of each spec version (its sha256) on the first run at which
   every process has reached ``min_n`` (with no ``min_n``: the first run), or the first run
   given ``--final``. Later runs monitor: their workbooks say "monitoring; decision of record:
   PASS on <date>, run <id>" and flag drift when the newer data would decide differently; the
   record never changes. An edited spec starts a new record naming the one it supersedes.
4. **records** every spec in the append-only ledger (:mod:`verify.ledger`), one transaction per
   spec, a broken spec as ``ERROR`` with its message while the others run on.
5. **reports**: ``<out>/digest-<date>.xlsx``, one line per spec on stdout, progress on stderr.

Exit status: 2 if any spec is ERROR (or the ledger is locked by another run), else 1 if any
HOLD or drift, else 3 if any PENDING, else 0. Unchanged specs count with the result they carry.

The package by topic: :mod:`~verify.nightly.tasks` (settings, the task and outcome),
:mod:`~verify.nightly.fingerprints`, :mod:`~verify.nightly.worker` (evaluating one spec),
:mod:`~verify.nightly.history` (history files, staged outputs, strays),
:mod:`~verify.nightly.record` (ledger entries, the decision of record) and
:mod:`~verify.nightly.run` (:func:`run_nightly`). The command's arguments are in
:mod:`verify.cli_nightly`; ``python -m verify.nightly`` runs it.
"""

from .fingerprints import Probe, ProbeTask, data_paths_light, fingerprint, outside_root, probe
from .history import anchor_result, history_paths
from .run import NightlyResult, run_nightly
from .tasks import (
    DEFAULT_LOCK_TIMEOUT,
    DEFAULT_OUT,
    DEFAULT_SPEC_TIMEOUT,
    HEAVY_MODULES,
    QUARANTINE,
    Outcome,
    Task,
)
from .worker import init_worker, run_task

__all__ = [
    "DEFAULT_LOCK_TIMEOUT", "DEFAULT_OUT", "DEFAULT_SPEC_TIMEOUT", "HEAVY_MODULES", "QUARANTINE",
    "NightlyResult", "Outcome", "Probe", "ProbeTask", "Task", "anchor_result", "data_paths_light",
    "fingerprint", "history_paths", "init_worker", "outside_root", "probe", "run_nightly",
    "run_task",
]
