"""Shared fixtures: paths and small models."""

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
GEOMETRIES = ROOT / "geometries"


@pytest.fixture(scope="session")
def root() -> Path:
    return ROOT


@pytest.fixture(scope="session")
def geometries() -> Path:
    return GEOMETRIES
