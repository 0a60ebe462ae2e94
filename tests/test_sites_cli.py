"""The oval and sites commands: JSON contract, chart file, one-line errors."""

import json
import subprocess
import sys

import pytest

from auroraplan import oval
from auroraplan.commands import oval as oval_command


def run_cli(*argv):
    return subprocess.run([sys.executable, "-m", "auroraplan.cli", *argv],
                          capture_output=True, text=True)


def test_oval_json_gives_24_ordered_boundaries():
    result = run_cli("oval", "--kp", "3", "--model", "starkov1994", "--json")
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    assert report["model"] == "starkov1994" and report["kp"] == 3.0
    assert "Kp 6" in report["storm_handling"]
    rows = report["boundaries"]
    assert [r["mlt"] for r in rows] == list(range(24))
    for r in rows:
        assert r["diffuse"] <= r["equatorward"] <= r["poleward"]
    # Same numbers as the library (Starkov 1994 at Kp 3, midnight).
    assert rows[0]["equatorward"] == pytest.approx(
        float(oval.boundaries(3.0, 0.0)["equatorward"]), abs=0.01)


def test_oval_png_is_written(tmp_path):
    out = tmp_path / "oval.png"
    result = run_cli("oval", "--kp", "5", "--png", str(out))
    assert result.returncode == 0, result.stderr
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not list(tmp_path.glob(".*part"))


@pytest.mark.parametrize("argv, needle", [
    (["oval", "--kp", "9.5"], "0 to 9"),
    (["oval", "--kp", "-1"], "0 to 9"),
    (["oval", "--kp", "three"], "not a number"),
    (["oval", "--kp", "3", "--model", "feldstein"], "starkov1994"),
    (["oval", "--kp", "3", "--png", "/no/such/folder/oval.png"], "does not exist"),
    (["sites", "/no/such/workspace"], "workspace"),
])
def test_bad_input_is_one_line_and_exit_2(argv, needle):
    result = run_cli(*argv)
    assert result.returncode == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0]
    assert "Traceback" not in result.stderr


def test_oval_help_names_every_model():
    import argparse

    parser = argparse.ArgumentParser()
    oval_command.add_arguments(parser)
    help_text = parser.format_help()
    assert all(name in help_text for name in oval.MODELS)


def test_sites_json_lists_every_demo_site_and_the_ridge_needs_more(demo_dir):
    result = run_cli("sites", str(demo_dir), "--json", "--date", "2027-01-12")
    assert result.returncode == 0, result.stderr
    sites = {s["name"]: s for s in json.loads(result.stdout)["sites"]}
    geojson = json.loads((demo_dir / "sites.geojson").read_text())
    assert set(sites) == {f["properties"]["name"] for f in geojson["features"]}
    for s in sites.values():
        assert 60.0 < s["mlat"] < 72.0  # northern Scandinavia, AACGM
        assert s["kp_needed_horizon"] is not None and s["kp_needed_overhead"] is not None
        assert s["kp_needed_horizon"] <= s["kp_needed_overhead"]
    # demo_sites/README.md: Ridgeback Hollow (15 degree ridge to the north) and its open
    # neighbour Delta Flats, 4 km away.
    assert sites["Ridgeback Hollow"]["kp_needed_horizon"] > sites["Delta Flats"]["kp_needed_horizon"]
    assert sites["Steep Cove"]["closed"] is True


def test_sites_table_on_screen(demo_dir):
    result = run_cli("sites", str(demo_dir), "--date", "2027-01-12")
    assert result.returncode == 0, result.stderr
    assert "Ridgeback" in result.stdout and "Kp needed" in result.stdout
