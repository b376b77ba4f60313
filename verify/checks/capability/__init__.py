"""The capability check kind (see ``verify.checks`` for the hooks)."""

from .. import CheckKind

KINDS = (
    CheckKind(name="capability", package=__name__.rsplit(".", 1)[1], order=40),
)
