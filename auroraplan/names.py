"""Safe file names from the operator's text (trip ids, site names), one rule for every output.

A name from user text may hold a slash, ``..``, a colon, a hash, a reserved name of
another system or nothing usable at all. :func:`safe_name` keeps letters (any script),
digits, ``.``, ``_`` and ``-``, turns every other run of characters into one ``-`` and
cuts the result to :data:`MAX_NAME_CHARS`. :func:`file_names` applies it to a set of ids
and refuses two ids that would land in the same file.
"""

from __future__ import annotations

import re
import unicodedata

from auroraplan.errors import InputError

MAX_NAME_CHARS = 80
"""Longest cleaned name: with a prefix and suffix the file name stays far below the
255-byte limit of common file systems even in multi-byte scripts (ext4, APFS, NTFS)."""

RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)),
            *(f"lpt{i}" for i in range(1, 10))}
"""Names Windows will not create whatever the extension (Microsoft, "Naming Files, Paths,
and Namespaces"): files copied to such a machine must keep working."""

_UNSAFE = re.compile(r"[^\w.-]+")


def safe_name(text, fallback: str = "item") -> str:
    """A file-name piece from user text: letters, digits, ``.``, ``_`` and ``-`` only.

    Parameters
    ----------
    text : str
        A trip id, site name or other text of the operator's.
    fallback : str
        Used when nothing usable is left (an id of only punctuation).

    Returns
    -------
    str
        NFC-normalised; no path separator, no leading dot or dash, no ``..``; never empty,
        never a reserved Windows device name, at most MAX_NAME_CHARS characters.
    """
    name = unicodedata.normalize("NFC", str(text))
    name = re.sub(r"\.{2,}", "-", name)  # no ".." anywhere
    name = _UNSAFE.sub("-", name)
    name = re.sub(r"-[.-]*-", "-", name).strip("-.")
    name = name[:MAX_NAME_CHARS].rstrip("-.")
    if not name:
        name = fallback
    if name.split(".")[0].lower() in RESERVED:
        name = f"{name}-"
    return name


def file_names(ids, pattern: str, what: str = "trip ids", source: str = "trips.csv",
               fallback: str = "trip") -> dict:
    """One safe file name per id, refusing ids whose names would collide.

    Parameters
    ----------
    ids : iterable of str
        The ids, e.g. every trip id.
    pattern : str
        A format with ``{}`` for the cleaned id, e.g. ``"itinerary-{}.pdf"``.
    what, source : str
        How the error line names the ids and the file they come from.
    fallback : str
        The name of an id with nothing usable in it (see :func:`safe_name`).

    Returns
    -------
    dict
        id -> file name.

    Raises
    ------
    InputError
        One line per collision, naming both ids and the shared file name. Names that differ
        only in letter case collide too: many file systems (macOS, Windows) treat them as one.
    """
    names, seen, problems = {}, {}, []
    for item in ids:
        name = pattern.format(safe_name(item, fallback))
        key = name.casefold()
        if key in seen and seen[key] != item:
            problems.append(f"{source}: {what} {seen[key]!r} and {item!r} would both be written to "
                            f"{name}; give them ids that differ in letters or digits")
            continue
        seen[key] = item
        names[item] = name
    if problems:
        raise InputError(problems)
    return names
