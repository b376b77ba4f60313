"""verify.stats._frozen.fast_init: the frozen result dataclasses' faster ``__init__`` takes the
same arguments and makes instances equal, field for field, to those the dataclass's own
``__init__`` makes (Python's dataclasses module is the reference: each class is compared with
a twin made by ``dataclasses.make_dataclass`` from the same fields)."""

from __future__ import annotations

import dataclasses
import importlib
import inspect
import pkgutil

import pytest

import verify
from verify.stats._frozen import fast_init


def _twin(cls):
    """The same fields in a plain frozen dataclass: the reference ``__init__``."""
    spec = []
    for f in dataclasses.fields(cls):
        kw = {"init": f.init}
        if f.default is not dataclasses.MISSING:
            kw["default"] = f.default
        if f.default_factory is not dataclasses.MISSING:
            kw["default_factory"] = f.default_factory
        spec.append((f.name, f.type, dataclasses.field(**kw)))
    return dataclasses.make_dataclass(cls.__name__, spec, frozen=True)


def _fields_of(obj) -> dict:
    return {f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)
            if hasattr(obj, f.name)}


@fast_init
@dataclasses.dataclass(frozen=True)
class _Sample:
    a: float
    b: str
    c: float | None = None
    d: dict = dataclasses.field(default_factory=dict)
    e: tuple = ()
    f: int = dataclasses.field(default=7, init=False)
    g: list = dataclasses.field(default_factory=list, init=False)


@fast_init
@dataclasses.dataclass(frozen=True)
class _Child(_Sample):
    h: str = "child"


@pytest.mark.parametrize("cls", [_Sample, _Child])
def test_same_signature_and_equal_fields_as_the_dataclass_init(cls):
    twin = _twin(cls)
    assert str(inspect.signature(cls)) == str(inspect.signature(twin))
    for args, kwargs in [((1.5, "x"), {}), ((1.5, "x", 2.0), {"e": (1,)}),
                         ((), {"a": 0.0, "b": "", "d": {"k": 1}})]:
        made, ref = cls(*args, **kwargs), twin(*args, **kwargs)
        assert _fields_of(made) == _fields_of(ref)
        assert list(vars(made)) == list(vars(ref))  # the same fields, in declared order


def test_default_factories_give_a_new_object_each_time():
    one, two = _Sample(1.0, "a"), _Sample(1.0, "a")
    assert one.d == {} and one.d is not two.d
    assert one.g == [] and one.g is not two.g


def test_still_frozen_equal_hashable_and_replaceable():
    s = _Sample(1.0, "a", e=(2,))
    with pytest.raises(dataclasses.FrozenInstanceError):
        s.a = 2.0
    assert s == _Sample(1.0, "a", e=(2,)) and s != _Sample(1.0, "b", e=(2,))
    assert repr(s) == "_Sample(a=1.0, b='a', c=None, d={}, e=(2,), f=7, g=[])"
    r = dataclasses.replace(s, b="z")
    assert (r.a, r.b, r.e) == (1.0, "z", (2,))
    with pytest.raises(TypeError):  # a missing argument is an error, as before
        _Sample(1.0)
    with pytest.raises(TypeError):
        _Sample(1.0, "a", f=3)  # not an argument (init=False)


def test_refuses_classes_it_would_change():
    @dataclasses.dataclass
    class Mutable:
        a: int

    @dataclasses.dataclass(frozen=True)
    class Checked:
        a: int

        def __post_init__(self):
            pass

    @dataclasses.dataclass(frozen=True, slots=True)
    class Slotted:
        a: int

    @dataclasses.dataclass(frozen=True, kw_only=True)
    class KeywordOnly:
        a: int

    @dataclasses.dataclass(frozen=True)
    class NamedLikeItsDict:  # the generated __init__'s own name for the instance's __dict__
        _fast_init_dict: int

    for cls in (Mutable, Checked, Slotted, KeywordOnly, NamedLikeItsDict, int):
        with pytest.raises(TypeError):
            fast_init(cls)


def _decorated_classes():
    found = []
    for info in pkgutil.walk_packages(verify.__path__, "verify."):
        if info.name.endswith("__main__"):
            continue
        mod = importlib.import_module(info.name)
        found.extend(obj for obj in vars(mod).values()
                     if isinstance(obj, type) and obj.__module__ == mod.__name__
                     and getattr(obj.__init__, "made_by_fast_init", False))
    return found


def test_every_decorated_result_class_keeps_its_dataclass_signature():
    classes = _decorated_classes()
    names = {c.__name__ for c in classes}
    # the results an evaluation makes by the thousand (a sample, not the whole list)
    assert {"CheckResult", "ProcessSummary", "EquivalenceResult", "RankTestResult",
            "LotEffectResult", "CapabilityResult", "Interval"} <= names
    for cls in classes:
        assert str(inspect.signature(cls)) == str(inspect.signature(_twin(cls))), cls
