"""Results kept between runs in the user's cache directory, never in a workspace.

Each kind of result (site values read from weather files, the built Kp climatology) has
its own folder under one root: ``AURORAPLAN_CACHE``, else ``$XDG_CACHE_HOME/auroraplan``,
else ``~/.cache/auroraplan`` (the XDG Base Directory convention). An entry is a pickle
named by a digest of everything its value rests on (the source file's path, size and
modification time, a format version, the arguments), so a changed source or a new release
reads afresh. A cache that cannot be made, read or written is passed over: the value is
computed as if there were none.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path


def cache_folder(kind: str) -> Path | None:
    """The folder of one kind of kept result; None when it cannot be made or written."""
    root = os.environ.get("AURORAPLAN_CACHE")
    if not root:
        base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
        root = str(Path(base) / "auroraplan")
    folder = Path(root) / kind
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError:
        return None
    return folder if os.access(folder, os.W_OK) else None


def file_stamp(path: Path) -> tuple:
    """What a kept value read from ``path`` rests on: its full path, size and mtime."""
    stat = path.stat()
    return str(path.resolve()), stat.st_size, stat.st_mtime_ns


def digest(parts, arrays=()) -> str:
    """A SHA-256 hex key of text parts and the bytes of arrays."""
    import numpy as np

    out = hashlib.sha256()
    for part in parts:
        out.update(str(part).encode("utf-8", "surrogatepass") + b"\0")
    for array in arrays:
        out.update(np.ascontiguousarray(array, float).tobytes())
    return out.hexdigest()


def kept(kind: str, key: str, version: int, compute, keep: int | None = None):
    """``compute()``, kept in ``cache_folder(kind)`` under ``key`` for format ``version``.

    A missing, unreadable or older entry is computed afresh and written whole (a part file
    renamed into place), so a run stopped halfway leaves no broken entry. With ``keep``,
    only that many entries of the kind stay (the most recently written).
    """
    import pickle

    folder = cache_folder(kind)
    if folder is None:
        return compute()
    entry = folder / f"{key}.pickle"
    try:
        with entry.open("rb") as handle:
            stored_version, value = pickle.load(handle)
        if stored_version == version:
            return value
    except (OSError, EOFError, pickle.UnpicklingError, ValueError, TypeError, AttributeError,
            ImportError, IndexError):
        pass
    value = compute()
    part = entry.with_name(f"{entry.name}.{os.getpid()}.part")
    try:
        with part.open("wb") as handle:
            pickle.dump((version, value), handle, protocol=pickle.HIGHEST_PROTOCOL)
        part.replace(entry)
    except OSError:
        part.unlink(missing_ok=True)
    if keep is not None:
        _prune(folder, keep)
    return value


def _prune(folder: Path, keep: int) -> None:
    """Remove all but the ``keep`` most recently written entries of a folder."""
    try:
        entries = sorted(folder.glob("*.pickle"), key=lambda p: p.stat().st_mtime_ns)
        for old in entries[:-keep] if keep > 0 else entries:
            old.unlink(missing_ok=True)
    except OSError:
        pass
