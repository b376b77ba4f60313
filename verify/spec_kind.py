"""The protocol of a kind's ``spec`` hook: what a kind of check adds to the spec format.

Each kind package (``verify/checks/<package>/spec.py``) exposes ``SPECS``: a mapping from the
name of each kind it provides to a :class:`CheckSpec`. The spec loader, the schema, the table
of characteristics and ``verify check`` loop over :func:`check_specs` and name no check:

- :attr:`CheckSpec.schema` is the ``checks.<name>`` sub-schema (JSON Schema, the keywords of
  :data:`verify.schema.SUPPORTED_KEYWORDS`), :attr:`CheckSpec.definitions` the shared
  definitions it refers to (``#/definitions/<key>``); :mod:`verify.schema` assembles the whole
  schema from them;
- :meth:`CheckSpec.runs_by_default` says whether the check runs when ``checks:`` is left out;
- :meth:`CheckSpec.build` turns the validated entry into the kind's frozen dataclass with every
  default explicit, recording each value in :attr:`verify.spec_model.Spec.resolved`;
- :meth:`CheckSpec.check` adds the rules the schema cannot express (errors with key path, line
  and column through :class:`Semantics`);
- :attr:`CheckSpec.table_columns` are the kind's columns of a ``characteristics_from`` table;
- :meth:`CheckSpec.words` is the line ``verify check`` prints for the check.

This module imports nothing heavy: ``verify check`` loads it.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from functools import cache
from typing import Any


@dataclass(frozen=True)
class TableColumn:
    """A column of a ``characteristics_from`` table that sets one key of a check.

    ``percent``: the cell may be written "p%" (kept as text, like a margin in YAML).
    """

    column: str
    key: str
    percent: bool = False


@dataclass(frozen=True)
class Facts:
    """What a check's defaults may depend on: the characteristic and the spec around it.

    ``data`` is None where the data keys are not known (a row of a characteristics table).
    """

    target: float | None = None
    limits: tuple[float | None, float | None] | None = None
    side: str = "two-sided"
    distribution: str = "normal"
    data: Any = None  # verify.spec_model.DataSpec
    unit_of_analysis: str = "part"

    @property
    def pairs_usable(self) -> bool:
        """Pairs are declared (``data.pair``) and parts are analysed (lot means carry no pair
        key): the paired designs are the defaults then."""
        return (self.data is not None and self.data.pair is not None
                and self.unit_of_analysis != "lot")


Recorder = Callable[..., None]
"""``rec(key, value, *, default=None)``: one line of :attr:`Spec.resolved` (``default`` None:
the value is a default when ``key`` was not written in the spec)."""


class Unknown:
    """A value that failed the schema; semantic rules that need it are skipped."""

    def __repr__(self) -> str:
        return "<unknown>"


UNKNOWN = Unknown()


@dataclass
class Semantics:
    """What a kind's :meth:`CheckSpec.check` may read, and where it reports.

    Values read here passed the schema unless said otherwise.

    Attributes
    ----------
    add : callable
        ``add(path, message, key=False)``: one problem at ``path`` (the line and column of its
        value, or of its key with ``key=True``).
    ok : callable
        ``ok(mapping, key, path)``: ``mapping`` holds ``key`` and nothing at ``path`` failed
        the schema.
    clean : callable
        ``clean(path)``: nothing at or below ``path`` failed the schema.
    spec, data, characteristic : dict
        The spec's values, its ``data:`` mapping (None when it is not a mapping) and the
        characteristic's entry.
    target : float, None or UNKNOWN
        The characteristic's target (UNKNOWN when it was written but failed the schema).
    limits : list or None
        The characteristic's ``[lower, upper]`` when valid.
    has_limits : bool
        The characteristic writes ``limits:`` (valid or not).
    label : str
        `` (name)`` of the characteristic for messages, or empty.
    """

    add: Callable[..., None]
    ok: Callable[[Any, str, str], bool]
    clean: Callable[[str], bool]
    spec: dict
    data: dict | None
    characteristic: dict
    target: Any
    limits: list | None
    has_limits: bool
    label: str = ""

    @property
    def distribution(self) -> str:
        return self.characteristic.get("distribution", "normal")

    @property
    def has_pair(self) -> bool:
        return isinstance(self.data, dict) and "pair" in self.data

    @property
    def lot_unit(self) -> bool:
        return self.spec.get("unit_of_analysis") == "lot"


class CheckSpec:
    """One kind's part of the spec format (see the module docstring).

    Subclasses set the class attributes and override the methods they need.

    Attributes
    ----------
    name : str
        The kind's name (the key under ``checks:``).
    schema : dict
        The ``checks.<name>`` sub-schema.
    definitions : dict
        Schema definitions the fragment refers to as ``#/definitions/<key>``.
    schema_order : int or None
        The position of the key among the ``checks`` keys of the published schema (and of the
        "valid keys there" hint); None: the kind's order.
    table_columns : tuple of TableColumn
        Its columns of a ``characteristics_from`` table.
    off_reason : str or None
        When the check does not run: the reason it is off by default ("no target"), "" to
        record a plain "off", None to record nothing.
    suggested : bool
        Named where a message lists the checks to choose from ("lists no check: name at least
        one of ..."); a measured check that is suggested is also refused by name when a
        pass-fail characteristic lists it.
    by_default : str or None
        For the schema's description of ``checks``: when the check runs if ``checks:`` is left
        out, in words after its name ("" always, " (when limits are given)"); None: only when
        listed. The words of :meth:`runs_by_default`.
    """

    name: str = ""
    schema: Mapping[str, Any] = {}
    definitions: Mapping[str, Any] = {}
    schema_order: int | None = None
    table_columns: tuple[TableColumn, ...] = ()
    off_reason: str | None = ""
    suggested: bool = True
    by_default: str | None = None

    def runs_by_default(self, facts: Facts) -> bool:
        """Whether the check runs when the characteristic leaves ``checks:`` out."""
        return False

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> object:
        """The frozen check settings from its validated entry (``{}`` when empty or left out).

        ``path`` is the entry's key path (``characteristics[0].checks.<name>``); every setting
        is recorded with ``rec``.
        """
        raise NotImplementedError

    def check(self, entry: Any, path: str, ctx: Semantics) -> None:
        """Rules beyond the schema for a listed entry (None when written empty)."""

    def uses_pairs(self, settings: object) -> bool:
        """Whether the check runs on the matched pairs (``verify check`` then counts them)."""
        return False

    def words(self, settings: object, characteristic: Any, spec: Any) -> str:
        """What ``verify check`` prints for the check, after ``check <name>: ``."""
        raise NotImplementedError


@cache
def check_specs(measures: str | None = None) -> tuple[CheckSpec, ...]:
    """The :class:`CheckSpec` of every registered kind, in registry order (only the kinds for
    ``measures``, "measured" or "pass_fail", when given). Cached: the registry is fixed once
    discovered, and the loader asks for every characteristic."""
    from .checks import kinds

    return tuple(spec_of(k.name) for k in kinds() if measures is None or k.measures == measures)


@cache
def spec_of(name: str) -> CheckSpec:
    """The :class:`CheckSpec` of the kind called ``name``."""
    from .checks import kind

    return kind(name).hook("spec").SPECS[name]


def schema_position(spec: CheckSpec) -> tuple[int, str]:
    """Sort key of a kind's key in the published schema."""
    from .checks import kind

    order = spec.schema_order if spec.schema_order is not None else kind(spec.name).order
    return order, spec.name


# -- words shared by the hooks ---------------------------------------------------------------


def off_words(explicit: bool, why_default: str) -> str:
    """The resolved value of a check that does not run."""
    if explicit:
        return "off (not listed in checks)"
    return f"off ({why_default})" if why_default else "off"


def opt_float(v: Any) -> float | None:
    return None if v is None else float(v)


def fmt(value: Any) -> str:
    """A value as text for messages and :attr:`Spec.resolved` (floats at full precision)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(int(value)) if value.is_integer() and abs(value) < 1e15 else repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_fmt_item(x) for x in value) + "]"
    return str(value)


def _fmt_item(x: Any) -> str:
    if isinstance(x, str):
        return '"' + x.replace("\\", "\\\\").replace('"', '\\"') + '"'
    return fmt(x)


def num(v: Any) -> str:
    """A number in ``verify check`` words ("none" for None)."""
    return "none" if v is None else fmt(v)
