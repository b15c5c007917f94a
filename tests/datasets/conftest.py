"""Fixtures shared by the dataset tests."""

from __future__ import annotations

import pytest
from dataset_files import segment_records


@pytest.fixture
def records() -> list[dict]:
    return segment_records(600)
