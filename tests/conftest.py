"""Shared test fixtures."""
from __future__ import annotations

from pathlib import Path

import pytest

TESTS_DATA = Path(__file__).parent / "data"


@pytest.fixture
def tests_data() -> Path:
    """Folder of the test data files (each has a line in tests/data/README.md)."""
    return TESTS_DATA
