"""The bad-input corpus: every broken file or option is one line on stderr, exit 2, nothing written.

Each folder of tests/bad_inputs/ (except base/) is one case: the files of base/, overwritten by
any file in the case folder, then changed by the directives of its case.txt:

    # one line saying what is wrong (or odd but valid)
    command: week {ws} --start 2027-01-11 --nights 1      ({ws} the workspace, {tmp} its parent)
    replace: FILE | OLD | NEW     every OLD becomes NEW; Python escapes (\\n, \\x00) are decoded
    append: FILE | TEXT           text added at the end
    write: FILE | TEXT            the whole file
    remove: FILE
    mkdir: FOLDER                 a folder (also where a file is expected)
    link: PATH | TARGET           a symbolic link at PATH pointing to TARGET (as written)
    fifo: PATH                    a named pipe
    chmod: PATH | MODE            octal permission bits, e.g. 444
    encode: FILE | CODEC          the file's text saved in another encoding (latin-1, utf-16)
    bom: FILE or *                a UTF-8 byte-order mark in front
    crlf: FILE or *               Windows line endings
    where: FRAGMENT               the file and line/feature (or the option) the error must name
    field: FRAGMENT               the field the error must name
    says: FRAGMENT                more text the error must hold (what is wrong, what to do)
    output: PATH                  an output path that must not be created or changed
    accept: yes                   odd but valid: exit 0 and sensible output instead
    lists: T1 T2                  (accepted) trips the JSON result must list
    stdout: TEXT                  (accepted) text standard output must hold
    file_has: PATH | TEXT         (accepted) an output file that must exist and hold TEXT
    file_lacks: PATH | TEXT       (accepted) text an output file must not hold

PATH and FILE are relative to the workspace ("../x" is beside it). Every `--json` output is
parsed by a strict parser (no NaN or Infinity, which are not JSON).

The command runs as a subprocess in a temporary copy; the folder's files must be byte for byte
the same afterwards (the user's files are never changed, no half-written output).
"""

import json
import os
import re
import shlex
import shutil
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
CORPUS = HERE / "bad_inputs"
BASE = CORPUS / "base"
REPO = HERE.parent
MIN_REJECTING_CASES = 40

CASES = sorted(p.name for p in CORPUS.iterdir() if p.is_dir() and p.name != "base")


def unescape(text: str) -> str:
    """Python escapes in a directive (\\n, \\x00, \\u2212); other characters as written."""
    return text.encode("latin-1", "backslashreplace").decode("unicode_escape")


def read_case(name: str) -> dict:
    """case.txt as {"about": text, directive: [values, ...]} in file order."""
    case = {"about": "", "steps": []}
    for raw in (CORPUS / name / "case.txt").read_text(encoding="utf-8").split("\n"):
        if not raw.strip():
            continue
        if raw.startswith("#"):
            case["about"] = raw[1:].strip()
            continue
        key, sep, rest = raw.partition(": ")
        if not sep:
            key, rest = raw.rstrip(":"), ""
        if rest.endswith(" |"):  # an editor may have dropped the space after a final bar
            rest += " "
        if key in ("replace", "append", "write", "remove", "encode", "bom", "crlf", "mkdir", "link",
                   "fifo", "chmod"):
            case["steps"].append((key, rest.split(" | ")))
        else:
            case.setdefault(key, []).append(rest)
    return case


def text_files(ws: Path, which: str) -> list[Path]:
    return sorted(p for p in ws.iterdir() if p.is_file()) if which == "*" else [ws / which]


def apply_step(ws: Path, key: str, parts: list[str]) -> None:
    if key in ("bom", "crlf"):
        for path in text_files(ws, parts[0]):
            data = path.read_bytes()
            if key == "bom":
                data = data if data.startswith(b"\xef\xbb\xbf") else b"\xef\xbb\xbf" + data
            else:
                data = data.replace(b"\r\n", b"\n").replace(b"\n", b"\r\n")
            path.write_bytes(data)
        return
    path = ws / parts[0]
    if key == "remove":
        path.unlink()
        return
    if key == "mkdir":
        path.mkdir(parents=True, exist_ok=True)
        return
    if key == "link":
        path.symlink_to(parts[1].strip())
        return
    if key == "fifo":
        os.mkfifo(path)
        return
    if key == "chmod":
        path.chmod(int(parts[1].strip(), 8))
        return
    if key == "encode":
        path.write_bytes(path.read_text(encoding="utf-8").encode(parts[1].strip()))
        return
    args = [unescape(p) for p in parts[1:]]
    text = path.read_text(encoding="utf-8") if path.exists() else ""
    if key == "replace":
        old, new = args
        assert old in text, f"{parts[0]}: {old!r} is not in the file to replace"
        text = text.replace(old, new)
    elif key == "append":
        text += args[0]
    elif key == "write":
        text = args[0]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(text.encode("utf-8", "surrogatepass"))


RECORD_NAME = "auroraplan.sqlite"
"""The workspace database (auroraplan.store.DATABASE_NAME): a rejected run never creates it."""


def snapshot(folder: Path) -> dict:
    """Relative path -> what it is of everything under ``folder``: a file's bytes and mode,
    a link's target, a folder or pipe by kind (so a replaced link or pipe shows too)."""
    state = {}
    for p in sorted(folder.rglob("*")):
        key = str(p.relative_to(folder))
        if p.is_symlink():
            state[key] = ("link", os.readlink(p))
        elif p.is_file():
            state[key] = ("file", p.read_bytes(), p.stat().st_mode)
        else:
            state[key] = ("other", p.stat().st_mode)
    return state


def strict_json(text: str):
    """JSON as RFC 8259 has it: NaN and Infinity are refused."""
    def refuse(name):
        raise ValueError(f"{name} is not JSON")

    return json.loads(text, parse_constant=refuse)


def run_case(name: str, root: Path) -> dict:
    """Build the case's workspace under ``root``, run its command, return what happened."""
    try:
        return _run_case(name, root)
    except Exception as exc:  # a broken case fails its own test, not the others
        return {"setup_error": f"{type(exc).__name__}: {exc}"}


def _run_case(name: str, root: Path) -> dict:
    case = read_case(name)
    tmp = root / name
    ws = tmp / "workspace"
    shutil.copytree(BASE, ws)
    for extra in (CORPUS / name).iterdir():
        if extra.name != "case.txt":
            shutil.copyfile(extra, ws / extra.name)
    for key, parts in case["steps"]:
        apply_step(ws, key, parts)

    def fill(text):
        return text.replace("{ws}", str(ws)).replace("{tmp}", str(tmp))

    argv = [fill(a) for a in shlex.split(case["command"][0])]
    outputs = [Path(fill(p)) for p in case.get("output", [])]
    before = snapshot(tmp)
    outputs_before = {p: p.read_bytes() if p.exists() else None for p in outputs}
    env = dict(os.environ, NO_COLOR="1", COLUMNS="100",
               PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run([sys.executable, "-m", "auroraplan.cli", *argv], cwd=tmp, env=env,
                          capture_output=True, text=True, encoding="utf-8", errors="replace",
                          timeout=120)
    after = snapshot(tmp)
    if "accept" in case:  # a good run of a planning command keeps its plan of record
        after = {k: v for k, v in after.items() if not Path(k).name.startswith(RECORD_NAME)}
    return {
        "case": case, "argv": argv, "returncode": proc.returncode, "stdout": proc.stdout,
        "stderr": proc.stderr, "ws": ws,
        "unchanged": _unchanged(before, after, case),
        "outputs_unchanged": all((p.read_bytes() if p.exists() else None) == outputs_before[p]
                                 for p in outputs),
    }


def _unchanged(before: dict, after: dict, case: dict) -> bool:
    """Nothing under the case's folder changed, except the outputs an accepted case names
    (created or replaced by its command)."""
    allowed = set()
    for spec in case.get("file_has", []) + case.get("file_lacks", []):
        rel = os.path.normpath("workspace/" + spec.split(" | ", 1)[0])
        allowed.update({rel, *(str(p) for p in Path(rel).parents)})
    keys = (set(before) | set(after)) - {k for k in set(before) | set(after)
                                          if any(k == a or k.startswith(a + os.sep)
                                                 for a in allowed if a != ".")}
    return all(before.get(k) == after.get(k) for k in keys)


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    """Every case run once; the subprocesses run side by side to keep the suite quick."""
    root = tmp_path_factory.mktemp("bad_inputs")
    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 2)) as pool:
        return dict(zip(CASES, pool.map(lambda name: run_case(name, root), CASES), strict=True))


def test_the_corpus_has_at_least_40_rejecting_cases_and_each_says_where():
    rejecting = [name for name in CASES if "accept" not in read_case(name)]
    assert len(rejecting) >= MIN_REJECTING_CASES, len(rejecting)
    for name in rejecting:
        case = read_case(name)
        assert case["about"] and case.get("command") and case.get("where"), name
        assert case.get("says"), name


def test_the_readme_states_the_corpus_size():
    """The README's count is a floor: cases may be added before it is updated, never removed."""
    readme = " ".join((REPO / "README.md").read_text(encoding="utf-8").split())
    found = re.search(r"holds (\d+) cases: (\d+) rejected with one line and (\d+) odd but valid",
                      readme)
    assert found, "the README no longer states the corpus size"
    total, rejected, accepted = map(int, found.groups())
    accepting = sum(1 for name in CASES if "accept" in read_case(name))
    assert total == rejected + accepted
    assert rejected <= len(CASES) - accepting and accepted <= accepting


def test_the_corpus_touches_every_file_and_many_commands():
    touched = set()
    commands = set()
    for name in CASES:
        case = read_case(name)
        commands.add(case["command"][0].split()[0])
        touched.update(parts[0] for _, parts in case["steps"])
        touched.update(p.name for p in (CORPUS / name).iterdir() if p.name != "case.txt")
    assert {"operator.toml", "sites.geojson", "trips.csv", "activity.csv", "clouds.csv"} <= touched
    assert {"week", "tonight", "sky", "oval", "arrival", "season", "itinerary"} <= commands


@pytest.mark.parametrize("name", CASES)
def test_case(results, name):
    got = results[name]
    assert "setup_error" not in got, got.get("setup_error")
    case = got["case"]
    command = got["argv"][0]
    assert "Traceback" not in got["stderr"], got["stderr"]
    assert got["unchanged"], f"{name}: files in the workspace folder were created or changed"
    assert got["outputs_unchanged"], f"{name}: an output path was created or changed"
    if "accept" in case:
        assert got["returncode"] == 0, got["stderr"]
        # Notes may follow on stderr; library warnings and internal errors may not.
        assert "Warning" not in got["stderr"] and "internal error" not in got["stderr"], \
            got["stderr"]
        if "--json" in got["argv"]:
            result = strict_json(got["stdout"])
            listed = {trip["trip"] for trip in result.get("trips", [])}
            for wanted in case.get("lists", [""])[0].split():
                assert wanted in listed, (wanted, listed)
        for fragment in case.get("stdout", []):
            assert unescape(fragment) in got["stdout"], fragment
        for spec in case.get("file_has", []) + case.get("file_lacks", []):
            rel, text = spec.split(" | ", 1)
            data = (got["ws"] / rel).read_bytes().decode("utf-8", "replace")
            wanted = spec in case.get("file_has", [])
            assert (unescape(text) in data) == wanted, (rel, text, data[:2000])
        return
    assert got["returncode"] == 2, (got["returncode"], got["stderr"])
    lines = got["stderr"].splitlines()
    assert len(lines) == 1, lines
    line = lines[0]
    # "auroraplan week: ..." or, for an action's own option, "auroraplan logbook list: ..."
    assert re.match(rf"auroraplan {re.escape(command)}( [a-z]+)?: ", line), line
    for fragment in case["where"] + case.get("field", []) + case.get("says", []):
        assert fragment in line, (fragment, line)
    assert got["stdout"] == "", got["stdout"]


def test_an_unreadable_workspace_folder_is_one_line(tmp_path, monkeypatch, capsys):
    """chmod 000 on the workspace folder (simulated: the suite may run as root, who can
    read any folder): one line naming the folder and what to do, exit 2."""
    from auroraplan import cli

    ws = tmp_path / "workspace"
    shutil.copytree(BASE, ws)
    real_listdir = os.listdir

    def listdir(path="."):
        if Path(path) == ws:
            raise PermissionError(13, "Permission denied", str(path))
        return real_listdir(path)

    monkeypatch.setattr("auroraplan.workspace.loader.os.listdir", listdir)
    assert cli.main(["week", str(ws), "--start", "2027-01-11", "--nights", "1"]) == 2
    (line,) = capsys.readouterr().err.splitlines()
    assert line.startswith(f"auroraplan week: {ws}: the folder cannot be read")
    assert "chmod u+rx" in line
