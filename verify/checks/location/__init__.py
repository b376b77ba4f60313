"""The location check kinds (see ``verify.checks`` for the hooks)."""

from .. import CheckKind

KINDS = (
    CheckKind(name="target", package=__name__.rsplit(".", 1)[1], order=10),
    CheckKind(name="shift", package=__name__.rsplit(".", 1)[1], order=20),
)
