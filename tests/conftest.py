"""Shared fixtures: paths to the shipped samples."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from hypothesis import settings

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_netlists"
SPECS = ROOT / "specs"

settings.register_profile("default", deadline=None)
settings.register_profile("fuzz", deadline=None, max_examples=50_000)
settings.load_profile(os.environ.get("NETCHECK_HYPOTHESIS_PROFILE", "default"))


@pytest.fixture
def samples() -> Path:
    """The sample_netlists/ folder."""
    return SAMPLES
