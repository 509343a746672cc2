"""Sparse collection in batch runs (livefix.batchgc) is safe only while the pipeline makes no reference
cycles while it runs: garbage that only the collector can free must not come from the items."""

from __future__ import annotations

import gc
import itertools
import threading
from pathlib import Path

import pytest

from livefix.batchgc import BATCH_GC_THRESHOLD, batch_gc
from livefix.items import Chunk
from livefix.pipeline import Pipeline
from livefix.sources import open_source

RECORDINGS = sorted((Path(__file__).resolve().parents[1] / "recordings").glob("*.lfr"))


def _cyclic_garbage(items: list, copies: int) -> int:
    """Objects only the collector can free after feeding the items `copies` times (times shifted, so
    the stream runs on) through one pipeline and taking its snapshot, the pipeline still in use. (A
    pipeline dropped at the end is a few cycles of its own, e.g. a C core and the model holding its
    bound methods, freed with what they hold by one collection: that is per run, not per item.)"""
    gc.collect()
    gc.disable()
    try:
        p = Pipeline(None, "test")
        span = items[-1].mono - items[0].mono + 1.0
        for k in range(copies):
            for it in items:
                if type(it) is Chunk:
                    p.feed(Chunk(it.mono + k * span, it.wall + k * span, it.data))
        p.finish()
        p.snapshot()
        return gc.collect()
    finally:
        gc.enable()


@pytest.mark.parametrize("path", RECORDINGS, ids=[p.name for p in RECORDINGS])
def test_garbage_does_not_grow_with_the_stream(path: Path) -> None:
    src = open_source(str(path), speed=None)
    items = list(itertools.islice(src.items(threading.Event()), 1500))  # a few minutes of stream
    src.close()
    chunks = sum(type(it) is Chunk for it in items)
    _cyclic_garbage(items, 1)  # warm-up: lazy imports and first-use caches make their own
    left = [_cyclic_garbage(items, n) for n in (1, 3)]
    # one cycle per chunk would leave 3 x chunks behind after three copies
    assert max(left) < 50 and left[1] <= left[0] + 10, (left, chunks)


def test_batch_gc_restores_thresholds() -> None:
    before = gc.get_threshold()
    with batch_gc():
        assert gc.get_threshold() == BATCH_GC_THRESHOLD
    assert gc.get_threshold() == before
