"""History files: fresh ``<run id>-<DECISION>`` names, an output folder per spec,
staged outputs renamed into place after their ledger entry, the ledger's head written into a
result, the digest's name, and the clean-up of what an interrupted run left (temporary files,
results no entry names, moved to quarantine)."""

from __future__ import annotations

import contextlib
import hashlib
import os
from collections.abc import Iterable, Sequence
from pathlib import Path

from ..errors import VerifyError
from ..ledger import Entry, Ledger
from .tasks import QUARANTINE, Outcome


def history_paths(out_dir: Path, decision: str, run_id: str) -> tuple[Path, Path]:
    """Fresh ``<run id>-<DECISION>.xlsx`` and ``.json`` paths; never an existing name.

    The run id is the nightly run's (as the ledger and the decision of record cite it), so an
    auditor finds a run's files from its id.
    """
    base = f"{run_id}-{decision}"
    n = 1
    while True:
        name = base if n == 1 else f"{base}-{n}"
        xlsx, js = out_dir / f"{name}.xlsx", out_dir / f"{name}.json"
        if not xlsx.exists() and not js.exists():
            return xlsx, js
        n += 1


def ledger_anchor(ledger_path: Path, entry: Entry) -> dict | None:
    """The result's ``ledger`` key: the ledger path, the entry's id, chain position and hash."""
    if entry.row_hash is None:
        return None
    return {"path": str(ledger_path), "entry_id": entry.id, "chain_position": entry.chain_seq,
            "head": entry.row_hash}


def anchor_result(result_path: str | None, latest: Path | None, ledger_path: Path,
                  entry: Entry) -> None:
    """Add the ledger's chain head after this spec's entry to its result JSON (and latest.json).

    The JSON is written before its ledger entry exists; the ``ledger`` key (the ledger path,
    the entry id, its chain position and hash) is added once the entry is stored, so a result
    anchors the chain up to itself. Replay ignores this key. (A nightly run adds it to the
    staged result before renaming it into place: :func:`_commit`.)
    """
    from ..report.json_text import with_key
    from ..runner import write_text_atomic

    anchor = ledger_anchor(ledger_path, entry)
    if result_path is None or anchor is None:
        return
    path = Path(result_path)
    try:
        text = with_key(path.read_text(encoding="utf-8"), "ledger", anchor)
    except (OSError, ValueError):
        return  # the result stays as written; the ledger still holds the entry
    write_text_atomic(path, text)
    if latest is not None:
        write_text_atomic(latest, text)


def _remove_partials(folder: Path) -> None:
    """Temporary files a stopped worker left in its spec's folder (only it writes there)."""
    if folder.is_dir():
        for p in folder.glob(".*.part*"):
            with contextlib.suppress(OSError):
                p.unlink()


def _output_names(specs: Sequence[Path], keys: Sequence[str], known: dict[str, Entry],
                  ) -> list[str]:
    """A stable output folder name per spec: its stem, made unique when two stems collide."""
    owner: dict[str, str] = {QUARANTINE: ""}  # reserved for stray files
    mine: dict[str, str] = {}
    for key, e in known.items():
        if e.result_path:
            name = Path(e.result_path).parent.name
            owner.setdefault(name, key)
            mine.setdefault(key, name)
    names = []
    for path, key in zip(specs, keys, strict=True):
        name = mine.get(key)
        if name is None:
            name = path.stem
            if owner.get(name, key) != key:
                name = f"{path.stem}-{hashlib.sha256(key.encode()).hexdigest()[:8]}"
            owner[name] = key
            mine[key] = name
        names.append(name)
    return names


def _clean_partials(out: Path) -> int:
    """Remove temporary files left by a run that was killed (we hold the ledger lock)."""
    n = 0
    for pattern in (".*.part", ".*.part.*", "*/.*.part", "*/.*.part.*"):
        for p in out.glob(pattern):
            with contextlib.suppress(OSError):
                p.unlink()
                n += 1
    return n


def _commit(entry: Entry, outcome: Outcome, ledger_path: Path) -> str | None:
    """Anchor a spec's staged result to its ledger entry, rename the staged outputs into place
    (after the entry is written) and refresh its latest.json; the problem in words when that
    fails.

    The worker left the result unsynced (``stage_outputs(sync_result=False)``): the anchored
    text is written over it and synced here, before any rename, so the result appears in
    place complete and anchored (one write, no later rewrite of the file in place).
    """
    from ..report.json_text import with_key
    from ..runner import Staged, commit_all, write_text_atomic

    if outcome.tmp_workbook is None or outcome.tmp_result is None:
        return None
    staged = Staged(Path(outcome.workbook_path), Path(outcome.result_path),
                    Path(outcome.tmp_workbook), Path(outcome.tmp_result),
                    outcome.workbook_sha256 or "",
                    tuple((Path(t), Path(g)) for t, g in outcome.tmp_extras))
    try:
        try:
            text = staged.tmp_result.read_text(encoding="utf-8")
            anchor = ledger_anchor(ledger_path, entry) if entry.state == "RUN" else None
            if anchor is not None:
                text = with_key(text, "ledger", anchor)
            with open(staged.tmp_result, "w", encoding="utf-8") as f:
                f.write(text)
                f.flush()
                os.fsync(f.fileno())
        except BaseException:
            staged.discard()
            raise
        commit_all([staged])
        write_text_atomic(staged.result.parent / "latest.json", text)
    except (OSError, ValueError, VerifyError) as exc:
        return f"{entry.spec_path}: the result was recorded but could not be put in place: {exc}"
    return None


def _missing_outputs(folder: Path, entry: Entry) -> list[str]:
    """The files of the recorded result ``entry`` that are not in place in ``folder``.

    A run killed after writing a spec's ledger entry and before renaming its staged files into
    place leaves an entry that names files no reader can open (the next run clears the staged
    files): that result cannot stand as UNCHANGED, the spec must be evaluated again. Looked up
    by file name in the spec's output folder, so a moved output folder still finds its files.
    """
    return [Path(p).name for p in (entry.workbook_path, entry.result_path)
            if p and not (folder / Path(p).name).is_file()]


def _refresh_latest(folder: Path, entry: Entry) -> bool:
    """Make ``latest.json`` a copy of the standing result ``entry`` again, where a killed run
    left it missing or older (killed between renaming the result and copying it); True when
    it was rewritten."""
    from ..runner import write_text_atomic

    if not entry.result_path:
        return False
    text = (folder / Path(entry.result_path).name).read_text(encoding="utf-8")
    latest = folder / "latest.json"
    try:
        if latest.read_text(encoding="utf-8") == text:
            return False
    except FileNotFoundError:
        pass
    write_text_atomic(latest, text)
    return True


def _sweep_strays(ledger: Ledger, out: Path, names: Iterable[str], run_id: str) -> list[str]:
    """Move result files that no ledger entry names into ``<out>/quarantine/<run_id>/``.

    A worker of a killed run (or a run from before workers wrote only temporary files) may
    have left a workbook or JSON result that no entry records; it must not pass for a result.
    Only the output folders of known specs are swept, and only their .xlsx and .json files
    (latest.json is a copy the next result refreshes). Returns the moved files, as
    ``<folder>/<file>``.
    """
    named = ledger.named_outputs()  # (folder name, file name) of every recorded output
    moved = []
    folders = set(names) | {folder for folder, _ in named}
    for folder in sorted(folders):
        d = out / folder
        if folder == QUARANTINE or not d.is_dir():
            continue
        for f in sorted(d.iterdir()):
            if (f.suffix.lower() not in (".xlsx", ".json") or f.name == "latest.json"
                    or f.name.startswith(".") or not f.is_file()
                    or (folder, f.name) in named):
                continue
            target = out / QUARANTINE / run_id / folder / f.name
            try:
                target.parent.mkdir(parents=True, exist_ok=True)
                os.replace(f, target)
            except OSError:
                continue
            moved.append(f"{folder}/{f.name}")
    return moved


def _digest_path(out: Path, started: str) -> Path:
    base = f"digest-{started[:10]}"
    n = 1
    while True:
        p = out / (f"{base}.xlsx" if n == 1 else f"{base}-{n}.xlsx")
        if not p.exists():
            return p
        n += 1
