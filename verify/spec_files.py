"""Finding spec files: :func:`find_specs` (kept apart from :mod:`verify.spec` so that a caller
that only lists specs, such as the nightly parent, imports no YAML or schema machinery)."""

from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

from .errors import UsageError

SPEC_SUFFIXES = (".yaml", ".yml")


def find_specs(paths: Iterable[str | os.PathLike]) -> list[Path]:
    """The spec files named by ``paths``: files as given, ``*.yaml``/``*.yml`` under folders.

    Folders are searched recursively (hidden folders skipped) and their files sorted; a file
    named twice is listed once.

    Raises
    ------
    UsageError
        A path does not exist, or no spec file was found at all.

    Examples
    --------
    >>> find_specs(["specs/bushing-supplier.yaml"])  # doctest: +SKIP
    [PosixPath('specs/bushing-supplier.yaml')]
    """
    found: list[Path] = []
    problems: list[str] = []
    given = [Path(p) for p in paths]
    for p in given:
        if p.is_dir():
            hits = sorted(
                f for f in p.rglob("*")
                if f.suffix.lower() in SPEC_SUFFIXES and f.is_file()
                and not any(part.startswith(".") for part in f.relative_to(p).parts)
            )
            found.extend(hits)
        elif p.is_file():
            found.append(p)
        elif p.exists():
            from .safe_open import kind_of

            problems.append(f"{p}: is {kind_of(p.stat().st_mode)}, not a spec file or a folder "
                            "of specs")
        else:
            problems.append(f"{p}: no such file or folder")
    if problems:
        raise UsageError(problems)
    unique = list(dict.fromkeys(found))
    if not unique:
        names = ", ".join(str(p) for p in given) or "(no paths given)"
        raise UsageError(f"no spec files (*.yaml, *.yml) found in {names}")
    return unique
