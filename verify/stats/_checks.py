"""Argument checks shared by the statistics modules (private: not part of the public API).

Each raises ``ValueError`` naming the argument; degenerate *data* are refused elsewhere with
``DegenerateDataError``.
"""

from __future__ import annotations

import math

HARMFUL_SIDES: tuple[str, ...] = ("lower", "upper")


def number(v: object, what: str) -> float:
    """``float(v)``, or ValueError naming ``what``."""
    try:
        return float(v)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a number, not {v!r}") from None


def finite(v: object, what: str) -> float:
    """``float(v)`` if it is a finite number, else ValueError naming ``what``."""
    f = number(v, what)
    if not math.isfinite(f):
        raise ValueError(f"{what} must be a finite number, not {v!r}")
    return f


def positive(v: object, what: str) -> float:
    """``float(v)`` if it is a positive finite number, else ValueError naming ``what``."""
    f = number(v, what)
    if not (math.isfinite(f) and f > 0.0):
        raise ValueError(f"{what} must be a positive finite number, not {v!r}")
    return f


def check_margins(low: float, high: float) -> tuple[float, float]:
    """The equivalence margins as finite floats with ``low < high``, else ValueError."""
    if (type(low) is float and type(high) is float and low < high
            and math.isfinite(low) and math.isfinite(high)):
        return low, high  # (what the checks below return for them, without the calls)
    lo = finite(low, "low")
    hi = finite(high, "high")
    if not lo < hi:
        raise ValueError(f"the equivalence margins must satisfy low < high, got ({lo}, {hi})")
    return lo, hi


def check_alpha(alpha: float) -> None:
    """Raise ValueError unless ``0 < alpha < 1``."""
    if not 0.0 < alpha < 1.0:
        raise ValueError(f"alpha must lie in (0, 1), not {alpha}")


def check_level(level: float) -> None:
    """Raise ValueError unless the confidence level lies in (0, 1)."""
    if not 0.0 < level < 1.0:
        raise ValueError(f"confidence level must lie in (0, 1), not {level}")


def check_harmful(harmful: str) -> str:
    """Return ``harmful`` if it is one of :data:`HARMFUL_SIDES`, else raise ValueError."""
    if harmful not in HARMFUL_SIDES:
        raise ValueError(f"harmful must be one of {HARMFUL_SIDES}, not {harmful!r}")
    return harmful
