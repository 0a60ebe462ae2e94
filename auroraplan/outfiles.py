"""Writing output files so that a failure never leaves half a file behind."""

import os
import tempfile
from pathlib import Path

from auroraplan.errors import InputError


def check_output_path(path, protected=()) -> Path:
    """Refuse an output path that would overwrite one of the user's input files.

    Parameters
    ----------
    path : str or Path
        Where the output should go.
    protected : iterable of Path
        Input files that must never be replaced (the workspace files).
    """
    out = Path(path).expanduser()
    resolved = out.resolve()
    for p in protected:
        if Path(p).resolve() == resolved:
            raise InputError(
                f"{out}: this is one of your input files; choose another output path"
            )
    if out.exists() and out.is_dir():
        raise InputError(f"{out}: is a folder; give a file name")
    parent = resolved.parent
    if not parent.exists():
        raise InputError(f"{out}: folder {parent} does not exist; create it first")
    return out


def write_bytes_atomic(path, data: bytes) -> Path:
    """Write ``data`` to ``path`` via a temporary file in the same folder and a rename."""
    out = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", suffix=".part", dir=out.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.chmod(tmp, 0o666 & ~_umask())  # as an ordinary new file, not mkstemp's 0600
        os.replace(tmp, out)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return out


def write_text_atomic(path, text: str) -> Path:
    """Write UTF-8 text atomically (see :func:`write_bytes_atomic`)."""
    return write_bytes_atomic(path, text.encode("utf-8"))


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
