"""The wheel carries everything the installed tool reads.

Built offline from a copy of the source (so the checkout gains no build/ folder), installed
into a temporary venv with no index and no dependencies (the venv sees this environment's
site-packages through a .pth file, so the dependencies resolve offline), then the demo is
run from that venv in a folder outside the checkout and compared with the demo run from
the checkout.
"""

import json
import os
import re
import shutil
import subprocess
import sys
import sysconfig
import zipfile
from pathlib import Path

import pytest

from auroraplan.cli import main

pytestmark = pytest.mark.wheel

ROOT = Path(__file__).resolve().parents[1]
SOURCE = ("pyproject.toml", "setup.py", "README.md", "LICENSE", "auroraplan", "demo_sites")
LEFT_OUT = shutil.ignore_patterns("__pycache__", "*.pyc", "auroraplan.sqlite*")
# Any warning the build or the install prints about the project's own configuration.
WARNING = re.compile(r"deprecat|BuildBackendWarning|SetuptoolsWarning", re.IGNORECASE)


def _run(argv, cwd, env=None):
    result = subprocess.run([str(a) for a in argv], cwd=cwd, env=env, capture_output=True,
                            text=True, timeout=300)
    assert result.returncode == 0, f"{argv[:4]} exited {result.returncode}:\n" \
                                   f"{result.stdout[-3000:]}\n{result.stderr[-3000:]}"
    return result.stdout + result.stderr


def _source_files(folder: Path) -> set[str]:
    return {p.relative_to(folder).as_posix() for p in folder.rglob("*")
            if p.is_file() and "__pycache__" not in p.parts and not p.suffix == ".pyc"
            and not p.name.startswith("auroraplan.sqlite")}


def _check_build_tools():
    """The build uses this environment's setuptools: SPDX licence strings need 77 or newer
    (pyproject.toml lists it in the test extras)."""
    from importlib.metadata import version

    found = version("setuptools")
    if int(found.split(".")[0]) < 77:
        pytest.fail(f"setuptools {found} in this environment is older than 77, which the "
                    "wheel build needs; run: .venv/bin/pip install -e '.[test]'")


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    """(venv folder, wheel path, build output, install output)."""
    _check_build_tools()
    tmp = tmp_path_factory.mktemp("wheel")
    src = tmp / "src"
    for name in SOURCE:
        if (ROOT / name).is_dir():
            shutil.copytree(ROOT / name, src / name, ignore=LEFT_OUT)
        else:
            src.mkdir(exist_ok=True)
            shutil.copy2(ROOT / name, src / name)
    dist = tmp / "dist"
    built = _run([sys.executable, "-m", "pip", "wheel", "-v", "--no-build-isolation",
                  "--no-deps", "--no-index", "-w", dist, src], cwd=tmp)
    (wheel,) = dist.glob("auroraplan-*.whl")

    venv = tmp / "venv"
    _run([sys.executable, "-m", "venv", "--without-pip", venv], cwd=tmp)
    python = venv / "bin" / "python"
    site = _run([python, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                cwd=tmp).strip()
    outer = dict.fromkeys([sysconfig.get_paths()["purelib"], sysconfig.get_paths()["platlib"]])
    (Path(site) / "outer-environment.pth").write_text("\n".join(outer) + "\n")
    installed_log = _run([sys.executable, "-m", "pip", "--python", python, "install",
                          "--no-deps", "--no-index", wheel], cwd=tmp)
    return venv, wheel, built, installed_log


def test_build_and_install_print_no_warning_of_the_projects_making(installed):
    _, _, built, installed_log = installed
    for name, log in (("build", built), ("install", installed_log)):
        lines = [line for line in log.splitlines() if WARNING.search(line)]
        assert not lines, f"{name} printed:\n" + "\n".join(lines)


def test_wheel_carries_every_data_file_of_the_package_and_the_whole_demo_workspace(installed):
    _, wheel, _, _ = installed
    names = set(zipfile.ZipFile(wheel).namelist())
    package = {f"auroraplan/{name}" for name in _source_files(ROOT / "auroraplan")}
    demo = {f"auroraplan/demo_sites/{name}" for name in _source_files(ROOT / "demo_sites")}
    assert package - names == set()
    assert demo - names == set()
    # The demo's files as the demo reads them: operator settings, sites, trips and both
    # weather-model files (demo_sites/README.md).
    assert {"auroraplan/demo_sites/operator.toml", "auroraplan/demo_sites/sites.geojson",
            "auroraplan/demo_sites/trips.csv"} <= demo
    assert len([n for n in demo if n.startswith("auroraplan/demo_sites/weather/")]) == 2
    assert any(n.endswith(".dist-info/licenses/LICENSE") for n in names)
    metadata = next(n for n in names if n.endswith(".dist-info/METADATA"))
    assert "License-Expression: MIT" in zipfile.ZipFile(wheel).read(metadata).decode()


def test_installed_package_reads_its_own_demo_and_catalogue(installed, tmp_path):
    venv, _, _, _ = installed
    code = ("import auroraplan, json\n"
            "from auroraplan.commands.demo import demo_workspace\n"
            "from auroraplan.i18n import Words\n"
            "print(json.dumps([auroraplan.__file__, str(demo_workspace()),"
            " Words('de')('No outing tonight')]))")
    module, workspace, german = json.loads(_run([venv / "bin" / "python", "-c", code],
                                                cwd=tmp_path))
    assert Path(module).is_relative_to(venv)
    assert Path(workspace).is_relative_to(venv) and Path(workspace).name == "demo_sites"
    # The German catalogue shipped as package data (auroraplan/locale/de/...).
    assert german != "No outing tonight" and german


def test_demo_from_the_installed_wheel_matches_the_demo_from_the_checkout(installed,
                                                                         tmp_path):
    venv, _, _, _ = installed
    workspace = next((venv / "lib").glob("python*/site-packages/auroraplan/demo_sites"))
    shipped = {p: p.stat().st_mtime_ns for p in workspace.rglob("*")}
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    out = tmp_path / "from-wheel"
    _run([venv / "bin" / "auroraplan", "demo", "--out", out], cwd=tmp_path, env=env)

    reference = tmp_path / "from-checkout"
    assert main(["demo", "--out", str(reference)]) == 0
    made = sorted(p.name for p in out.iterdir())
    assert made == sorted(p.name for p in reference.iterdir())
    # The demo's week (from 11 January 2027): a phone page per night, itineraries, the
    # calendar, the charts and the index page.
    assert len([n for n in made if n.startswith("tonight-")]) == 7
    assert any(n.startswith("itinerary-") for n in made)
    assert {"index.html", "week.json", "excursions.ics", "season.json"} <= set(made)
    assert (out / "excursions.ics").read_text(encoding="utf-8").startswith("BEGIN:VCALENDAR")
    week = json.loads((out / "week.json").read_text(encoding="utf-8"))
    expected = json.loads((reference / "week.json").read_text(encoding="utf-8"))
    assert week["plan"] and week["plan"] == expected["plan"]
    # The installed demo workspace is read, never written (site-packages may be read-only).
    assert {p: p.stat().st_mtime_ns for p in workspace.rglob("*")} == shipped


def test_a_checkout_runs_the_demo_on_the_repository_demo_folder():
    """`make demo` (an editable install) reads demo_sites/ at the repository root."""
    from auroraplan.commands.demo import demo_workspace

    assert demo_workspace() == ROOT / "demo_sites"
    assert not (ROOT / "auroraplan" / "demo_sites").exists()  # no second copy kept by hand
