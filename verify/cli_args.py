"""Options that several commands share (``--max-data-mb``) and the number parsing of
options, apart from the commands' own modules so that ``verify check`` imports none of them."""

from __future__ import annotations

import argparse


def add_max_data_mb(p: argparse.ArgumentParser) -> None:
    """The ``--max-data-mb`` option (shared by run, check, replay and nightly)."""
    from .safe_open import DEFAULT_MAX_DATA_MB

    p.add_argument("--max-data-mb", metavar="MB", type=_positive_mb, default=None,
                   help="refuse a data file larger than this many megabytes (default: "
                        f"{DEFAULT_MAX_DATA_MB:g}); an .xlsx may expand to 8 times this")


def parsed_number(text: str, convert, expected: str):
    """``convert(text)`` for an argparse ``type``; "expected <expected>, got '<text>'" when it
    is not one (the range checks stay with each option)."""
    try:
        return convert(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected {expected}, got {text!r}") from None


def _positive_mb(text: str) -> float:
    x = parsed_number(text, float, "a number of megabytes")
    if not (x > 0 and x < 1e7):
        raise argparse.ArgumentTypeError(f"must be a number of megabytes above 0, got {text!r}")
    return x
