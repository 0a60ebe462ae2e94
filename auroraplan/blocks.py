"""Working through a large (rows, ...) array in blocks of rows small enough to stay in the
processor's cache.

Whole-array numpy passes over 10,000 sites by a week of steps make every temporary
array tens of megabytes, and each pass reads and writes main memory; the same arithmetic
on blocks of tens of thousands of cells stays in the cache and measured two to three
times faster (the block sizes are set, and measured, where they are used). A block never
changes a result: each row is computed exactly as in one pass.
"""

from __future__ import annotations


def row_blocks(rows: int, cells_per_row: int, cells: int):
    """Slices of ``range(rows)``, each of about ``cells`` cells (at least one row)."""
    step = max(1, cells // max(1, cells_per_row))
    for start in range(0, rows, step):
        yield slice(start, min(start + step, rows))
