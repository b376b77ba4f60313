"""The report layer's way to a check kind's ``report`` hook, naming no check.

The workbook and the JSON ask the kind of each result (``CheckResult.check``) for its own
pieces: its decision-page heading and cell, its JSON fields, its number formats and margin text
on the characteristic sheet, a block of its own. A kind that has no answer gets the shared
default; a result that belongs to no kind (the "sufficiency" placeholder of a characteristic
without checks) does too.
"""

from __future__ import annotations

from types import ModuleType

from ..checks import CheckKind, kind


def _kind(check: str) -> CheckKind | None:
    try:
        return kind(check)
    except KeyError:
        return None


def report_module(check: str) -> ModuleType | None:
    """The ``report`` hook of the kind called ``check`` (None when it has none)."""
    k = _kind(check)
    if k is None or not k.has_hook("report"):
        return None
    return k.hook("report")


def report_hook(check: str, name: str, *args, default=None):
    """Call ``name(kind, *args)`` of the kind's report hook; ``default`` when it has none."""
    mod = report_module(check)
    fn = None if mod is None else getattr(mod, name, None)
    return default if fn is None else fn(kind(check), *args)


def has_report(check: str, name: str) -> bool:
    """Whether the kind's report hook answers ``name``."""
    mod = report_module(check)
    return mod is not None and hasattr(mod, name)


def own_block(check: str) -> ModuleType | None:
    """The report hook of a kind that writes a block of its own on the characteristic sheet
    (``BLOCK_TITLE`` and ``write_block``), else None."""
    mod = report_module(check)
    return mod if mod is not None and hasattr(mod, "write_block") else None
