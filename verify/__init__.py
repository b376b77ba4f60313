"""verify: evidence for a manufacturing process change.

Public API (imported lazily, so ``verify --help`` does not pay for numpy, scipy and pandas)::

    from verify import load_spec, load_measurements, evaluate, write_workbook

The results support, and never replace, the engineering and quality review and sign-off that the
change-control procedure, the customer's requirements and local regulations call for.
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["load_spec", "load_measurements", "evaluate", "write_workbook", "__version__"]

_LAZY = {
    "load_spec": ("verify.spec", "load_spec"),
    "load_measurements": ("verify.data", "load_measurements"),
    "evaluate": ("verify.evaluate", "evaluate"),
    "write_workbook": ("verify.report.workbook", "write_workbook"),
}


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'verify' has no attribute {name!r}")
