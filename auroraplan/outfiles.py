"""Writing output files so that nothing the user owns is lost and no half file is left.

Three promises, each kept here and nowhere else:

- An output never replaces a file the workspace reads or may read
  (:func:`workspace_inputs`), however the path is spelt (``..``, symbolic links).
- An output is written to a temporary file beside it and renamed into place, so an
  interrupted or failed run leaves the earlier file or the new one, never half of one.
  Several outputs are written as a set (:func:`write_files`): all of them are made
  before the first is renamed into place, so a full disk or a Ctrl-C leaves none of
  them changed.
- Only a regular file (or a missing path) is replaced. A symbolic link keeps pointing
  where it points (its target is written); a read-only file is refused; a replaced
  file keeps its permission bits.
"""

from __future__ import annotations

import errno
import os
import signal
import stat
import tempfile
import tomllib
from pathlib import Path

from auroraplan.errors import InputError

INPUT_NAMES = (
    "operator.toml", "sites.geojson", "sites.gpkg", "trips.csv", "activity.csv",
    "clouds.csv", "basemap.gpkg", "basemap.geojson", "logbook.csv", "auroraplan.sqlite",
    "solarwind.csv",
)
"""Files the workspace loaders read when present: refused as outputs even while missing,
since a file written there would be read as input by the next run."""

INPUT_FOLDERS = ("weather",)
"""Sub-folders whose every file is an input (weather-model files)."""

DATABASE_SUFFIXES = (".sqlite", ".sqlite3", ".db")
DATABASE_COMPANIONS = ("-wal", "-shm", "-journal")
"""SQLite keeps a write-ahead log and shared memory beside the database
(https://sqlite.org/wal.html, https://sqlite.org/tempfiles.html): they are part of it."""

_registered: set[Path] = set()
_registered_folders: set[Path] = set()
_registered_workspaces: set[Path] = set()
written: list[Path] = []
"""Outputs written whole during this run, in order (the CLI names them when interrupted)."""


# ---------------------------------------------------------------------------------------
# What the workspace reads
# ---------------------------------------------------------------------------------------


def workspace_inputs(folder) -> tuple[set[Path], set[Path]]:
    """Every file a workspace reads or may read, and the folders all of whose files are inputs.

    Parameters
    ----------
    folder : str or Path
        The workspace folder.

    Returns
    -------
    (files, folders) : (set of Path, set of Path)
        Resolved paths (symbolic links followed). ``files``: the loaders' file names
        (present or not), every regular file at the top of the workspace (the operator's
        own data), SQLite databases with their journal files, every file named by a text
        value in operator.toml (a history file, a font, a logbook; relative to the
        workspace or absolute), and their link paths. ``folders``: ``weather/`` and the
        like, where any file (even a new one) would be read as input.
    """
    root = Path(folder).expanduser()
    files: set[Path] = set()
    folders = {_real(root / name) for name in INPUT_FOLDERS}
    for name in INPUT_NAMES:
        files.add(_real(root / name))
    try:
        entries = list(os.scandir(root))
    except OSError:
        entries = []
    for entry in entries:
        path = Path(entry.path)
        if entry.is_file():  # follows links: a linked-in input is an input
            files.update({_real(path), path.absolute()})
        if path.suffix.lower() in DATABASE_SUFFIXES:
            files.update(_real(Path(f"{path}{c}")) for c in DATABASE_COMPANIONS)
    for text in _toml_texts(root / "operator.toml"):
        if "/" in text or "\\" in text or "." in text:
            candidate = (root / text).expanduser() if not Path(text).is_absolute() else Path(text)
            if candidate.is_file():
                files.update({_real(candidate), candidate.absolute()})
    return files, folders


def _toml_texts(path: Path) -> list[str]:
    """Every text value in a TOML file (nested tables and lists too); [] if unreadable."""
    if not path.is_file():  # never open a pipe or device: reading it could wait for ever
        return []
    try:
        doc = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except (OSError, ValueError, UnicodeDecodeError, RecursionError):
        return []
    found, stack = [], [doc]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
        elif isinstance(item, str) and 0 < len(item) < 4096 and "\x00" not in item:
            found.append(item)
    return found


def _real(path: Path) -> Path:
    """The path with links and ``..`` resolved (as far as it exists)."""
    try:
        return Path(os.path.realpath(path))
    except (OSError, ValueError):
        return Path(os.path.abspath(path))


def protect(*paths) -> None:
    """Register inputs of this run: files, or workspace folders (their :func:`workspace_inputs`).

    Every later :func:`check_output_path` and every write refuses them.
    """
    for p in paths:
        path = Path(p).expanduser()
        if path.is_dir():
            files, folders = workspace_inputs(path)
            _registered.update(files)
            _registered_folders.update(folders)
            _registered_workspaces.add(_real(path))
        elif path.exists():
            _registered.update({_real(path), path.absolute()})


def protect_missing(path) -> None:
    """Register an input that may not exist yet (a database this run creates)."""
    p = Path(path).expanduser()
    _registered.update({_real(p), p.absolute()})


def reset() -> None:
    """Forget the registered inputs and the written outputs (a new run in the same process)."""
    _registered.clear()
    _registered_folders.clear()
    _registered_workspaces.clear()
    written.clear()


def _input_hit(out: Path, protected) -> str | None:
    """Why ``out`` may not be written (it is an input), or None."""
    real = _real(out)
    extra = set()
    for p in protected:
        extra.update({_real(Path(p)), Path(p).absolute()})
    if real in _registered or real in extra or out.absolute() in extra:
        return "is one of your input files"
    for folder in _registered_folders:
        if real == folder or folder in real.parents:
            return f"is inside {folder}, whose files are inputs"
    if real.parent in _registered_workspaces:  # the next run would read it as the operator's data
        return (f"is in the workspace folder {real.parent}, whose files are inputs; write "
                "outputs outside it")
    return None


# ---------------------------------------------------------------------------------------
# Checking a path before the work
# ---------------------------------------------------------------------------------------


def check_output_path(path, protected=()) -> Path:
    """Refuse an output path before any work is done; return it as a Path.

    Parameters
    ----------
    path : str or Path
        Where the output should go.
    protected : iterable of Path
        Input files that must never be replaced, besides those registered with
        :func:`protect` (the CLI registers every workspace and input file of a run).

    Raises
    ------
    InputError
        One line naming the path: empty, an input file, a folder, a device or pipe, a
        read-only file, a missing folder, or a folder that cannot be written.
    """
    if path is None or str(path).strip() == "":
        raise InputError("an output path is empty; give a file name")
    out = Path(path).expanduser()
    _target(out, protected)
    return out


def _target(out: Path, protected=()) -> Path:
    """The file to write for ``out`` (a link's target), after every check."""
    why = _input_hit(out, protected)
    if why:
        raise InputError(f"{out}: {why}; choose another output path")
    target = _real(out) if out.is_symlink() else out  # a link keeps pointing where it points
    try:
        st = os.stat(out)  # follows links: what would really be written
    except FileNotFoundError:
        st = None
        if out.is_symlink() and _real(out).is_symlink():
            raise InputError(f"{out}: is a link in a loop; remove it or choose another path") from None
    except OSError as exc:
        raise InputError(f"{out}: cannot be examined ({exc.strerror}); choose another path") from None
    if st is not None:
        if stat.S_ISDIR(st.st_mode):
            raise InputError(f"{out}: is a folder; give a file name")
        if not stat.S_ISREG(st.st_mode):
            raise InputError(f"{out}: is not a regular file ({_kind(st.st_mode)}); "
                             "give the path of an ordinary file")
        if not st.st_mode & 0o222 or not os.access(out, os.W_OK):
            raise InputError(f"{out}: is read-only; make it writable (chmod u+w) "
                             "or choose another path")
    parent = target.parent
    if not parent.is_dir():
        where = f" (the link's target {target})" if target != out else ""
        raise InputError(f"{out}: folder {parent} does not exist{where}; create it first")
    _probe(parent, out)
    return target


def _kind(mode: int) -> str:
    for test, name in ((stat.S_ISFIFO, "a pipe"), (stat.S_ISCHR, "a device"),
                       (stat.S_ISBLK, "a device"), (stat.S_ISSOCK, "a socket")):
        if test(mode):
            return name
    return "not a file"


def _probe(folder: Path, out: Path) -> None:
    """Create and remove a small file in ``folder``: can the output be written there?"""
    try:
        fd, probe = tempfile.mkstemp(prefix=".auroraplan-probe.", dir=folder)
    except OSError as exc:
        raise InputError(f"{out}: folder {folder} cannot be written ({exc.strerror}); "
                         "choose another folder") from None
    os.close(fd)
    os.unlink(probe)


def check_output_folder(path, protected=()) -> Path:
    """Refuse an output folder that is a file, an input folder, a workspace of this run (or
    inside one), or cannot be written.

    A missing folder is fine when its parent exists (it is created when written).
    """
    if path is None or str(path).strip() == "":
        raise InputError("an output folder is empty; give a folder name")
    out = Path(path).expanduser()
    real = _real(out)
    for folder in _registered_folders | {_real(Path(p)) for p in protected}:
        if real == folder or folder in real.parents:
            raise InputError(f"{out}: is inside {folder}, whose files are inputs; "
                             "choose another folder")
    for folder in _registered_workspaces:
        if real == folder or folder in real.parents:
            raise InputError(f"{out}: is the workspace or inside it ({folder}); choose a "
                             "folder outside it so that your input files are never mixed with "
                             "outputs")
    if out.exists() and not out.is_dir():
        raise InputError(f"{out}: is a file; give a folder")
    if out.is_dir():
        _probe(out, out)
    elif not real.parent.is_dir():
        raise InputError(f"{out}: folder {real.parent} does not exist; create it first")
    else:
        _probe(real.parent, out)
    return out


def check_distinct(paths) -> None:
    """Refuse two outputs of one command that are the same file (``--csv X --ics X``)."""
    seen = {}
    for option, path in paths:
        key = _real(Path(path).expanduser())
        if key in seen:
            raise InputError(f"{option} {path}: is also the path given to {seen[key]}; "
                             "give each output its own file")
        seen[key] = option


# ---------------------------------------------------------------------------------------
# Writing
# ---------------------------------------------------------------------------------------


def write_files(outputs: dict) -> list[Path]:
    """Write several outputs as a set: all of them or none of them.

    Parameters
    ----------
    outputs : dict of path -> bytes or str
        Text is written as UTF-8.

    Returns
    -------
    list of Path
        The paths written, in the order given (also appended to :data:`written`).

    Notes
    -----
    Each output is first written whole to a temporary file beside its target. Only when
    every one is made are they renamed into place, with Ctrl-C and SIGTERM held back for
    those few renames, so a full disk or an interrupt leaves every earlier file as it was.
    A replaced file keeps its permission bits; a new one gets the usual 0666 less umask.
    """
    plan = []
    for path, data in outputs.items():
        out = Path(path).expanduser()
        target = _target(out)
        payload = data.encode("utf-8") if isinstance(data, str) else bytes(data)
        plan.append((out, target, payload))
    staged = []
    try:
        for out, target, payload in plan:
            staged.append((out, target, _stage(target, payload, out, len(plan))))
        return _rename_all(staged)
    except BaseException:
        for _, _, tmp in staged:
            if tmp and os.path.exists(tmp):
                os.unlink(tmp)
        raise


def _stage(target: Path, payload: bytes, out: Path, count: int) -> str:
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(payload)
            fh.flush()
            os.fsync(fh.fileno())
        try:
            mode = stat.S_IMODE(target.stat().st_mode)
        except FileNotFoundError:
            mode = 0o666 & ~_umask()  # as an ordinary new file, not mkstemp's 0600
        os.chmod(tmp, mode)
    except BaseException as exc:
        if os.path.exists(tmp):
            os.unlink(tmp)
        if not isinstance(exc, OSError):
            raise
        none = " none of the outputs was written" if count > 1 else " nothing was written"
        reason = "the disk is full" if exc.errno in (errno.ENOSPC, errno.EDQUOT) else exc.strerror
        raise InputError(f"{out}: cannot be written ({reason});{none}; "
                         "free some space or choose another folder") from None
    return tmp


def _rename_all(staged) -> list[Path]:
    done: list[Path] = []
    held = _hold_signals()
    try:
        for out, target, tmp in staged:
            try:
                os.replace(tmp, target)
            except OSError as exc:
                already = ", ".join(str(p) for p in done) or "none"
                raise InputError(f"{out}: cannot be written ({exc.strerror}); written already: "
                                 f"{already}") from None
            done.append(out)
            written.append(out)
    finally:
        _release_signals(held)
    return done


def _hold_signals():
    try:
        return signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT, signal.SIGTERM})
    except (AttributeError, ValueError, OSError):  # not the main thread, or no such call
        return None


def _release_signals(held) -> None:
    if held is not None:
        signal.pthread_sigmask(signal.SIG_SETMASK, held)


def write_bytes_atomic(path, data: bytes) -> Path:
    """Write one output whole or not at all (see :func:`write_files`)."""
    return write_files({path: data})[0]


def write_text_atomic(path, text: str) -> Path:
    """Write UTF-8 text whole or not at all (see :func:`write_files`)."""
    return write_bytes_atomic(path, text.encode("utf-8"))


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
