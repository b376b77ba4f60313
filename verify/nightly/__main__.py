"""``python -m verify.nightly SPEC_DIR ...``: the ``verify nightly`` command."""

import sys

from ..cli_nightly import main_for_tests

if __name__ == "__main__":
    raise SystemExit(main_for_tests(sys.argv[1:]))
