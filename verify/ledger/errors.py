"""The ledger's errors (every one exits 2)."""

from __future__ import annotations

from ..errors import VerifyError


class LedgerError(VerifyError):
    """The ledger cannot be opened or read (not a verify ledger, a newer schema, ...)."""


class LedgerBusyError(VerifyError):
    """Another nightly run holds the ledger lock; exit status 2."""


class LedgerBrokenError(LedgerError):
    """The hash chain or the triggers of the ledger fail their check: nothing is appended."""
