"""The conformance check kind (see ``verify.checks`` for the hooks)."""

from .. import CheckKind

KINDS = (
    CheckKind(name="conformance", package=__name__.rsplit(".", 1)[1], order=50),
)
