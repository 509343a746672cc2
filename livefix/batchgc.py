"""Sparse garbage collection for batch runs: a report, a comparison, a check of files and the
analysis process of livefix.parallel.

Why: CPython looks for reference cycles among young objects every 700 net allocations. The pipeline
makes no cycles per item (tests/test_batchgc.py: the garbage a run leaves does not grow with its
length), so each look walks live objects only. With the C cores doing the rest of the work, that walk
took 4 % of a one-process report and 11-14 % of the decoding process of a two-process one (60 min at
10 Hz, bench/RESULTS.md). Batch runs therefore look every 100,000 net allocations; collection stays on,
so a cycle from elsewhere is still freed. The live monitor keeps CPython's defaults.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager

BATCH_GC_THRESHOLD = (100_000, 20, 100)


@contextmanager
def batch_gc() -> Iterator[None]:
    """Sparse collection for the duration; the previous thresholds come back after."""
    old = gc.get_threshold()
    gc.set_threshold(*BATCH_GC_THRESHOLD)
    try:
        yield
    finally:
        gc.set_threshold(*old)
