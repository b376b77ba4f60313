"""The rates check kinds (see ``verify.checks`` for the hooks)."""

from .. import CheckKind

KINDS = (
    CheckKind(name="rate", package=__name__.rsplit(".", 1)[1], order=60, measures="pass_fail"),
    CheckKind(name="rate_shift", package=__name__.rsplit(".", 1)[1], order=70,
              measures="pass_fail"),
)
