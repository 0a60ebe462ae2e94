"""Odd terminals and homes: an ASCII-only stream, a home folder that cannot be written."""

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from auroraplan.plaintext import ERROR_HANDLER, plain, register

ROOT = Path(__file__).resolve().parents[1]
BASE = ROOT / "tests" / "bad_inputs" / "base"


def _run(args, **env):
    full = dict(os.environ, NO_COLOR="1", COLUMNS="100", **env)
    full["PYTHONPATH"] = str(ROOT) + os.pathsep + full.get("PYTHONPATH", "")
    for key in [k for k, v in env.items() if v is None]:
        full.pop(key, None)
    return subprocess.run([sys.executable, "-m", "auroraplan.cli", *args], env=full,
                          capture_output=True, timeout=180)


@pytest.fixture
def ws(tmp_path):
    """A copy of the corpus workspace (planning keeps a plan of record in the folder)."""
    return str(shutil.copytree(BASE, tmp_path / "ws"))


@pytest.mark.parametrize("command", [
    ["tonight", "{ws}", "--date", "2027-01-12"],
    ["week", "{ws}", "--start", "2027-01-11", "--nights", "2"],
])
def test_an_ascii_terminal_gets_plain_text_not_a_crash(command, ws):
    proc = _run([a.replace("{ws}", ws) for a in command], PYTHONIOENCODING="ascii")
    assert proc.returncode == 0, proc.stderr.decode("ascii", "replace")
    assert b"Error" not in proc.stderr and b"Traceback" not in proc.stderr
    text = proc.stdout.decode("ascii")  # every byte is ASCII
    assert "Gullwing Point" in text


def test_json_on_an_ascii_terminal_is_the_same_json_with_escapes(tmp_path):
    runs = []
    for encoding in ("ascii", "utf-8"):  # each in its own workspace: no plan of record yet
        ws = shutil.copytree(BASE, tmp_path / encoding)
        text = (ws / "trips.csv").read_text(encoding="utf-8").replace("Okafor", "Økafor")
        (ws / "trips.csv").write_text(text, encoding="utf-8")
        run = _run(["week", str(ws), "--start", "2027-01-11", "--nights", "1", "--json"],
                   PYTHONIOENCODING=encoding)
        assert run.returncode == 0, run.stderr
        runs.append(json.loads(run.stdout.decode(encoding)))
    for result in runs:
        for key in ("made_at", "record", "workspace", "solver"):
            result.pop(key, None)
    assert runs[0] == runs[1]
    assert "Økafor family" in json.dumps(runs[0], ensure_ascii=False)


def test_plain_stand_ins():
    register()
    assert "Ærøy — 12°".encode("ascii", ERROR_HANDLER) == b"AEroy - 12d"
    assert plain("é") == "e" and plain("Ж") == "?"
    assert "Ærøy".encode("latin-1", ERROR_HANDLER) == "Ærøy".encode("latin-1")


def test_a_home_that_cannot_be_written_gives_no_plotting_warnings(tmp_path):
    # As root any folder can be written, so the home lies under a file (mkdir fails).
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    out = tmp_path / "oval.png"
    proc = _run(["oval", "--kp", "5", "--png", str(out)], HOME=str(blocker / "home"),
                MPLCONFIGDIR=None, XDG_CONFIG_HOME=None, XDG_CACHE_HOME=None)
    assert proc.returncode == 0
    assert proc.stderr == b"", proc.stderr.decode()
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
