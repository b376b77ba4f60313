"""Shared fixtures for the test suite."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

# ../shared/reference from the repository root: data sets with published values (see its
# README.md). A user's clone has no such folder; tests that need it skip.
REFERENCE_DIR = Path(__file__).resolve().parents[1].parent / "shared" / "reference"


@pytest.fixture(scope="session")
def reference_dir() -> Path:
    """The folder of reference data sets (``../shared/reference``); skips when absent."""
    if not REFERENCE_DIR.is_dir():
        pytest.skip(
            f"reference data folder ../shared/reference not found (looked at {REFERENCE_DIR})"
        )
    return REFERENCE_DIR


@pytest.fixture()
def demo(tmp_path) -> Path:
    """A copy of the demo specs and their data (specs refer to ../sample_lots/)."""
    shutil.copytree(ROOT / "specs", tmp_path / "specs")
    shutil.copytree(ROOT / "sample_lots", tmp_path / "sample_lots")
    return tmp_path


def pytest_configure(config: pytest.Config) -> None:
    # When a hypothesis test fails, its pytest plugin imports libcst to suggest a patch; libcst
    # trips a DeprecationWarning in mypy_extensions, which `filterwarnings = error` would turn
    # into an internal error that hides the real failure. Ignore that one third-party warning.
    config.addinivalue_line(
        "filterwarnings", "ignore:mypy_extensions.TypedDict is deprecated:DeprecationWarning"
    )
