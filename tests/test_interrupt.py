"""Ctrl-C and failures while writing: no partly written file, one line, exit code 130."""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from broken_files import BrokenFile

from auroraplan import cli, outfiles

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_sites"


def _leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".part"))


def _half_then_interrupted(fh, data):
    """Writes half of what it is given, then is interrupted."""
    fh.write(data[: len(data) // 2])
    fh.flush()
    raise KeyboardInterrupt


def test_write_interrupted_halfway_leaves_nothing(tmp_path, monkeypatch):
    real_fdopen = os.fdopen
    monkeypatch.setattr(outfiles.os, "fdopen", lambda fd, mode: BrokenFile(real_fdopen(fd, mode), _half_then_interrupted))
    out = tmp_path / "plan.csv"
    with pytest.raises(KeyboardInterrupt):
        outfiles.write_text_atomic(out, "trip,date\n" * 1000)
    assert not out.exists()
    assert _leftovers(tmp_path) == []


def test_interrupted_overwrite_keeps_the_earlier_file(tmp_path, monkeypatch):
    out = tmp_path / "plan.csv"
    out.write_text("the earlier plan\n")

    def interrupted_rename(src, dst):
        raise KeyboardInterrupt

    monkeypatch.setattr(outfiles.os, "replace", interrupted_rename)
    with pytest.raises(KeyboardInterrupt):
        outfiles.write_text_atomic(out, "a new plan\n")
    assert out.read_text() == "the earlier plan\n"
    assert _leftovers(tmp_path) == []


def test_cli_interrupted_while_writing_exits_130_with_one_line(tmp_path, workspace_copy,
                                                               monkeypatch, capsys):
    def interrupted_rename(src, dst):
        raise KeyboardInterrupt

    monkeypatch.setattr(outfiles.os, "replace", interrupted_rename)
    out = tmp_path / "ranked.csv"
    code = cli.main(["week", str(workspace_copy), "--start", "2027-01-11", "--nights", "1",
                     "--csv", str(out)])
    err = capsys.readouterr().err
    assert code == 130
    assert err.count("\n") == 1 and err.startswith("auroraplan week: interrupted")
    assert not out.exists() and _leftovers(tmp_path) == []


def _mapped(pid: int, name: str) -> bool:
    try:
        return name in Path(f"/proc/{pid}/maps").read_text()
    except OSError:
        return False


@pytest.mark.skipif(not Path("/proc/self/maps").exists(), reason="needs Linux /proc")
@pytest.mark.parametrize("sig, code, said", [
    (signal.SIGINT, 130, "interrupted"),
    (signal.SIGTERM, 143, "stopped (SIGTERM)"),  # exit 128 + 15, the shell's convention
])
def test_ctrl_c_or_sigterm_during_a_long_run(tmp_path, sig, code, said):
    """A real SIGINT or SIGTERM once the run is computing (the ephemeris is mapped)."""
    folder = tmp_path / "ws"
    subprocess.run([sys.executable, str(ROOT / "benchmarks" / "make_workspace.py"), str(folder),
                    "--sites", "100", "--trips", "2"], check=True, capture_output=True)
    out = tmp_path / "season.png"
    proc = subprocess.Popen(
        [sys.executable, str(ROOT / "cli.py"), "season", str(folder), "--from", "2026-09-01",
         "--to", "2027-04-15", "--png", str(out)],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=tmp_path)
    deadline = time.monotonic() + 60
    while not _mapped(proc.pid, "de421.bsp") and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.02)
    assert proc.poll() is None, "the run ended before it could be interrupted"
    proc.send_signal(sig)
    stdout, stderr = proc.communicate(timeout=60)
    assert proc.returncode == code, stderr
    assert stderr.splitlines() == [f"auroraplan season: {said}; no output was written"]
    assert "Traceback" not in stdout + stderr
    assert not out.exists() and _leftovers(tmp_path) == []
