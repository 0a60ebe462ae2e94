"""Shared fixtures: a private copy of the demo workspace for tests that break files."""

import shutil
from pathlib import Path

import pytest
from hypothesis import settings

# Property tests check values, never speed: Hypothesis's per-example deadline would turn a
# slow first call (a lazy import) into a failure. Examples are derived from each test, so a
# run in CI sees the same cases as a run on a desk; a failure prints how to reproduce it.
settings.register_profile("auroraplan", deadline=None, derandomize=True, print_blob=True)
settings.load_profile("auroraplan")

DEMO_SITES = Path(__file__).resolve().parents[1] / "demo_sites"
CHECKED_IN_WORKSPACES = (DEMO_SITES, Path(__file__).resolve().parent / "southern_sites",
                         Path(__file__).resolve().parent / "bad_inputs" / "base")


@pytest.fixture(scope="session", autouse=True)
def private_cache(tmp_path_factory):
    """Site values kept between runs go to a folder of this test run, not the user's cache
    (commands run as subprocesses inherit it)."""
    import os

    folder = tmp_path_factory.mktemp("cache")
    before = os.environ.get("AURORAPLAN_CACHE")
    os.environ["AURORAPLAN_CACHE"] = str(folder)
    yield folder
    if before is None:
        os.environ.pop("AURORAPLAN_CACHE", None)
    else:
        os.environ["AURORAPLAN_CACHE"] = before


@pytest.fixture(scope="session", autouse=True)
def no_database_in_checked_in_workspaces():
    """Commands that plan keep a database in the workspace: tests must run them on copies."""
    before = {p for folder in CHECKED_IN_WORKSPACES for p in folder.glob("auroraplan.sqlite*")}
    yield
    after = {p for folder in CHECKED_IN_WORKSPACES for p in folder.glob("auroraplan.sqlite*")}
    assert after <= before, f"a test left a database in a checked-in workspace: {after - before}"


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
