"""A faster ``__init__`` for the frozen result dataclasses an evaluation makes by the thousand.

``@dataclass(frozen=True)`` writes an ``__init__`` that sets each field by
``object.__setattr__`` (its own ``__setattr__`` refuses): one call per field. A characteristic's
evaluation fills about 500 fields of such results (checks, their statistics, diagnostics,
process summaries), which is about a twentieth of its time. :func:`fast_init`, stacked on top of
the dataclass decorator, gives the class an ``__init__`` with the same parameters (names, order,
defaults, default factories) that fills the instance's ``__dict__`` directly, one store a
field, without a call per field. Everything else
the dataclass made (equality, hash, repr, the refusal to set an attribute, ``fields``,
``replace``) is unchanged; the instances are equal field by field to those the dataclass's own
``__init__`` makes (tests hold the two together).

Only for a frozen dataclass without ``__post_init__`` (its validation would be skipped; an
``InitVar`` needs one too), without ``__slots__`` (no ``__dict__``) and without keyword-only
fields; anything else is refused at import time (a ``TypeError``), so that the decorator is
never silently a no-op.

verify.model's result classes are made with it, so ``verify check`` loads this module (and the
empty stats package) though no statistics: it imports the standard library alone, and must
stay so (tests/test_cli_check.py lists what ``verify check`` may load).
"""

from __future__ import annotations

import dataclasses
import keyword


class _Factory:
    """The default of an argument whose field has a default factory (shown as the dataclass
    shows it)."""

    def __repr__(self) -> str:
        return "<factory>"


_MISSING = _Factory()
_DICT = "_fast_init_dict"  # the generated __init__'s name for the instance's __dict__


def fast_init(cls: type) -> type:
    """Give the frozen dataclass ``cls`` an ``__init__`` that fills its ``__dict__`` at once.

    Use it above the dataclass decorator::

        @fast_init
        @dataclass(frozen=True)
        class Result: ...
    """
    params = getattr(cls, "__dataclass_params__", None)
    if params is None or not params.frozen or not params.init:
        raise TypeError(f"fast_init needs a frozen dataclass with an __init__, not {cls!r}")
    if hasattr(cls, "__post_init__") or "__slots__" in cls.__dict__:
        raise TypeError(f"fast_init would skip {cls.__name__}'s __post_init__ or slots")
    fields = dataclasses.fields(cls)
    names = [f.name for f in fields]
    if any(keyword.iskeyword(n) or not n.isidentifier() for n in names):
        raise TypeError(f"{cls.__name__} has a field name fast_init cannot write")
    if any(f.kw_only for f in fields):
        raise TypeError(f"fast_init does not handle {cls.__name__}'s keyword-only fields")
    env: dict[str, object] = {"_MISSING": _MISSING}
    args, body = [], []
    for f in fields:
        if f.init:
            if f.default is not dataclasses.MISSING:
                env[f"_d_{f.name}"] = f.default
                args.append(f"{f.name}=_d_{f.name}")
            elif f.default_factory is not dataclasses.MISSING:
                env[f"_f_{f.name}"] = f.default_factory
                args.append(f"{f.name}=_MISSING")
                body.append(f"    if {f.name} is _MISSING: {f.name} = _f_{f.name}()")
            else:
                args.append(f.name)
        elif f.default_factory is not dataclasses.MISSING:  # not an argument, made anew
            env[f"_f_{f.name}"] = f.default_factory
            body.append(f"    {f.name} = _f_{f.name}()")
    # as the dataclass's own __init__: an init=False field with a plain default is read from
    # the class, one without a default is left unset. Each value is stored into the
    # instance's own __dict__ by its key, in the fields' order: a statement per field costs
    # less than building a dict of them and updating __dict__ with it (about half, for ten
    # fields), and the instance keeps the dict that shares its keys with the class's other
    # instances (half the memory of a dict of its own)
    if _DICT in names:
        raise TypeError(f"{cls.__name__} has a field named {_DICT}, the name fast_init uses")
    body.append(f"    {_DICT} = self.__dict__")
    body.extend(f"    {_DICT}[{f.name!r}] = {f.name}" for f in fields
                if f.init or f.default_factory is not dataclasses.MISSING)
    source = f"def __init__(self, {', '.join(args)}):\n" + "\n".join(body) + "\n"
    exec(source, env)  # noqa: S102 - the source is built above from the field names alone
    init = env["__init__"]
    init.__qualname__ = f"{cls.__qualname__}.__init__"
    init.__module__ = cls.__module__
    init.__doc__ = cls.__init__.__doc__
    init.__annotations__ = {**{f.name: f.type for f in fields if f.init}, "return": None}
    init.made_by_fast_init = True  # (tests find the classes by it)
    cls.__init__ = init
    return cls


__all__ = ["fast_init"]
