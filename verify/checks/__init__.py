"""The registry of check kinds.

Every kind of check lives in its own subpackage of ``verify.checks`` (``location`` holds the two
location checks, ``spread``, ``capability``, ``conformance``, ``rates`` the two pass-fail checks).
A subpackage's ``__init__`` declares ``KINDS``: a tuple of :class:`CheckKind`, one per check
name it provides. Nothing outside a kind's own subpackage names a check: evaluate, the workbook,
the recheck sheet, the JSON writer, the spec loader, ``verify check`` and ``verify plan`` loop
over :func:`kinds` and reach a kind's code through :meth:`CheckKind.hook`.

Hooks are modules beside the kind's ``__init__``, one per topic, imported only when first used
(so ``verify check`` does not import the statistics or the workbook code):

========== ==================================================================================
hook       what it holds
========== ==================================================================================
``spec``   its spec keys (JSON Schema fragment), defaults, the parsed spec dataclass, its
           semantic checks and its words for ``verify check`` (``verify.spec_kind``)
``compute`` its draft: computation from the gathered streams, calling ``verify.stats`` only
``result`` its typed, frozen result details (no untyped ``extra`` dict)
``rule``   its rule: the sentence in words and the decision (PASS / HOLD / PENDING)
``report`` its rows for the characteristic sheet, its decision-page cell, its JSON fields
           (``verify.report.hooks``)
``recheck`` its live spreadsheet formulas on the Recheck sheet
``plan``   its planning for ``verify plan`` (``plan_sheet``: its part of the plan workbook)
========== ==================================================================================

Adding a kind is one new subpackage plus its tests; see DEVELOPERS.md.
"""

from __future__ import annotations

import importlib
import importlib.util
import pkgutil
import sys
from dataclasses import dataclass
from functools import cache
from types import ModuleType

_HOOK_NAMES: dict[tuple[str, str], str] = {}  # (package, topic) -> the hook module's name


@dataclass(frozen=True)
class CheckKind:
    """One kind of check.

    Attributes
    ----------
    name : str
        The check's name as written under ``checks:`` in a spec and as ``check`` in the JSON.
    package : str
        The subpackage that implements it (``verify.checks.<package>``).
    order : int
        Position among the kinds (columns of the decision page, order of checks in the JSON).
    measures : str
        ``"measured"`` for characteristics with measured values, ``"pass_fail"`` for per-part
        pass/fail results or per-lot counts.
    """

    name: str
    package: str
    order: int
    measures: str = "measured"

    def hook(self, topic: str) -> ModuleType:
        """The kind's module for one topic (``"compute"``, ``"rule"``, ``"recheck"``, ...)."""
        name = _HOOK_NAMES.get((self.package, topic))
        if name is None:
            name = _HOOK_NAMES[(self.package, topic)] = f"{__name__}.{self.package}.{topic}"
        # a loaded module straight from sys.modules: import_module's machinery costs more than
        # the lookup, and an evaluation asks for hooks thousands of times
        mod = sys.modules.get(name)
        return mod if mod is not None else importlib.import_module(name)

    def has_hook(self, topic: str) -> bool:
        """Whether the kind provides a module for ``topic``."""
        return importlib.util.find_spec(f"{__name__}.{self.package}.{topic}") is not None


@cache
def kinds() -> tuple[CheckKind, ...]:
    """Every registered kind, in order."""
    found: list[CheckKind] = []
    for info in pkgutil.iter_modules(__path__):
        if not info.ispkg:
            continue
        mod = importlib.import_module(f"{__name__}.{info.name}")
        found.extend(getattr(mod, "KINDS", ()))
    names = [k.name for k in found]
    if len(set(names)) != len(names):
        raise RuntimeError(f"two check kinds share a name: {sorted(names)}")
    return tuple(sorted(found, key=lambda k: (k.order, k.name)))


def kind(name: str) -> CheckKind:
    """The kind called ``name``; KeyError when no kind has that name."""
    return _by_name()[name]


def find(name: str) -> CheckKind | None:
    """The kind called ``name``, or None when no kind has that name."""
    return _by_name().get(name)


@cache
def _by_name() -> dict[str, CheckKind]:
    return {k.name: k for k in kinds()}


def names(measures: str | None = None) -> tuple[str, ...]:
    """The names of the kinds, in order (only those for ``measures`` when given)."""
    return tuple(k.name for k in kinds() if measures is None or k.measures == measures)


__all__ = ["CheckKind", "kinds", "kind", "find", "names"]
