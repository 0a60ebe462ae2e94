"""Shared fixtures: a private copy of the demo workspace for tests that break files."""

import shutil
from pathlib import Path

import pytest

DEMO_SITES = Path(__file__).resolve().parents[1] / "demo_sites"


@pytest.fixture
def demo_dir():
    """The demo workspace as shipped (read only: never write into it)."""
    return DEMO_SITES


@pytest.fixture
def workspace_copy(tmp_path):
    """A copy of demo_sites in a temporary folder, free to edit."""
    target = tmp_path / "workspace"
    shutil.copytree(DEMO_SITES, target)
    return target
