"""verify: evidence for a manufacturing process change.

Public API (imported lazily, so ``verify --help`` does not pay for numpy, scipy and pandas)::

    import verify
    spec = verify.load_spec("specs/bushing-supplier.yaml")    # or a dict
    ev = verify.evaluate(spec)                                 # or evaluate(spec, dataframe)
    ev.decision, ev.to_frame()                                 # one row per check
    verify.write_workbook(ev, "bushing.xlsx")

The results support, and never replace, the engineering and quality review and sign-off that the
change-control procedure, the customer's requirements and local regulations call for.
"""

from __future__ import annotations

import sys
import types

__version__ = "0.1.0"

__all__ = ["load_spec", "load_measurements", "evaluate", "write_workbook", "__version__"]


def load_spec(source, **kwargs):
    """A validated spec from a YAML file or a dict; see :func:`verify.api.load_spec`."""
    from .api import load_spec as _f

    return _f(source, **kwargs)


def load_measurements(spec, frame=None):
    """The tidy measurements of a spec; see :func:`verify.api.load_measurements`."""
    from .api import load_measurements as _f

    return _f(spec, frame)


def evaluate(spec, measurements=None, *, final: bool = False):
    """Evaluate a spec on its data or on a DataFrame; see :func:`verify.api.evaluate`."""
    from .api import evaluate as _f

    return _f(spec, measurements, final=final)


def write_workbook(evaluation, path, **kwargs):
    """Write the Excel workbook of an evaluation to ``path`` (its folder is created; the file
    is renamed into place only when complete); see
    :func:`verify.report.workbook.write_workbook`. Returns the path."""
    from pathlib import Path

    from .report.workbook import write_workbook as _f
    from .runner import atomic_path

    target = Path(path)
    with atomic_path(target) as tmp:
        _f(evaluation, tmp, **kwargs)
    return target


_API = frozenset(__all__)


class _Package(types.ModuleType):
    """Importing the submodule ``verify.evaluate`` (or ``verify.load_measurements``' home)
    would otherwise bind the package attribute ``evaluate`` to that module, so that
    ``from verify import evaluate`` gave a module; the API functions keep their names."""

    def __setattr__(self, name: str, value) -> None:
        if name in _API and isinstance(value, types.ModuleType):
            return  # the submodule stays reachable through sys.modules["verify.<name>"]
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
