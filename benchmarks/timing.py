"""One way to time a figure for every benchmark: the median of several runs, with the
fastest and the slowest beside it.

Every row of the benchmark table is at least ``REPEATS`` runs (one with ``--quick``).
Where two things are compared in the same process, they are run alternately, so both see
the same machine load (:func:`alternately`).
"""

from __future__ import annotations

import statistics
import time
from dataclasses import dataclass

REPEATS = 5
"""Runs per figure (``--quick``: 1). The median is reported, with min and max."""


def repeats_for(quick: bool, full: int = REPEATS) -> int:
    """How many runs a figure gets: ``full`` (at least ``REPEATS``), or 1 when quick."""
    return 1 if quick else max(full, REPEATS)


@dataclass(frozen=True)
class Runs:
    """Wall seconds of repeated runs of one piece of work."""

    seconds: tuple

    @property
    def median(self) -> float:
        return statistics.median(self.seconds)

    @property
    def low(self) -> float:
        return min(self.seconds)

    @property
    def high(self) -> float:
        return max(self.seconds)

    def fields(self, prefix: str = "") -> dict:
        """``seconds``, ``min_s``, ``max_s`` (each after ``prefix``: ``baseline_``) and,
        without a prefix, ``repeats``: the keys run_all.py reads."""
        out = {f"{prefix}seconds": self.median, f"{prefix}min_s": self.low,
               f"{prefix}max_s": self.high}
        if not prefix:
            out["repeats"] = len(self.seconds)
        return out


def timed(function, repeats: int) -> tuple[Runs, object]:
    """Run ``function()`` ``repeats`` times; the runs and the last result."""
    times, out = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        out = function()
        times.append(time.perf_counter() - start)
    return Runs(tuple(times)), out


def alternately(first, second, repeats: int) -> tuple[Runs, Runs]:
    """Run ``first()`` then ``second()``, ``repeats`` times over: the runs of each."""
    a, b = [], []
    for _ in range(repeats):
        a.append(timed(first, 1)[0].seconds[0])
        b.append(timed(second, 1)[0].seconds[0])
    return Runs(tuple(a)), Runs(tuple(b))
